//! What the editor shows, worked out from the plugin's state without a
//! window: every sentence, number and mark on screen comes from
//! [`screen`], so it can be tested without a display and the drawing code
//! only lays it out.

use super::shape_view::{self, ShapeInputs, ShapeView};
use crate::capture::CaptureStatus;
use crate::params::{Listen, AXIS_SLOTS};
use crate::state::KeptTake;
use crate::status::{AxisView, WorkerView};
use nudgebar_engine::HoleReport;
use nudgebar_music::attributes::{Attribute, Readout};
use nudgebar_music::Phrase;

/// Everything the screen depends on, read once per frame.
#[derive(Debug, Clone, Copy)]
pub struct Inputs<'a> {
    /// The worker's latest view (model, prompt, takes, errors).
    pub worker: &'a WorkerView,
    /// The worker is loading a model or making takes.
    pub busy: bool,
    /// Capture progress, from the audio thread.
    pub capture: CaptureStatus,
    /// The six axis sliders, in slot order, in slider units (−1..1).
    pub sliders: [f32; AXIS_SLOTS],
    /// The selected take, 0-based (the parameter is 1-based).
    pub selected: usize,
    pub listen: Listen,
    /// Bars the next capture records.
    pub prompt_bars: u8,
    /// The session's kept takes.
    pub kept: &'a [KeptTake],
    /// Note events the host refused so far (should stay 0).
    pub events_refused: u32,
    /// A short-lived notice of the editor's own (e.g. "nothing played").
    pub transient: Option<&'a str>,
    /// The shaping parameters (key, holds, aim, blend).
    pub shape: ShapeInputs,
}

/// The whole screen.
#[derive(Debug, Clone, PartialEq)]
pub struct Screen {
    pub header: Header,
    pub prompt: PromptView,
    pub sliders: Vec<SliderView>,
    /// Pitch rows every roll shows (lowest, highest), shared by the prompt
    /// and all takes so their registers compare at a glance.
    pub pitch_window: (u8, u8),
    /// Heading of the sliders' take column: which take is measured.
    pub take_column: String,
    pub takes: Vec<TakeCard>,
    /// Shown in place of the takes when there are none.
    pub takes_hint: Option<String>,
    pub kept: Vec<KeptRow>,
    pub model: ModelPanel,
    /// Key, aim, blend and hold leeway, with the worker's report on the set.
    pub shape: ShapeView,
    pub notices: Vec<Notice>,
}

/// The top line: model, worker and capture status.
#[derive(Debug, Clone, PartialEq)]
pub struct Header {
    pub model_name: String,
    /// "Making takes…" while the worker runs; `None` when idle.
    pub busy: Option<String>,
    pub capture: String,
    /// True while armed or recording (drawn in the accent colour).
    pub capturing: bool,
    /// Hole-guard counts of the current takes, when any are non-zero.
    pub holes: Option<String>,
    /// Takes decoded again (duplicates, or repaired holes), when any.
    pub redraws: Option<String>,
}

/// The prompt: its notes and measured attributes.
#[derive(Debug, Clone, PartialEq)]
pub struct PromptView {
    pub phrase: Option<Phrase>,
    /// "2 bars · 4/4 · 7 notes".
    pub summary: String,
    pub readings: Vec<Reading>,
    /// What fitting the prompt to the model changed.
    pub adjustments: Vec<String>,
}

/// One measured attribute.
#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    pub attribute: Attribute,
    pub label: String,
    pub value: String,
}

/// One axis slider, labelled from the model's manifest.
#[derive(Debug, Clone, PartialEq)]
pub struct SliderView {
    /// Parameter slot 0–5 (`axis1`…`axis6`).
    pub slot: usize,
    pub label: String,
    pub attribute: Attribute,
    /// Slider value, −1..1.
    pub value: f32,
    pub value_text: String,
    /// The prompt's measured value, e.g. "6.0 notes".
    pub prompt_text: String,
    /// The selected take's measured value and change, e.g. "8.0 notes (+2.0 notes)".
    pub take_text: Option<String>,
    /// Where the model decodes badly: (from, to, hole rate) in slider units.
    pub unreliable: Vec<(f32, f32, f32)>,
    /// Hover text: what the axis measures and how far a full throw moves.
    pub tooltip: String,
    /// The attribute is held near the prompt's (its slider is set aside).
    pub held: bool,
    /// Hover text of the hold toggle: what is held and how near.
    pub hold_tip: String,
}

