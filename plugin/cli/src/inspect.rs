//! `nudge inspect`: prove a package loads and show what it offers.

use crate::model;
use nudgebar_engine::manifest::Encoding;
use nudgebar_engine::ModelOrigin;
use std::path::Path;

pub fn run(folder: Option<&Path>, json: bool) -> Result<(), String> {
    let engine = model::load(folder)?;
    let m = engine.manifest();
    if json {
        let out = serde_json::json!({
            "identity": engine.identity(),
            "manifest": m,
        });
        println!(
            "{}",
            serde_json::to_string_pretty(&out).expect("JSON values serialize")
        );
        return Ok(());
    }
    let origin = match &engine.package().origin {
        ModelOrigin::Embedded => "built in".to_string(),
        ModelOrigin::Folder(p) => p.display().to_string(),
    };
    println!("model       {} ({origin})", m.name);
    println!("fingerprint {}", engine.identity().fingerprint);
    if !m.description.is_empty() {
        println!("about       {}", m.description);
    }
    println!(
        "grid        {} steps per measure × {} measure(s) of {}",
        m.grid.steps_per_measure, m.grid.measures, m.grid.time_signature
    );
    let enc = match m.encoding {
        Encoding::Tokens { lowest_pitch, highest_pitch, hold_token, rest_token, input } => format!(
            "tokens: pitches {lowest_pitch}..={highest_pitch}, hold = {hold_token}, rest = {rest_token}, input as {input:?}"
        ),
        Encoding::PianoRoll { lowest_pitch, highest_pitch, threshold, cells } => {
            format!("piano roll: pitches {lowest_pitch}..={highest_pitch}, threshold {threshold}, cells as {cells:?}")
        }
    };
    println!("encoding    {enc}");
    println!(
        "encoder     {} : {} → {}{}",
        m.encoder.file,
        m.encoder.input,
        m.encoder.mean,
        m.encoder
            .log_variance
            .as_ref()
            .map(|l| format!(" + {l}"))
            .unwrap_or_default()
    );
    println!(
        "decoder     {} : {} → {}",
        m.decoder.file, m.decoder.input, m.decoder.output
    );
    println!("latent size {}", m.latent_size);
    println!("axes:");
    for (i, a) in engine.axes().iter().enumerate() {
        let along = match a.dimension {
            Some(d) => format!("latent dimension {d}"),
            None => "a derived direction".to_string(),
        };
        println!(
            "  {}. {:<22} {:<20} ±1 moves {:.2} along {along}",
            i + 1,
            a.label,
            a.attribute.key(),
            a.span
        );
    }
    Ok(())
}
