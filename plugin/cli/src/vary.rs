//! `nudge vary`: prompt .mid + sliders → one .mid per take and a table of
//! what each take measures.

use crate::{model, report};
use clap::Args;
use nudgebar_engine::preset::Preset;
use nudgebar_engine::steer::{KeyScale, Lock};
use nudgebar_engine::{NoteChoice, VariationRequest};
use nudgebar_music::attributes::Attribute;
use nudgebar_music::midi_file;
use std::path::{Path, PathBuf};

#[derive(Args)]
pub struct VaryArgs {
    /// The prompt: a Standard MIDI File of 1 to 4 measures.
    prompt: PathBuf,
    /// A model package folder; the built-in demo model when left out.
    #[arg(long)]
    model: Option<PathBuf>,
    /// A preset file (JSON) to start from (its sliders, takes, spread, seed and
    /// holds); flags below override it.
    #[arg(long)]
    preset: Option<PathBuf>,
    /// Move along an axis: ATTRIBUTE=VALUE, e.g. note_density=0.6 or contour=-1 (±1 spans the axis). Repeatable.
    #[arg(long = "slide", value_name = "ATTRIBUTE=VALUE")]
    slides: Vec<String>,
    /// Number of takes, 1 to 16.
    #[arg(long)]
    takes: Option<usize>,
    /// How far takes wander on the uncontrolled dimensions (0 = only the sliders move).
    #[arg(long)]
    spread: Option<f32>,
    /// Seed: the same seed, prompt, model and settings give the same takes.
    #[arg(long)]
    seed: Option<u64>,
    /// Sample each step's note at this temperature instead of taking the most likely one.
    #[arg(long, value_name = "TEMPERATURE")]
    sample: Option<f32>,
    /// Keep takes in a key: the decoder may only choose its pitches, e.g. "D dorian", "A blues".
    #[arg(long)]
    key: Option<String>,
    /// Keep an attribute near the prompt's: ATTRIBUTE=TOLERANCE, e.g. pitch_range=2. Repeatable.
    #[arg(long = "lock", value_name = "ATTRIBUTE=TOLERANCE")]
    locks: Vec<String>,
    /// Folder for the takes' .mid files.
    #[arg(long, default_value = "nudge-takes")]
    out: PathBuf,
    /// Print the result as JSON instead of a table.
    #[arg(long)]
    json: bool,
}

pub fn run(args: VaryArgs) -> Result<(), String> {
    let bytes = std::fs::read(&args.prompt)
        .map_err(|e| format!("cannot read the prompt {}: {e}", args.prompt.display()))?;
    let import =
        midi_file::read_smf(&bytes).map_err(|e| format!("{}: {e}", args.prompt.display()))?;
    let mut engine = model::load(args.model.as_deref())?;
    let request = build_request(&args, engine.axes().iter().map(|a| a.attribute).collect())?;
    let mut locks = parse_locks(&args.locks)?;
    // A preset's holds, unless a --lock sets that attribute's tolerance.
    if let Some(path) = &args.preset {
        let preset = Preset::load(path).map_err(|e| e.to_string())?;
        for l in preset.locks() {
            if !locks.iter().any(|m| m.attribute == l.attribute) {
                locks.push(l);
            }
        }
    }
    let (variation, lock_note) = if locks.is_empty() {
        let v = engine
            .vary(&import.phrase, &request)
            .map_err(|e| e.to_string())?;
        (v, None)
    } else {
        let l = engine
            .vary_locked(&import.phrase, &request, &locks)
            .map_err(|e| e.to_string())?;
        let note = l.shortfall().unwrap_or_else(|| {
            format!(
                "locks held; {} take(s) were rejected and drawn again",
                l.rejected
            )
        });
        (l.variation, Some(note))
    };

    std::fs::create_dir_all(&args.out)
        .map_err(|e| format!("cannot create the folder {}: {e}", args.out.display()))?;
    let mut files = Vec::new();
    for (i, take) in variation.takes.iter().enumerate() {
        let name = format!("take-{:02}.mid", i + 1);
        let smf = midi_file::write_smf(
            &[(&format!("take {}", i + 1), &take.phrase)],
            import.tempo_us_per_quarter,
            import.ppq.max(96),
        );
        write(&args.out.join(&name), &smf)?;
        files.push(args.out.join(name));
    }
    if args.json {
        let out = serde_json::json!({
            "model": engine.identity(),
            "request": {
                "offsets": request.offsets, "takes": request.takes, "spread": request.spread,
                "seed": request.seed, "choice": request.choice,
            },
            "prompt_warnings": import.warnings,
            "adjustments": variation.adjustments.sentences(),
            "variation": variation,
            "locks": lock_note,
            "files": files,
        });
        println!(
            "{}",
            serde_json::to_string_pretty(&out).expect("JSON values serialize")
        );
    } else {
        for w in import
            .warnings
            .iter()
            .chain(variation.adjustments.sentences().iter())
        {
            println!("note: {w}");
        }
        print!("{}", report::table(&variation));
        if let Some(n) = &lock_note {
            println!("{n}");
        }
        println!("wrote {} take(s) to {}", files.len(), args.out.display());
    }
    Ok(())
}

