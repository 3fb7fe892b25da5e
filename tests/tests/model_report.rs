//! The model report: its JSON figures match a recomputation from its own
//! raw sweeps with scipy/numpy (PyPI) and a fresh sweep on the engine; its
//! charts are well-formed SVG of the stated size (Python's XML parser); a
//! decoder full of holes shows them plainly.

use nudgebar_engine::Engine;
use nudgebar_music::attributes::Attribute;
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_report::{html, measure, plots, ReportOptions};
use nudgebar_tests::tiny_model::{self, Variant};
use nudgebar_tests::{pyref, scratch_dir};

fn prompts() -> Vec<Phrase> {
    let bar = |steps: &[usize], pitch: u8| {
        Phrase::new(
            TimeSignature::FOUR_FOUR,
            1,
            steps
                .iter()
                .map(|&s| Note::new(pitch, s as f64 * 0.25, 0.25, 90))
                .collect(),
        )
    };
    vec![
        bar(&[0, 4, 8], 60),
        bar(&[0, 2, 4, 6, 8, 10, 12], 61),
        bar(&[0], 60),
        bar(&[0, 3, 6, 9, 12, 13, 14, 15, 1, 5], 60),
    ]
}

fn close(a: Option<f64>, b: &serde_json::Value, what: &str) {
    match (a, b.as_f64()) {
        (Some(x), Some(y)) => assert!((x - y).abs() < 1e-9, "{what}: {x} vs {y}"),
        (None, None) => {}
        (x, _) => panic!("{what}: {x:?} vs {b}"),
    }
}

/// The `<svg …>…</svg>` blocks of a page.
fn svgs(page: &str) -> Vec<String> {
    page.match_indices("<svg")
        .map(|(i, _)| {
            let end = page[i..].find("</svg>").expect("every svg closes") + i + 6;
            page[i..end].to_string()
        })
        .collect()
}

#[test]
fn json_matches_a_recomputation_and_the_charts_are_well_formed() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    let options = ReportOptions::default();
    let report = measure(&mut engine, &prompts(), &options).unwrap();
    let dir = scratch_dir("model_report");
    let json_path = dir.join("report.json");
    std::fs::write(&json_path, serde_json::to_string_pretty(&report).unwrap()).unwrap();

    // Recomputed from the JSON's raw sweeps by scipy.stats.spearmanr and numpy.polyfit.
    let re = pyref::run_json("report_recompute.py", &[json_path.to_str().unwrap()]);
    for (a, axis) in report.axes.iter().enumerate() {
        for (p, rho) in axis.rho_per_prompt.iter().enumerate() {
            close(*rho, &re["rho"][a][p], &format!("ρ axis {a} prompt {p}"));
        }
        for (k, h) in axis.hole_rate.iter().enumerate() {
            close(Some(*h), &re["hole_rate"][a][k], "hole rate");
        }
        for (j, v) in report.change.per_unit[a].iter().enumerate() {
            close(
                *v,
                &re["slope"][a][j],
                &format!("slope axis {a} attribute {j}"),
            );
        }
    }
    // The raw sweeps are what the engine measures now.
    for (a, axis) in report.axes.iter().enumerate() {
        for (p, prompt) in prompts().iter().enumerate() {
            assert_eq!(
                engine.sweep_axis(prompt, a, &report.sliders).unwrap(),
                axis.sweeps[p]
            );
        }
    }
    // Known facts of the known-weights model: density rises with its axis for
    // every prompt; its contour axis moves nothing.
    assert_eq!(report.axes[0].attribute, Attribute::NoteDensity);
    assert!(
        report.axes[0].mean_rho > 0.95,
        "{}",
        report.axes[0].mean_rho
    );
    assert_eq!(report.axes[1].mean_rho, 0.0);
    assert_eq!(report.map.values.len(), options.map_cells);
    assert!(report
        .map
        .values
        .iter()
        .all(|r| r.len() == options.map_cells));

    // The page: one chart per axis plus the map, each well-formed SVG of its stated size.
    let page = html::page(&report).unwrap();
    // Self-contained: no scripts, no linked files or images.
    assert!(!page.contains("<script") && !page.contains(" src=") && !page.contains("href="));
    let blocks = svgs(&page);
    assert_eq!(blocks.len(), report.axes.len() + 1);
    let files: Vec<String> = blocks
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let f = dir.join(format!("chart-{i}.svg"));
            std::fs::write(&f, s).unwrap();
            f.to_str().unwrap().to_string()
        })
        .collect();
    let args: Vec<&str> = files.iter().map(String::as_str).collect();
    let parsed = pyref::run_json("svg_check.py", &args);
    for (i, p) in parsed.as_array().unwrap().iter().enumerate() {
        let (w, h) = if i < report.axes.len() {
            plots::AXIS_CHART
        } else {
            plots::MAP_CHART
        };
        assert_eq!(p["root"], "{http://www.w3.org/2000/svg}svg");
        assert_eq!(p["width"], w.to_string(), "chart {i}");
        assert_eq!(p["height"], h.to_string(), "chart {i}");
    }
}

#[test]
fn a_decoder_full_of_holes_shows_them() {
    // Every step's best token is "hold" with nothing to hold (tests/src/tiny_model.rs).
    let package = tiny_model::package_with(
        Variant {
            hold_everywhere: true,
            ..Variant::default()
        },
        |_| {},
    )
    .unwrap();
    let mut engine = Engine::new(package).unwrap();
    let report = measure(&mut engine, &prompts()[..2], &ReportOptions::default()).unwrap();
    for axis in &report.axes {
        assert!(
            axis.hole_rate.iter().all(|h| *h == 1.0),
            "{:?}",
            axis.hole_rate
        );
    }
    assert!(report.map.holes.iter().flatten().all(|h| *h));
    let map = plots::map_chart(&report.map).unwrap();
    // Each hole cell carries a white cross: two lines per cell.
    let cells = report.map.sliders.len() * report.map.offsets.len();
    assert!(
        map.matches("<polyline").count() >= 2 * cells,
        "holes are not marked"
    );
}

#[test]
fn bad_options_are_refused_with_a_sentence() {
    let mut engine = Engine::new(tiny_model::package()).unwrap();
    assert!(measure(&mut engine, &[], &ReportOptions::default())
        .unwrap_err()
        .to_string()
        .contains("at least one prompt"));
    let o = ReportOptions {
        map_axis: 5,
        ..ReportOptions::default()
    };
    assert!(measure(&mut engine, &prompts(), &o)
        .unwrap_err()
        .to_string()
        .contains("has 2 axes"));
}
