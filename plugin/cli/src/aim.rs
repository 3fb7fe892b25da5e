//! `nudge aim`: target mode offline — search one axis for a take that
//! measures a given value ("7 notes", "a range of 12"), write it as .mid
//! and say how close it got.

use crate::model;
use clap::Args;
use nudgebar_engine::steer::{KeyScale, Target, DEFAULT_BUDGET};
use nudgebar_engine::VariationRequest;
use nudgebar_music::attributes::Attribute;
use nudgebar_music::midi_file;
use std::path::PathBuf;

#[derive(Args)]
pub struct AimArgs {
    /// The prompt: a Standard MIDI File of 1 to 4 measures.
    prompt: PathBuf,
    /// What to reach: ATTRIBUTE=VALUE, e.g. note_density=7 or pitch_range=12.
    #[arg(long, value_name = "ATTRIBUTE=VALUE")]
    target: String,
    /// How close counts as reached, in the attribute's unit (default: 0.5 for
    /// whole-number attributes, 0.05 for rhythmic complexity).
    #[arg(long)]
    tolerance: Option<f64>,
    /// Most takes the search may decode.
    #[arg(long, default_value_t = DEFAULT_BUDGET)]
    budget: usize,
    /// Keep takes in a key, e.g. "D dorian", "A minor pentatonic".
    #[arg(long)]
    key: Option<String>,
    /// A model package folder; the built-in demo model when left out.
    #[arg(long)]
    model: Option<PathBuf>,
    /// Where to write the take.
    #[arg(long, default_value = "nudge-aim.mid")]
    out: PathBuf,
    /// Print the result as JSON.
    #[arg(long)]
    json: bool,
}

pub fn run(args: AimArgs) -> Result<(), String> {
    let bytes = std::fs::read(&args.prompt)
        .map_err(|e| format!("cannot read the prompt {}: {e}", args.prompt.display()))?;
    let import =
        midi_file::read_smf(&bytes).map_err(|e| format!("{}: {e}", args.prompt.display()))?;
    let (key, value) = args
        .target
        .split_once('=')
        .ok_or_else(|| format!("--target wants ATTRIBUTE=VALUE, got \"{}\"", args.target))?;
    let attribute = Attribute::from_key(key.trim()).ok_or_else(|| {
        let known: Vec<&str> = Attribute::ALL.iter().map(|a| a.key()).collect();
        format!(
            "\"{key}\" is not an attribute; use one of {}",
            known.join(", ")
        )
    })?;
    let value: f64 = value
        .trim()
        .parse()
        .map_err(|_| format!("--target {key}: \"{value}\" is not a number"))?;
    let tolerance = args.tolerance.unwrap_or(match attribute {
        Attribute::RhythmicComplexity => 0.05,
        _ => 0.5,
    });
    let mut request = VariationRequest::default();
    if let Some(k) = &args.key {
        request.mask = KeyScale::parse(k)?.mask();
    }
    let mut engine = model::load(args.model.as_deref())?;
    let target = Target {
        attribute,
        value,
        tolerance,
    };
    let result = engine
        .aim(&import.phrase, &target, &request, args.budget)
        .map_err(|e| e.to_string())?;
    let smf = midi_file::write_smf(
        &[("aimed take", &result.take.phrase)],
        import.tempo_us_per_quarter,
        import.ppq.max(96),
    );
    std::fs::write(&args.out, smf)
        .map_err(|e| format!("cannot write {}: {e}", args.out.display()))?;
    if args.json {
        let out =
            serde_json::json!({ "model": engine.identity(), "result": result, "file": args.out });
        println!(
            "{}",
            serde_json::to_string_pretty(&out).expect("JSON values serialize")
        );
    } else {
        println!("{}", result.summary());
        println!("wrote {}", args.out.display());
    }
    Ok(())
}
