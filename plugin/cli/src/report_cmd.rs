//! `nudge report`: the model report for a package — report.json and a
//! self-contained report.html.

use crate::model;
use clap::Args;
use nudgebar_music::attributes::Attribute;
use nudgebar_music::{demo_prompts, midi_file, Phrase};
use nudgebar_report::{html, measure, ReportOptions};
use std::path::PathBuf;

#[derive(Args)]
pub struct ReportArgs {
    /// The model package folder; the built-in demo model when left out.
    #[arg(long)]
    model: Option<PathBuf>,
    /// Prompt .mid files to sweep from; the built-in Wrenmouth demo prompts when left out.
    #[arg(long = "prompt")]
    prompts: Vec<PathBuf>,
    /// Folder for report.json and report.html.
    #[arg(long, default_value = "nudge-report")]
    out: PathBuf,
    /// Slider values per sweep (from -1 to 1).
    #[arg(long, default_value_t = 9)]
    points: usize,
    /// The map's x axis, by attribute key (default: the model's first axis).
    #[arg(long)]
    map_axis: Option<String>,
    /// The map's y: a latent dimension (default: the first one no axis owns).
    #[arg(long)]
    map_dimension: Option<usize>,
    /// Also write a copy of the package whose manifest carries each axis's
    /// measured hole rate, so the plugin's editor can shade unreliable slider stretches.
    #[arg(long, value_name = "FOLDER")]
    package_out: Option<PathBuf>,
}

pub fn run(args: ReportArgs) -> Result<(), String> {
    let prompts: Vec<Phrase> = if args.prompts.is_empty() {
        demo_prompts::all().into_iter().map(|p| p.phrase).collect()
    } else {
        let mut v = Vec::new();
        for f in &args.prompts {
            let bytes =
                std::fs::read(f).map_err(|e| format!("cannot read {}: {e}", f.display()))?;
            v.push(
                midi_file::read_smf(&bytes)
                    .map_err(|e| format!("{}: {e}", f.display()))?
                    .phrase,
            );
        }
        v
    };
    let mut engine = model::load(args.model.as_deref())?;
    let map_axis = match &args.map_axis {
        None => 0,
        Some(k) => {
            let a = Attribute::from_key(k).ok_or_else(|| format!("\"{k}\" is not an attribute"))?;
            engine
                .axes()
                .iter()
                .position(|x| x.attribute == a)
                .ok_or_else(|| format!("this model has no axis for {k}"))?
        }
    };
    let options = ReportOptions {
        points: args.points,
        map_axis,
        map_dimension: args.map_dimension,
        ..ReportOptions::default()
    };
    let report = measure(&mut engine, &prompts, &options).map_err(|e| e.to_string())?;
    let page = html::page(&report)?;
    std::fs::create_dir_all(&args.out)
        .map_err(|e| format!("cannot create {}: {e}", args.out.display()))?;
    let write = |name: &str, text: &str| {
        let p = args.out.join(name);
        std::fs::write(&p, text).map_err(|e| format!("cannot write {}: {e}", p.display()))
    };
    write(
        "report.json",
        &serde_json::to_string_pretty(&report).expect("the report serializes"),
    )?;
    write("report.html", &page)?;
    if let Some(dir) = &args.package_out {
        let mut package = engine.package().clone();
        for axis in &mut package.manifest.axes {
            if let Some(f) = report
                .axes
                .iter()
                .find(|f| f.attribute.key() == axis.attribute)
            {
                axis.hole_rate = f.hole_rate.iter().map(|h| *h as f32).collect();
            }
        }
        package
            .save(dir)
            .map_err(|e| format!("cannot write the package to {}: {e}", dir.display()))?;
        println!("wrote the package with hole rates to {}", dir.display());
    }
    for a in &report.axes {
        let worst = a.hole_rate.iter().copied().fold(0.0, f64::max);
        println!(
            "{:<22} ρ = {:>5.2}   worst hole rate {:>3.0}%",
            a.attribute.key(),
            a.mean_rho,
            worst * 100.0
        );
    }
    println!("wrote {}/report.json and report.html", args.out.display());
    Ok(())
}
