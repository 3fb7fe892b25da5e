//! The per-take attribute table: each take's measured value with its change
//! from the prompt, so the user sees what actually moved.

use nudgebar_engine::Variation;
use nudgebar_music::attributes::{Attribute, Readout};
use std::fmt::Write;

pub fn table(v: &Variation) -> String {
    let mut out = String::new();
    let _ = write!(out, "{:<8}{:>6}", "", "notes");
    for a in Attribute::ALL {
        let _ = write!(out, "  {:>16}", short(a).0);
    }
    out.push('\n');
    let _ = write!(out, "{:<8}{:>6}", "", "");
    for a in Attribute::ALL {
        let _ = write!(out, "  {:>16}", short(a).1);
    }
    out.push('\n');
    row(
        &mut out,
        "prompt",
        v.prompt.notes.len(),
        &v.prompt_attributes,
        None,
    );
    for (i, t) in v.takes.iter().enumerate() {
        row(
            &mut out,
            &format!("take {}", i + 1),
            t.phrase.notes.len(),
            &t.attributes,
            Some(&t.change),
        );
    }
    let h = &v.holes;
    if h.total() > 0 || h.resampled > 0 {
        let _ = writeln!(
            out,
            "hole guard: {} dangling hold(s), {} non-finite step(s), {} emptied take(s), {} resampled",
            h.dangling_holds, h.non_finite, h.emptied, h.resampled
        );
    }
    if v.duplicates_dropped > 0 {
        let _ = writeln!(out, "{} take(s) stayed identical to another and were left out (raise the spread for more variety)", v.duplicates_dropped);
    }
    out
}

fn row(out: &mut String, name: &str, notes: usize, values: &Readout, change: Option<&Readout>) {
    let _ = write!(out, "{name:<8}{notes:>6}");
    for a in Attribute::ALL {
        let d = a.decimals();
        let cell = match (values.get(a), change.and_then(|c| c.get(a))) {
            (Some(v), Some(c)) => format!("{v:.d$} ({c:+.d$})"),
            (Some(v), None) => format!("{v:.d$}"),
            (None, _) => "–".to_string(),
        };
        let _ = write!(out, "  {cell:>16}");
    }
    out.push('\n');
}

/// Column name and a compact unit (the full units are in `Attribute::unit`).
fn short(a: Attribute) -> (&'static str, &'static str) {
    match a {
        Attribute::NoteDensity => ("density", "notes/bar"),
        Attribute::PitchRange => ("range", "semitones"),
        Attribute::RhythmicComplexity => ("rhythm", "0 even..1 off"),
        Attribute::Contour => ("contour", "semitones/bar"),
        Attribute::MeanPitch => ("register", "mean MIDI"),
    }
}