/// One take in the grid.
#[derive(Debug, Clone, PartialEq)]
pub struct TakeCard {
    pub index: usize,
    pub title: String,
    pub phrase: Phrase,
    pub changes: Vec<Change>,
    pub selected: bool,
    /// The same notes are already kept in the session.
    pub kept: bool,
}

/// A change of one attribute from the prompt to a take.
#[derive(Debug, Clone, PartialEq)]
pub struct Change {
    pub label: String,
    pub text: String,
    pub trend: Trend,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Trend {
    Up,
    Down,
    Same,
    /// Undefined on one side (e.g. the range of a silent measure).
    Unknown,
}

/// A kept take in the list.
#[derive(Debug, Clone, PartialEq)]
pub struct KeptRow {
    pub index: usize,
    pub name: String,
    pub detail: String,
}

/// The model in use and the model chooser.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelPanel {
    pub name: String,
    /// "built-in demo model" or the folder it came from.
    pub source: String,
    pub fingerprint: String,
    /// The description's first sentence, for the panel (the whole
    /// description is shown on hover).
    pub summary: String,
    pub description: String,
    /// "Axes: Density, Range, Syncopation, Contour".
    pub axes_line: String,
    /// One line per axis: "Density → note density (slider 1)".
    pub axes: Vec<String>,
    /// Why the last load failed, as the worker said it.
    pub error: Option<String>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Level {
    Info,
    Warning,
    Error,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Notice {
    pub level: Level,
    pub text: String,
}

/// Works out the screen for one frame.
pub fn screen(input: &Inputs) -> Screen {
    let w = input.worker;
    let selected_take = w.takes.get(input.selected);
    Screen {
        header: header(input),
        prompt: prompt(w),
        sliders: sliders(input, selected_take.map(|t| &t.attributes)),
        pitch_window: pitch_window(w.prompt.iter().chain(w.takes.iter().map(|t| &t.phrase))),
        take_column: match selected_take {
            Some(_) => format!("Take {} (selected)", input.selected + 1),
            None => "Selected take".into(),
        },
        takes: w
            .takes
            .iter()
            .enumerate()
            .map(|(i, t)| TakeCard {
                index: i,
                title: format!("Take {}", i + 1),
                phrase: t.phrase.clone(),
                changes: changes(w, &t.attributes, &t.change),
                selected: i == input.selected,
                kept: input.kept.iter().any(|k| k.phrase == t.phrase),
            })
            .collect(),
        takes_hint: takes_hint(input),
        kept: input
            .kept
            .iter()
            .enumerate()
            .map(|(i, k)| KeptRow {
                index: i,
                name: k.name.clone(),
                detail: format!(
                    "{} notes · {} · {:.0} BPM",
                    k.phrase.notes.len(),
                    bars_text(k.phrase.measures),
                    k.tempo
                ),
            })
            .collect(),
        model: model_panel(w),
        shape: shape_view::shape(&input.shape, w, input.kept),
        notices: notices(input),
    }
}

fn header(input: &Inputs) -> Header {
    let w = input.worker;
    let (capture, capturing) = match input.capture {
        CaptureStatus::Idle => (
            format!("Ready to capture {}", bars_text(input.prompt_bars)),
            false,
        ),
        CaptureStatus::Waiting => (
            "Armed: recording starts at the next bar line (or your first note when stopped)"
                .to_string(),
            true,
        ),
        CaptureStatus::Recording { bar, of } => (format!("Recording bar {bar} of {of}"), true),
    };
    Header {
        model_name: w
            .model
            .as_ref()
            .map(|m| m.identity.name.clone())
            .unwrap_or_else(|| "No model loaded".into()),
        busy: input.busy.then(|| {
            if w.model.is_none() {
                "Loading the model…".to_string()
            } else {
                "Making takes…".to_string()
            }
        }),
        capture,
        capturing,
        holes: holes_text(&w.holes),
        redraws: (w.holes.resampled > 0).then(|| {
            format!(
                "{} take(s) drawn again to avoid duplicates or holes",
                w.holes.resampled
            )
        }),
    }
}

/// The hole guard's counts, when it had to step in.
pub fn holes_text(h: &HoleReport) -> Option<String> {
    let parts: Vec<String> = [
        (h.dangling_holds, "dangling hold", "dangling holds"),
        (h.out_of_range, "pitch out of range", "pitches out of range"),
        (
            h.non_finite,
            "step with broken numbers",
            "steps with broken numbers",
        ),
        (h.emptied, "empty take", "empty takes"),
    ]
    .into_iter()
    .filter(|(n, _, _)| *n > 0)
    .map(|(n, one, many)| format!("{n} {}", if n == 1 { one } else { many }))
    .collect();
    (!parts.is_empty()).then(|| format!("Hole guard: {}", parts.join(", ")))
}

fn prompt(w: &WorkerView) -> PromptView {
    let Some(phrase) = &w.prompt else {
        return PromptView {
            phrase: None,
            summary: "No prompt yet".into(),
            readings: Vec::new(),
            adjustments: Vec::new(),
        };
    };
    let readout = w.prompt_attributes.unwrap_or_else(|| Readout::of(phrase));
    PromptView {
        phrase: Some(phrase.clone()),
        summary: format!(
            "{} · {}/{} · {} notes",
            bars_text(phrase.measures),
            phrase.time_signature.numerator,
            phrase.time_signature.denominator,
            phrase.notes.len()
        ),
        readings: Attribute::ALL
            .into_iter()
            .map(|a| Reading {
                attribute: a,
                label: a.label().to_string(),
                value: value_text(a, readout.get(a)),
            })
            .collect(),
        adjustments: w.adjustments.clone(),
    }
}

fn sliders(input: &Inputs, take: Option<&Readout>) -> Vec<SliderView> {
    let Some(model) = &input.worker.model else {
        return Vec::new();
    };
    let prompt = input.worker.prompt_attributes;
    let mut rows: Vec<SliderView> = model
        .axes
        .iter()
        .filter_map(|axis| {
            let slot = axis.slot?;
            let value = input.sliders[slot];
            let a = axis.attribute;
            let before = prompt.and_then(|p| p.get(a));
            Some(SliderView {
                slot,
                label: axis.label.clone(),
                attribute: a,
                value,
                value_text: offset_text(value),
                prompt_text: match prompt {
                    Some(_) => value_text(a, before),
                    None => "–".into(),
                },
                take_text: take.map(|t| {
                    let after = t.get(a);
                    match (after, before) {
                        (Some(x), Some(y)) => {
                            format!("{} ({})", value_text(a, Some(x)), change_text(a, x - y))
                        }
                        _ => value_text(a, after),
                    }
                }),
                unreliable: unreliable_bands(&axis.hole_rate),
                held: input.shape.holds[slot],
                hold_tip: shape_view::hold_tip(a, input.shape.leeway),
                tooltip: format!(
                    "{}: {} ({}). A full throw moves the code {} along this axis; the take's measured value is shown, not assumed.",
                    axis.label,
                    a.label(),
                    a.unit(),
                    axis.span
                ),
            })
        })
        .collect();
    rows.sort_by_key(|r| r.slot);
    rows
}

/// Fewest semitones a roll shows, so a call on two pitches does not fill
/// the whole height with two fat bars.
pub const MIN_ROWS: u8 = 13;

/// The pitch rows the rolls show: every note of `phrases`, padded to at
/// least [`MIN_ROWS`] around their middle, with a free row above and below.
pub fn pitch_window<'a>(phrases: impl Iterator<Item = &'a Phrase>) -> (u8, u8) {
    let mut range: Option<(u8, u8)> = None;
    for n in phrases.flat_map(|p| p.notes.iter()) {
        range = Some(match range {
            None => (n.pitch, n.pitch),
            Some((lo, hi)) => (lo.min(n.pitch), hi.max(n.pitch)),
        });
    }
    // Nothing to show: the middle of the keyboard.
    let (lo, hi) = range.unwrap_or((60, 60));
    let (lo, hi) = (lo.min(127), hi.min(127));
    let span = (hi - lo + 3).max(MIN_ROWS);
    let below = (span - (hi - lo + 1)) / 2;
    let lo = lo.saturating_sub(below);
    let hi = (lo as u16 + span as u16 - 1).min(127) as u8;
    (lo, hi)
}

/// Hole rates below this are noise from the report, not worth shading.
const HOLE_SHADE_FROM: f32 = 0.05;

/// Turns the manifest's hole rates (evenly spaced slider positions from −1
/// to +1, as the model report writes them) into shaded bands.
pub fn unreliable_bands(rates: &[f32]) -> Vec<(f32, f32, f32)> {
    let n = rates.len();
    if n < 2 {
        return Vec::new();
    }
    let step = 2.0 / (n - 1) as f32;
    rates
        .iter()
        .enumerate()
        .filter(|(_, r)| r.is_finite() && **r >= HOLE_SHADE_FROM)
        .map(|(i, r)| {
            let centre = -1.0 + i as f32 * step;
            (
                (centre - step / 2.0).max(-1.0),
                (centre + step / 2.0).min(1.0),
                r.min(1.0),
            )
        })
        .collect()
}

fn changes(w: &WorkerView, attributes: &Readout, change: &Readout) -> Vec<Change> {
    // The model's axes first (what the sliders move), then mean pitch if
    // no axis covers it: register shifts are worth seeing too.
    let mut shown: Vec<(Attribute, String)> = w
        .model
        .as_ref()
        .map(|m| m.axes.iter().map(axis_row).collect())
        .unwrap_or_default();
    if shown.is_empty() {
        shown = Attribute::ALL
            .into_iter()
            .map(|a| (a, a.label().to_string()))
            .collect();
    }
    shown.dedup_by_key(|(a, _)| *a);
    shown
        .into_iter()
        .map(|(a, label)| {
            let d = change.get(a);
            let trend = match d {
                None => Trend::Unknown,
                Some(d) if d.abs() < least_shown(a) => Trend::Same,
                Some(d) if d > 0.0 => Trend::Up,
                Some(_) => Trend::Down,
            };
            let text = match (d, attributes.get(a)) {
                (Some(d), Some(v)) if trend != Trend::Same => {
                    format!("{} → {}", change_text(a, d), number_text(a, v))
                }
                (Some(_), Some(v)) => format!("= {}", number_text(a, v)),
                (_, v) => value_text(a, v),
            };
            Change { label, text, trend }
        })
        .collect()
}

fn axis_row(axis: &AxisView) -> (Attribute, String) {
    (axis.attribute, axis.label.clone())
}

fn takes_hint(input: &Inputs) -> Option<String> {
    let w = input.worker;
    if !w.takes.is_empty() {
        return None;
    }
    Some(if w.model.is_none() {
        "No model is loaded. Choose a model package folder below, or use the built-in one.".into()
    } else if w.prompt.is_none() {
        format!(
            "No prompt yet. Press Arm capture and play {}, or play first and press Use last bars.",
            bars_text(input.prompt_bars)
        )
    } else if input.busy {
        "Making takes…".into()
    } else if w.request_error.is_some() {
        "No takes: see the message below.".into()
    } else {
        "No takes yet.".into()
    })
}

fn model_panel(w: &WorkerView) -> ModelPanel {
    let Some(m) = &w.model else {
        return ModelPanel {
            name: "No model loaded".into(),
            source: String::new(),
            fingerprint: String::new(),
            summary: String::new(),
            description: String::new(),
            axes_line: String::new(),
            axes: Vec::new(),
            error: w.model_error.clone(),
        };
    };
    ModelPanel {
        name: m.identity.name.clone(),
        source: match &m.folder {
            None => "built-in demo model".into(),
            Some(f) => f.display().to_string(),
        },
        fingerprint: m.identity.fingerprint.chars().take(12).collect(),
        summary: first_sentence(&m.description, 150),
        description: m.description.clone(),
        axes_line: format!(
            "Axes: {}",
            m.axes
                .iter()
                .map(|a| a.label.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        ),
        axes: m
            .axes
            .iter()
            .map(|a| match a.slot {
                Some(s) => format!("{} → {} (slider {})", a.label, a.attribute.label(), s + 1),
                None => format!("{} → {} (no free slider)", a.label, a.attribute.label()),
            })
            .collect(),
        error: w.model_error.clone(),
    }
}

/// The first sentence of `text`, cut at `max` characters with an ellipsis.
pub fn first_sentence(text: &str, max: usize) -> String {
    let end = text.find(". ").map(|i| i + 1).unwrap_or(text.len());
    let sentence = text[..end].trim();
    if sentence.chars().count() <= max {
        sentence.to_string()
    } else {
        let cut: String = sentence.chars().take(max.saturating_sub(1)).collect();
        format!("{}…", cut.trim_end())
    }
}

fn notices(input: &Inputs) -> Vec<Notice> {
    let w = input.worker;
    let mut out = Vec::new();
    let mut push = |level, text: &str| {
        out.push(Notice {
            level,
            text: text.to_string(),
        })
    };
    if let Some(e) = &w.request_error {
        push(Level::Error, e);
    }
    if input.events_refused > 0 {
        push(
            Level::Warning,
            &format!(
                "The host refused {} note event(s) from Nudgebar (its event list was full); some take notes may not have sounded.",
                input.events_refused
            ),
        );
    }
    for m in &w.messages {
        push(Level::Info, m);
    }
    if let Some(t) = input.transient {
        push(Level::Info, t);
    }
    if let Some(f) = w.exported.first() {
        if let Some(dir) = f.parent() {
            push(
                Level::Info,
                &format!("Exported files are in {}", dir.display()),
            );
        }
    }
    if matches!(input.listen, Listen::Input) && !w.takes.is_empty() {
        push(
            Level::Info,
            "Listening to the input only: click a take to hear it on the track.",
        );
    }
    out
}

// ----- numbers as text -----

/// "1 bar", "2 bars".
pub fn bars_text(bars: u8) -> String {
    if bars == 1 {
        "1 bar".into()
    } else {
        format!("{bars} bars")
    }
}

/// A slider value as the host shows it: "+0.25", "-1.00", "0.00".
pub fn offset_text(v: f32) -> String {
    if v.abs() < 0.005 {
        "0.00".into()
    } else {
        format!("{v:+.2}")
    }
}

/// Short unit for tight spaces (the long one is [`Attribute::unit`]).
fn short_unit(a: Attribute) -> &'static str {
    match a {
        Attribute::NoteDensity => " notes",
        Attribute::PitchRange => " st",
        Attribute::RhythmicComplexity => "",
        Attribute::Contour => " st/bar",
        Attribute::MeanPitch => "",
    }
}

/// The smallest change worth calling a change: half the last shown digit.
fn least_shown(a: Attribute) -> f64 {
    0.5 * 10f64.powi(-(a.decimals() as i32))
}

/// A measured value without its unit, "6.0"; mean pitch as "64.5 (E4)".
pub fn number_text(a: Attribute, v: f64) -> String {
    let d = a.decimals();
    match a {
        Attribute::MeanPitch => format!("{v:.d$} ({})", pitch_name(v.round() as i32)),
        Attribute::Contour => signed(v, d),
        _ => format!("{v:.d$}"),
    }
}

/// A number with its sign always shown, using a true minus sign (it reads
/// better next to digits than a hyphen).
fn signed(v: f64, places: usize) -> String {
    let sign = if v < 0.0 { "−" } else { "+" };
    format!("{sign}{:.places$}", v.abs())
}

/// A measured value with its unit, or a dash saying it is undefined.
pub fn value_text(a: Attribute, v: Option<f64>) -> String {
    match v {
        Some(v) => format!("{}{}", number_text(a, v), short_unit(a)),
        None => "— (no notes)".into(),
    }
}

/// A signed change with its unit: "+2.0 notes", "−3.0 st".
pub fn change_text(a: Attribute, d: f64) -> String {
    let unit = match a {
        Attribute::MeanPitch => " st",
        _ => short_unit(a),
    };
    format!("{}{unit}", signed(d, a.decimals()))
}

/// MIDI note number to name with octave, middle C (60) = C4 (the
/// scientific pitch notation most DAWs use). Sharps and flats in ASCII: the
/// editor's fonts have no ♯ or ♭.
pub fn pitch_name(p: i32) -> String {
    const NAMES: [&str; 12] = [
        "C", "C#", "D", "Eb", "E", "F", "F#", "G", "Ab", "A", "Bb", "B",
    ];
    let p = p.clamp(0, 127);
    format!("{}{}", NAMES[(p % 12) as usize], p / 12 - 1)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::state::TakeSettings;
    use crate::status::{ModelView, TakeView};
    use nudgebar_engine::ModelIdentity;
    use nudgebar_music::{Note, TimeSignature};

    /// A Wrenmouth "lamp climb" call: steps up a fifth in even eighths.
    fn lamp_climb() -> Phrase {
        let notes = [62u8, 64, 65, 67, 69]
            .iter()
            .enumerate()
            .map(|(i, &p)| Note::new(p, i as f64 * 0.5, 0.5, 90))
            .collect();
        Phrase::new(TimeSignature::FOUR_FOUR, 1, notes)
    }

    /// The same call made busier: the climb with sixteenths added.
    fn busier() -> Phrase {
        let notes = [62u8, 63, 64, 65, 66, 67, 69, 71]
            .iter()
            .enumerate()
            .map(|(i, &p)| Note::new(p, i as f64 * 0.25, 0.25, 90))
            .collect();
        Phrase::new(TimeSignature::FOUR_FOUR, 1, notes)
    }

    fn axis(attribute: Attribute, label: &str, slot: Option<usize>) -> AxisView {
        AxisView {
            attribute,
            label: label.into(),
            span: 3.0,
            slot,
            hole_rate: Vec::new(),
        }
    }

    fn model() -> ModelView {
        ModelView {
            identity: ModelIdentity {
                name: "ferry calls".into(),
                fingerprint: "0123456789abcdef".into(),
            },
            description: "Demo".into(),
            folder: None,
            axes: vec![
                axis(Attribute::NoteDensity, "Busier", Some(0)),
                axis(Attribute::Contour, "Climb", Some(3)),
            ],
            steps_per_measure: 16,
        }
    }

    fn view_with_takes() -> WorkerView {
        let prompt = lamp_climb();
        let before = Readout::of(&prompt);
        let takes = [prompt.clone(), busier()]
            .into_iter()
            .map(|p| {
                let attributes = Readout::of(&p);
                TakeView {
                    change: attributes.minus(&before),
                    attributes,
                    phrase: p,
                }
            })
            .collect();
        WorkerView {
            model: Some(model()),
            prompt: Some(prompt),
            prompt_attributes: Some(before),
            generation: 3,
            takes,
            ..WorkerView::default()
        }
    }

    fn inputs<'a>(w: &'a WorkerView, kept: &'a [KeptTake]) -> Inputs<'a> {
        Inputs {
            worker: w,
            busy: false,
            capture: CaptureStatus::Idle,
            sliders: [0.5, 0.0, 0.0, -0.25, 0.0, 0.0],
            selected: 1,
            listen: Listen::Take,
            prompt_bars: 1,
            kept,
            events_refused: 0,
            transient: None,
            shape: ShapeInputs::default(),
        }
    }

    fn kept(phrase: Phrase) -> KeptTake {
        KeptTake {
            name: "Take 2 · seed 1 (#1)".into(),
            attributes: Readout::of(&phrase),
            change: Readout::default(),
            phrase,
            settings: TakeSettings {
                offsets: Vec::new(),
                takes: 4,
                spread: 0.5,
                seed: 1,
                index: 1,
                shaping: Default::default(),
            },
            latent: Vec::new(),
            stream: 0,
            model: ModelIdentity {
                name: "ferry calls".into(),
                fingerprint: "0123".into(),
            },
            tempo: 96.0,
        }
    }

    #[test]
    fn an_empty_plugin_says_what_to_do_first() {
        let w = WorkerView::default();
        let s = screen(&inputs(&w, &[]));
        assert_eq!(s.header.model_name, "No model loaded");
        assert!(s.sliders.is_empty() && s.takes.is_empty());
        assert!(s.takes_hint.unwrap().contains("model package folder"));
        assert_eq!(s.prompt.summary, "No prompt yet");

        let w = WorkerView {
            model: Some(model()),
            ..WorkerView::default()
        };
        let mut i = inputs(&w, &[]);
        i.prompt_bars = 2;
        let s = screen(&i);
        assert_eq!(
            s.takes_hint.as_deref(),
            Some("No prompt yet. Press Arm capture and play 2 bars, or play first and press Use last bars.")
        );
        // Sliders exist as soon as a model does, labelled from its manifest.
        let labels: Vec<&str> = s.sliders.iter().map(|r| r.label.as_str()).collect();
        assert_eq!(labels, ["Busier", "Climb"]);
        assert_eq!(s.sliders[0].prompt_text, "–");
        assert_eq!(s.take_column, "Selected take");
    }

    #[test]
    fn sliders_show_value_prompt_and_selected_take_measured() {
        let w = view_with_takes();
        let s = screen(&inputs(&w, &[]));
        let density = &s.sliders[0];
        assert_eq!(density.slot, 0);
        assert_eq!(density.value_text, "+0.50");
        // The prompt has 5 notes, the selected take (2nd) 8: measured, not
        // taken from the slider.
        assert_eq!(density.prompt_text, "5.0 notes");
        assert_eq!(density.take_text.as_deref(), Some("8.0 notes (+3.0 notes)"));
        assert_eq!(s.take_column, "Take 2 (selected)");
        let contour = &s.sliders[1];
        assert_eq!(contour.slot, 3);
        assert_eq!(contour.value_text, "-0.25");
        assert!(
            contour.prompt_text.starts_with('+'),
            "a climbing call has a rising contour: {}",
            contour.prompt_text
        );

        // A selection past the end of the set shows no take reading.
        let mut i = inputs(&w, &[]);
        i.selected = 9;
        let s = screen(&i);
        assert!(s.sliders.iter().all(|r| r.take_text.is_none()));
        assert!(s.takes.iter().all(|t| !t.selected));
    }

    #[test]
    fn take_cards_show_changes_selection_and_kept_marks() {
        let w = view_with_takes();
        let keep = [kept(busier())];
        let s = screen(&inputs(&w, &keep));
        assert_eq!(s.takes.len(), 2);
        let (same, busy) = (&s.takes[0], &s.takes[1]);
        assert_eq!(busy.title, "Take 2");
        assert!(busy.selected && !same.selected);
        assert!(busy.kept && !same.kept, "kept by identical notes");
        assert_eq!(busy.changes[0].label, "Busier");
        assert_eq!(busy.changes[0].trend, Trend::Up);
        assert_eq!(busy.changes[0].text, "+3.0 notes → 8.0");
        // The unchanged take says so instead of "+0.0".
        assert_eq!(same.changes[0].trend, Trend::Same);
        assert_eq!(same.changes[0].text, "= 5.0");
        assert_eq!(s.kept.len(), 1);
        assert_eq!(s.kept[0].detail, "8 notes · 1 bar · 96 BPM");
        assert!(s.takes_hint.is_none());
    }

    #[test]
    fn status_line_reports_work_capture_and_holes() {
        let mut w = view_with_takes();
        w.holes = HoleReport {
            dangling_holds: 2,
            emptied: 1,
            resampled: 3,
            ..HoleReport::default()
        };
        let mut i = inputs(&w, &[]);
        i.busy = true;
        i.capture = CaptureStatus::Recording { bar: 1, of: 2 };
        let s = screen(&i);
        assert_eq!(s.header.busy.as_deref(), Some("Making takes…"));
        assert_eq!(s.header.capture, "Recording bar 1 of 2");
        assert!(s.header.capturing);
        assert_eq!(
            s.header.holes.as_deref(),
            Some("Hole guard: 2 dangling holds, 1 empty take")
        );
        assert_eq!(
            s.header.redraws.as_deref(),
            Some("3 take(s) drawn again to avoid duplicates or holes")
        );
        // No holes, no line; redraws alone are not holes.
        w.holes = HoleReport {
            resampled: 2,
            ..HoleReport::default()
        };
        let s = screen(&inputs(&w, &[]));
        assert_eq!(s.header.holes, None);
        assert!(s.header.redraws.is_some());
    }

    #[test]
    fn errors_are_shown_as_the_worker_wrote_them() {
        let mut w = view_with_takes();
        w.model_error =
            Some("The folder /x has no manifest.json. The previous model stays in use.".into());
        w.request_error = Some("The model failed while making takes.".into());
        w.messages = vec!["Kept \"Take 2\".".into()];
        let mut i = inputs(&w, &[]);
        i.events_refused = 3;
        i.listen = Listen::Input;
        let s = screen(&i);
        assert_eq!(s.model.error, w.model_error);
        let levels: Vec<Level> = s.notices.iter().map(|n| n.level).collect();
        assert_eq!(
            levels,
            [Level::Error, Level::Warning, Level::Info, Level::Info]
        );
        assert!(s.notices[1].text.contains("refused 3"));
        assert!(s.notices[3].text.contains("click a take"));
    }

    #[test]
    fn model_panel_names_source_and_axes() {
        let w = view_with_takes();
        let s = screen(&inputs(&w, &[]));
        assert_eq!(s.model.name, "ferry calls");
        assert_eq!(s.model.source, "built-in demo model");
        assert_eq!(s.model.fingerprint, "0123456789ab");
        assert_eq!(s.model.axes_line, "Axes: Busier, Climb");
        assert_eq!(
            first_sentence("Trained on calls. Sliders move dims.", 80),
            "Trained on calls."
        );
        assert_eq!(first_sentence("abcdefghij", 5), "abcd…");
        assert_eq!(
            s.model.axes,
            [
                "Busier → Note density (slider 1)",
                "Climb → Contour (slider 4)"
            ]
        );
    }

    #[test]
    fn all_rolls_share_one_pitch_window_covering_every_note() {
        let one = |pitches: &[u8]| {
            let notes = pitches
                .iter()
                .enumerate()
                .map(|(i, &p)| Note::new(p, i as f64 * 0.5, 0.5, 90))
                .collect();
            Phrase::new(TimeSignature::FOUR_FOUR, 1, notes)
        };
        let (low, high) = (one(&[55, 60]), one(&[70, 79]));
        assert_eq!(pitch_window([&low, &high].into_iter()), (54, 80));
        // Narrow calls get at least MIN_ROWS rows, centred.
        let (lo, hi) = pitch_window([&one(&[60, 62])].into_iter());
        assert_eq!(hi - lo + 1, MIN_ROWS);
        assert!(lo < 60 && hi > 62);
        // The keyboard's ends do not overflow; silence shows middle C.
        assert_eq!(pitch_window([&one(&[0, 127])].into_iter()), (0, 127));
        let (lo, hi) = pitch_window(std::iter::empty());
        assert!(lo <= 60 && hi >= 60 && hi - lo + 1 == MIN_ROWS);
        // The screen uses the prompt and every take.
        let w = view_with_takes();
        let s = screen(&inputs(&w, &[]));
        let all = [
            w.prompt.as_ref().unwrap(),
            &w.takes[0].phrase,
            &w.takes[1].phrase,
        ];
        assert_eq!(s.pitch_window, pitch_window(all.into_iter()));
        assert!(s.pitch_window.0 < 62 && s.pitch_window.1 > 71);
    }

    #[test]
    fn hole_rates_become_bands_over_the_slider() {
        // Five positions: −1, −0.5, 0, 0.5, 1; only clear holes are shaded.
        let bands = unreliable_bands(&[0.0, 0.01, 0.0, 0.2, 0.9]);
        assert_eq!(bands, vec![(0.25, 0.75, 0.2), (0.75, 1.0, 0.9)]);
        assert!(unreliable_bands(&[0.5]).is_empty());
        assert!(unreliable_bands(&[f32::NAN, 0.0]).is_empty());
    }

    #[test]
    fn numbers_read_like_a_musician_writes_them() {
        assert_eq!(pitch_name(60), "C4");
        assert_eq!(pitch_name(69), "A4");
        assert_eq!(pitch_name(61), "C#4");
        assert_eq!(pitch_name(70), "Bb4");
        assert_eq!(pitch_name(21), "A0");
        assert_eq!(value_text(Attribute::MeanPitch, Some(64.2)), "64.2 (E4)");
        assert_eq!(value_text(Attribute::PitchRange, None), "— (no notes)");
        assert_eq!(change_text(Attribute::PitchRange, -3.0), "−3.0 st");
        assert_eq!(change_text(Attribute::RhythmicComplexity, 0.126), "+0.13");
        assert_eq!(value_text(Attribute::Contour, Some(-2.0)), "−2.0 st/bar");
        assert_eq!(offset_text(0.001), "0.00");
        assert_eq!(bars_text(1), "1 bar");
    }
}
