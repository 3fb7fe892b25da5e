//! `nudge derive-axes`: axes for a plain VAE, derived from a folder of the
//! user's own MIDI files (attribute vectors), written into a copy of the
//! package, with how well each new axis steers.

use crate::model;
use clap::Args;
use nudgebar_engine::derive_axes::{derive_axes, DeriveOptions};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::midi_file;
use std::path::{Path, PathBuf};

#[derive(Args)]
pub struct DeriveArgs {
    /// Folder of .mid files to learn the directions from (not searched recursively).
    corpus: PathBuf,
    /// The model package folder; the built-in demo model when left out.
    #[arg(long)]
    model: Option<PathBuf>,
    /// Folder for the new package (manifest with derived axes + the same ONNX files).
    #[arg(long)]
    out: PathBuf,
    /// Attributes to derive axes for (comma-separated keys); all by default.
    #[arg(long, value_delimiter = ',')]
    attributes: Vec<String>,
    /// Share of the corpus in each of the high and low groups.
    #[arg(long, default_value_t = 0.25)]
    group: f64,
    /// Print the result as JSON.
    #[arg(long)]
    json: bool,
}

fn midi_files(dir: &Path) -> Result<Vec<PathBuf>, String> {
    let entries = std::fs::read_dir(dir)
        .map_err(|e| format!("cannot read the corpus folder {}: {e}", dir.display()))?;
    let mut files: Vec<PathBuf> = entries
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.extension()
                .and_then(|x| x.to_str())
                .is_some_and(|x| x.eq_ignore_ascii_case("mid") || x.eq_ignore_ascii_case("midi"))
        })
        .collect();
    files.sort();
    Ok(files)
}

pub fn run(args: DeriveArgs) -> Result<(), String> {
    let mut attributes = Vec::new();
    for key in &args.attributes {
        attributes.push(Attribute::from_key(key.trim()).ok_or_else(|| {
            let known: Vec<&str> = Attribute::ALL.iter().map(|a| a.key()).collect();
            format!("\"{key}\" is not an attribute; use {}", known.join(", "))
        })?);
    }
    if attributes.is_empty() {
        attributes = Attribute::ALL.to_vec();
    }
    let mut phrases = Vec::new();
    let mut unreadable = Vec::new();
    let files = midi_files(&args.corpus)?;
    for f in &files {
        let read = std::fs::read(f)
            .map_err(|e| e.to_string())
            .and_then(|b| midi_file::read_smf(&b).map_err(|e| e.to_string()));
        match read {
            Ok(import) => phrases.push(import.phrase),
            Err(e) => unreadable.push(format!("{}: {e}", f.display())),
        }
    }
    if phrases.is_empty() {
        return Err(format!(
            "no readable .mid files in {} ({} found); derived axes need a corpus of phrases",
            args.corpus.display(),
            files.len()
        ));
    }
    let mut engine = model::load(args.model.as_deref())?;
    let options = DeriveOptions {
        attributes,
        group_fraction: args.group,
        ..DeriveOptions::default()
    };
    let d = derive_axes(&mut engine, &phrases, &options).map_err(|e| e.to_string())?;
    if d.axes.is_empty() {
        let why: Vec<String> = d
            .skipped
            .iter()
            .map(|s| format!("{}: {}", s.attribute.key(), s.reason))
            .collect();
        return Err(format!("no axis could be derived ({})", why.join("; ")));
    }
    d.package(engine.package())
        .map_err(|e| e.to_string())?
        .save(&args.out)
        .map_err(|e| format!("cannot write the package to {}: {e}", args.out.display()))?;
    if args.json {
        let out = serde_json::json!({
            "package": args.out, "windows": d.windows, "axes": d.axes,
            "skipped": d.skipped, "unusable": d.unusable, "unreadable": unreadable,
        });
        println!(
            "{}",
            serde_json::to_string_pretty(&out).expect("JSON values serialize")
        );
        return Ok(());
    }
    for w in unreadable.iter().chain(&d.unusable) {
        println!("note: left out {w}");
    }
    println!("{} phrase(s) from {} file(s)", d.windows, files.len());
    println!(
        "{:<22}{:>8}{:>12}{:>12}{:>8}",
        "axis", "span", "low group", "high group", "ρ"
    );
    for a in &d.axes {
        println!(
            "{:<22}{:>8.2}{:>12.2}{:>12.2}{:>8.2}",
            a.attribute.key(),
            a.span,
            a.low_mean,
            a.high_mean,
            a.steering.mean_rho
        );
    }
    for s in &d.skipped {
        println!("skipped {}: {}", s.attribute.key(), s.reason);
    }
    println!("wrote {}", args.out.display());
    Ok(())
}