fn write(path: &Path, bytes: &[u8]) -> Result<(), String> {
    std::fs::write(path, bytes).map_err(|e| format!("cannot write {}: {e}", path.display()))
}

/// Preset first, then flags on top.
fn build_request(args: &VaryArgs, axes: Vec<Attribute>) -> Result<VariationRequest, String> {
    let mut r = VariationRequest {
        offsets: vec![0.0; axes.len()],
        ..VariationRequest::default()
    };
    if let Some(path) = &args.preset {
        let preset = Preset::load(path).map_err(|e| e.to_string())?;
        r.takes = preset.takes;
        r.spread = preset.spread;
        r.seed = preset.seed;
        for (key, value) in &preset.offsets {
            set_slide(&mut r.offsets, &axes, key, *value)?;
        }
    }
    for s in &args.slides {
        let (key, value) = s
            .split_once('=')
            .ok_or_else(|| format!("--slide wants ATTRIBUTE=VALUE, got \"{s}\""))?;
        let value: f32 = value
            .trim()
            .parse()
            .map_err(|_| format!("--slide {key}: \"{value}\" is not a number"))?;
        set_slide(&mut r.offsets, &axes, key.trim(), value)?;
    }
    if let Some(t) = args.takes {
        r.takes = t;
    }
    if let Some(s) = args.spread {
        r.spread = s;
    }
    if let Some(s) = args.seed {
        r.seed = s;
    }
    if let Some(t) = args.sample {
        r.choice = NoteChoice::Sample {
            temperature: t,
            seed: r.seed.wrapping_add(1),
        };
    }
    if let Some(k) = &args.key {
        r.mask = KeyScale::parse(k)?.mask();
    }
    Ok(r)
}

fn parse_locks(specs: &[String]) -> Result<Vec<Lock>, String> {
    specs
        .iter()
        .map(|s| {
            let (key, tol) = s
                .split_once('=')
                .ok_or_else(|| format!("--lock wants ATTRIBUTE=TOLERANCE, got \"{s}\""))?;
            let attribute = Attribute::from_key(key.trim())
                .ok_or_else(|| format!("--lock: \"{key}\" is not an attribute"))?;
            let tolerance: f64 = tol
                .trim()
                .parse()
                .map_err(|_| format!("--lock {key}: \"{tol}\" is not a number"))?;
            Ok(Lock {
                attribute,
                tolerance,
            })
        })
        .collect()
}

fn set_slide(offsets: &mut [f32], axes: &[Attribute], key: &str, value: f32) -> Result<(), String> {
    let Some(attribute) = Attribute::from_key(key) else {
        let known: Vec<&str> = axes.iter().map(|a| a.key()).collect();
        return Err(format!(
            "\"{key}\" is not an attribute; this model's axes are {}",
            known.join(", ")
        ));
    };
    let Some(i) = axes.iter().position(|a| *a == attribute) else {
        let known: Vec<&str> = axes.iter().map(|a| a.key()).collect();
        return Err(format!(
            "this model has no axis for {key}; its axes are {}",
            known.join(", ")
        ));
    };
    offsets[i] = value;
    Ok(())
}
