//! `nudge blend`: in-between takes from the prompt toward a kept take. The
//! kept take's latent code comes from the JSON that `nudge vary --json`
//! printed (the .mid alone does not carry it, and re-encoding the take
//! would give a different code).

use crate::model;
use clap::Args;
use nudgebar_engine::steer::Interpolation;
use nudgebar_engine::{NoteChoice, PitchMask};
use nudgebar_music::midi_file;
use std::path::PathBuf;

#[derive(Args)]
pub struct BlendArgs {
    /// The prompt the kept take was made from (a Standard MIDI File).
    prompt: PathBuf,
    /// The JSON printed by `nudge vary --json` for that prompt.
    #[arg(long, value_name = "FILE")]
    from: PathBuf,
    /// Which take to blend toward, counting from 1 as the table does.
    #[arg(long)]
    take: usize,
    /// In-between takes to make (evenly spaced, the prompt and the take excluded).
    #[arg(long, default_value_t = 3)]
    steps: usize,
    /// Interpolate on the sphere (slerp) instead of a straight line.
    #[arg(long)]
    spherical: bool,
    /// A model package folder; the built-in demo model when left out (must be
    /// the model the take was made with).
    #[arg(long)]
    model: Option<PathBuf>,
    /// Folder for the in-between .mid files.
    #[arg(long, default_value = "nudge-blend")]
    out: PathBuf,
}

pub fn run(args: BlendArgs) -> Result<(), String> {
    let bytes = std::fs::read(&args.prompt)
        .map_err(|e| format!("cannot read the prompt {}: {e}", args.prompt.display()))?;
    let import =
        midi_file::read_smf(&bytes).map_err(|e| format!("{}: {e}", args.prompt.display()))?;
    let text = std::fs::read_to_string(&args.from)
        .map_err(|e| format!("cannot read {}: {e}", args.from.display()))?;
    let json: serde_json::Value = serde_json::from_str(&text).map_err(|e| {
        format!(
            "{} is not the JSON of `nudge vary --json`: {e}",
            args.from.display()
        )
    })?;
    let takes = json["variation"]["takes"].as_array().ok_or_else(|| {
        format!(
            "{} holds no takes; save the output of `nudge vary --json` and pass that",
            args.from.display()
        )
    })?;
    let take = args
        .take
        .checked_sub(1)
        .and_then(|i| takes.get(i))
        .ok_or_else(|| {
            format!(
                "--take {}: the file holds takes 1 to {}",
                args.take,
                takes.len()
            )
        })?;
    let latent: Vec<f32> = take["latent"]
        .as_array()
        .ok_or("that take carries no latent code")?
        .iter()
        .map(|v| v.as_f64().map(|x| x as f32))
        .collect::<Option<_>>()
        .ok_or("that take's latent code holds a value that is not a number")?;
    if args.steps == 0 || args.steps > 14 {
        return Err(format!(
            "--steps {}: make 1 to 14 in-between takes",
            args.steps
        ));
    }
    let amounts: Vec<f32> = (1..=args.steps)
        .map(|i| i as f32 / (args.steps + 1) as f32)
        .collect();
    let kind = if args.spherical {
        Interpolation::Spherical
    } else {
        Interpolation::Linear
    };
    let mut engine = model::load(args.model.as_deref())?;
    let blend = engine
        .blend(
            &import.phrase,
            &latent,
            &amounts,
            kind,
            &NoteChoice::Argmax,
            &PitchMask::default(),
        )
        .map_err(|e| e.to_string())?;
    std::fs::create_dir_all(&args.out)
        .map_err(|e| format!("cannot create the folder {}: {e}", args.out.display()))?;
    for (i, step) in blend.steps.iter().enumerate() {
        let name = format!("blend-{:02}.mid", i + 1);
        let smf = midi_file::write_smf(
            &[(
                &format!("blend {:.0}%", step.amount * 100.0),
                &step.take.phrase,
            )],
            import.tempo_us_per_quarter,
            import.ppq.max(96),
        );
        let path = args.out.join(&name);
        std::fs::write(&path, smf).map_err(|e| format!("cannot write {}: {e}", path.display()))?;
        println!(
            "{name}: {:>3.0}% of the way, {} notes",
            step.amount * 100.0,
            step.take.phrase.notes.len()
        );
    }
    println!(
        "wrote {} in-between take(s) to {}",
        blend.steps.len(),
        args.out.display()
    );
    Ok(())
}
