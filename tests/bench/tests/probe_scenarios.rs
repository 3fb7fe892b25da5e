//! The audio-thread scenarios of `process-probe` run in a debug build,
//! where nice-plug's `assert_process_allocs` aborts the process on any
//! allocation inside the plugin's `process()`: the bench's scenarios stay
//! playable, and each is allocation-free.

use nudgebar_bench::models;
use nudgebar_bench::probe::{self, Scenario};

#[test]
fn every_scenario_plays() {
    let dir = nudgebar_tests::scratch_dir("bench-probe-model");
    let model = models::write_folder(&models::demo().unwrap(), &dir).unwrap();
    for scenario in Scenario::ALL {
        for frames in [64, 4096] {
            let folder = scenario.needs_model().then_some(model.as_path());
            let calls = probe::run(scenario, frames, 16, folder)
                .unwrap_or_else(|e| panic!("{} with {frames}-frame blocks: {e:#}", scenario.key()));
            let expected = if scenario == Scenario::Flood { 1 } else { 16 };
            assert_eq!(
                calls,
                expected,
                "{} with {frames}-frame blocks",
                scenario.key()
            );
        }
    }
}
