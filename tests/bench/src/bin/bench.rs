//! `cargo xtask bench`'s driver: runs the sections, prints the tables and
//! writes target/bench/{bench.json, table.md}.
//!
//! Usage: bench [engine] [audio] [drag]   (no argument: all three)

use anyhow::{Context, Result};
use nudgebar_bench::probe::Scenario;
use nudgebar_bench::{callgrind, dragging, engine_rows, flops, growth, models, out_dir, report};
use nudgebar_music::{demo_prompts, Phrase, TimeSignature};

fn main() {
    if let Err(e) = run() {
        eprintln!("bench: {e:#}");
        std::process::exit(1);
    }
}

fn run() -> Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let wants = |part: &str| args.is_empty() || args.iter().any(|a| a == part);
    let out = out_dir();
    std::fs::create_dir_all(&out)?;
    let demo = models::demo()?;
    let large = models::large()?;
    let bars = prompts()?;
    let mut json = serde_json::Map::new();
    let mut md = String::from("# Nudgebar benchmarks\n\nReproduce with `cargo xtask bench`.\n\n");

    let mut engine_report = None;
    if wants("engine") {
        let python = nudgebar_tests::pyref::python();
        eprintln!("bench: measuring the FMA peak…");
        let peak = flops::measure_peak();
        let scratch = out.join("scratch");
        let mut reports = Vec::new();
        for model in [&demo, &large] {
            eprintln!("bench: engine rows for {}…", model.name);
            reports.push(engine_rows::run(model, &bars[0], &peak, &python, &scratch)?);
        }
        for r in &reports {
            md += &report::engine_table(r);
            md += "\n";
        }
        eprintln!("bench: growth…");
        let g = growth::run(&demo, &large, &bars)?;
        md += &report::growth_table(&g);
        md += "\n";
        json.insert("engine".into(), serde_json::to_value(&reports)?);
        json.insert("growth".into(), serde_json::to_value(&g)?);
        engine_report = reports.into_iter().next();
    }

    let mut drags = Vec::new();
    if wants("drag") {
        for model in [&demo, &large] {
            eprintln!("bench: slider dragging with {}…", model.name);
            drags.push(dragging::run(model, &bars[0], dragging::MOVE_EVERY)?);
        }
        eprintln!("bench: dense automation with {}, 4 bars…", large.name);
        drags.push(dragging::run(&large, &bars[3], dragging::AUTOMATION_EVERY)?);
        md += &report::drag_table(&drags);
        md += "\n";
        json.insert("dragging".into(), serde_json::to_value(&drags)?);
    }

    let mut audio = Vec::new();
    if wants("audio") {
        let probe = std::env::current_exe()?
            .parent()
            .context("the bench binary has a folder")?
            .join("process-probe");
        let model_dir = models::write_folder(&demo, &out.join("model-demo"))?;
        let grind = out.join("callgrind");
        for scenario in Scenario::ALL {
            let sizes: &[u32] = if scenario == Scenario::Flood {
                &[4096]
            } else {
                &[64, 512, 4096]
            };
            for &frames in sizes {
                eprintln!(
                    "bench: callgrind, {} with {frames}-frame blocks…",
                    scenario.key()
                );
                let model = scenario.needs_model().then_some(model_dir.as_path());
                audio.push(callgrind::measure(&probe, scenario, frames, model, &grind)?);
            }
        }
        md += &report::audio_table(&audio);
        md += "\n";
        json.insert("audio".into(), serde_json::to_value(&audio)?);
    }

    md += "Targets:\n\n";
    md += &report::targets(engine_report.as_ref(), &audio, &drags);
    println!("{md}");
    std::fs::write(out.join("table.md"), &md)?;
    std::fs::write(out.join("bench.json"), serde_json::to_string_pretty(&json)?)?;
    eprintln!(
        "bench: wrote {} and {}",
        out.join("table.md").display(),
        out.join("bench.json").display()
    );
    Ok(())
}

/// A demo prompt of one 4/4 bar, and 2-, 3- and 4-bar prompts made of the
/// 4/4 demo calls one after another.
fn prompts() -> Result<Vec<Phrase>> {
    let four = TimeSignature::FOUR_FOUR;
    let calls: Vec<Phrase> = demo_prompts::all()
        .into_iter()
        .filter(|p| p.phrase.time_signature == four)
        .flat_map(|p| (0..p.phrase.measures).map(move |m| p.phrase.measure(m)))
        .filter(|p| !p.is_empty())
        .collect();
    anyhow::ensure!(!calls.is_empty(), "the demo prompts have no 4/4 bar");
    Ok((1..=4)
        .map(|n| {
            let bars: Vec<Phrase> = (0..n).map(|i| calls[i % calls.len()].clone()).collect();
            Phrase::concat(four, &bars)
        })
        .collect())
}
