//! The proof that the sliders steer: for held-out prompts, sweep each axis
//! across its span with the engine (encode → offset → decode → argmax →
//! measure), and report how monotonically its attribute follows (Spearman
//! ρ), how much every attribute moved (the attribute-change matrix), and how
//! well the model reconstructs prompts at slider 0.
//!
//! The same code writes REPORT.md after training and backs the regression
//! test (tests/tests/demo_model_proof.rs), which asserts `Thresholds`.

use crate::corpus::spearman;
use anyhow::{anyhow, Result};
use nudgebar_engine::codec::{input_rows, InputRows};
use nudgebar_engine::{Engine, HoleReport, NoteChoice, PitchMask};
use nudgebar_music::attributes::{measure, Attribute};
use nudgebar_music::{Grid, Phrase};
use serde::Serialize;

/// Pass marks for a steering report.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Thresholds {
    /// Mean Spearman ρ between slider and its own attribute, for every axis …
    pub min_spearman: f64,
    /// … except these, which have their own floor.
    #[serde(skip)]
    pub spearman_floors: &'static [(Attribute, f64)],
    /// Each other attribute's change must be at most this fraction of the
    /// axis's own (both in standard deviations over the prompts) — "clearly less".
    pub max_cross_ratio: f64,
    /// Share of grid steps decoded back to the prompt's token at slider 0.
    pub min_reconstruction: f64,
}

impl Thresholds {
    fn spearman_floor(&self, a: Attribute) -> f64 {
        self.spearman_floors
            .iter()
            .find(|(b, _)| *b == a)
            .map(|(_, f)| *f)
            .unwrap_or(self.min_spearman)
    }
}

/// Issue 3's targets for the demo model.
pub const ISSUE_TARGETS: Thresholds = Thresholds {
    min_spearman: 0.9,
    spearman_floors: &[],
    max_cross_ratio: 0.5,
    min_reconstruction: 0.9,
};

/// What the regression test holds the shipped model to: the issue's targets
/// where the model meets them, and a floor a little under the shipped figure
/// where it does not yet (REPORT.md lists those gaps), so a retrained or
/// edited model that gets worse anywhere fails.
pub const REGRESSION_FLOORS: Thresholds = Thresholds {
    min_spearman: 0.9,
    // Shipped: range 0.807, reconstruction 89.1 % (REPORT.md).
    spearman_floors: &[(Attribute::PitchRange, 0.78)],
    max_cross_ratio: 0.5,
    min_reconstruction: 0.87,
};

#[derive(Debug, Clone, Serialize)]
pub struct AxisSweep {
    pub attribute: Attribute,
    pub label: String,
    pub span: f32,
    /// Mean over prompts of Spearman ρ(slider, attribute), per attribute in
    /// `Attribute::ALL` order; a prompt where the attribute never varies or is
    /// undefined at fewer than three slider points counts as ρ = 0.
    pub spearman: Vec<f64>,
    /// Mean change (slider +1 minus slider −1) of each attribute, in
    /// attribute units, over prompts where it is defined at both ends.
    pub change: Vec<f64>,
    /// `change` divided by the attribute's standard deviation over the prompts.
    pub change_in_deviations: Vec<f64>,
    /// Mean Spearman ρ with the axis's own attribute for prompts of each
    /// note-count band in `NOTE_BANDS` (the same ρ as `spearman`, split by
    /// how many notes the prompt has): shows where a slider is weak.
    pub own_spearman_by_notes: Vec<f64>,
    /// Hole-guard events over the whole sweep.
    pub holes: HoleReport,
}

/// Note-count bands for `AxisSweep::own_spearman_by_notes`, inclusive.
pub const NOTE_BANDS: [(usize, usize); 4] = [(0, 4), (5, 8), (9, 12), (13, 64)];

/// Index of the band holding `notes` notes.
fn note_band(notes: usize) -> usize {
    NOTE_BANDS
        .iter()
        .position(|&(lo, hi)| (lo..=hi).contains(&notes))
        .unwrap_or(NOTE_BANDS.len() - 1)
}

#[derive(Debug, Clone, Serialize)]
pub struct SteeringReport {
    pub prompts: usize,
    /// Prompts in each band of `NOTE_BANDS`.
    pub prompts_by_notes: Vec<usize>,
    pub sweep_points: usize,
    pub axes: Vec<AxisSweep>,
    /// Standard deviation of each attribute over the prompts (the matrix's unit).
    pub deviations: Vec<f64>,
    /// Share of grid steps reconstructed exactly at slider 0 (argmax).
    pub reconstruction: f64,
    /// Share of grid steps whose kind (onset, hold or rest) is reconstructed,
    /// whatever the pitch: says whether misses are rhythm or pitch.
    pub rhythm_reconstruction: f64,
    /// Share of prompts reconstructed note for note.
    pub exact_prompts: f64,
}

/// Slider values of a sweep: `points` evenly spaced over −1 … +1.
pub fn sweep_values(points: usize) -> Vec<f32> {
    (0..points)
        .map(|i| -1.0 + 2.0 * i as f32 / (points - 1) as f32)
        .collect()
}

/// Per-step tokens of a one-measure grid, through the engine's own codec.
fn tokens(engine: &Engine, grid: &Grid, prepared: &nudgebar_engine::Prepared) -> Vec<usize> {
    let enc = &engine.manifest().encoding;
    match input_rows(grid, &prepared.layout, enc) {
        InputRows::F32(x) => x
            .chunks(enc.classes())
            .map(|s| s.iter().position(|&v| v == 1.0).unwrap_or(0))
            .collect(),
        InputRows::I64(x) => x.into_iter().map(|t| t as usize).collect(),
    }
}

pub fn evaluate(engine: &mut Engine, prompts: &[Phrase], points: usize) -> Result<SteeringReport> {
    let err = |e: nudgebar_engine::EngineError| anyhow!("{e}");
    let values = sweep_values(points);
    let axes = engine.axes().to_vec();
    let attrs = Attribute::ALL;
    let deviations: Vec<f64> = attrs.iter().map(|&a| deviation(a, prompts)).collect();
    let mut sweeps: Vec<AxisSweep> = axes
        .iter()
        .map(|a| AxisSweep {
            attribute: a.attribute,
            label: a.label.clone(),
            span: a.span,
            spearman: vec![0.0; attrs.len()],
            change: vec![0.0; attrs.len()],
            change_in_deviations: vec![0.0; attrs.len()],
            own_spearman_by_notes: vec![0.0; NOTE_BANDS.len()],
            holes: HoleReport::default(),
        })
        .collect();
    let mut band_counts = [0usize; NOTE_BANDS.len()];
    let mut change_counts = vec![vec![0usize; attrs.len()]; axes.len()];
    let (mut steps_right, mut steps_total, mut exact) = (0usize, 0usize, 0usize);
    let mut kinds_right = 0usize;
    let pitches = engine.manifest().encoding.pitch_count();
    let kind = |t: usize| if t < pitches { 0 } else { t };
    let mask = PitchMask::default();
    for prompt in prompts {
        let band = note_band(prompt.notes.len());
        band_counts[band] += 1;
        let prepared = engine.prepare(prompt).map_err(err)?;
        let base = engine.encode(&prepared).map_err(err)?;
        let size = engine.latent_size();
        // Reconstruction at slider 0.
        let logits = engine.decode(&base.mean, base.rows).map_err(err)?;
        let mut holes = HoleReport::default();
        let back = engine.read_take(
            &logits,
            0,
            &prepared,
            &NoteChoice::Argmax,
            0,
            &mask,
            &mut holes,
        );
        let (want, got) = (
            tokens(engine, &prepared.grid, &prepared),
            tokens(engine, &back, &prepared),
        );
        let right = want.iter().zip(&got).filter(|(a, b)| a == b).count();
        steps_right += right;
        kinds_right += want
            .iter()
            .zip(&got)
            .filter(|(a, b)| kind(**a) == kind(**b))
            .count();
        steps_total += want.len();
        exact += (right == want.len()) as usize;
        // Sweeps: every slider value of one axis in one batched decode.
        for (k, sweep) in sweeps.iter_mut().enumerate() {
            let mut codes = Vec::with_capacity(points * size);
            for &v in &values {
                let mut sliders = vec![0.0; axes.len()];
                sliders[k] = v;
                let offset = engine.offset_for(&sliders);
                codes.extend(base.row(0).iter().zip(&offset).map(|(m, o)| m + o));
            }
            let logits = engine.decode(&codes, points).map_err(err)?;
            let measured: Vec<Vec<Option<f64>>> = (0..points)
                .map(|i| {
                    let grid = engine.read_take(
                        &logits,
                        i,
                        &prepared,
                        &NoteChoice::Argmax,
                        0,
                        &mask,
                        &mut sweep.holes,
                    );
                    let phrase = grid.to_phrase();
                    attrs.iter().map(|&a| measure(a, &phrase)).collect()
                })
                .collect();
            for (c, _) in attrs.iter().enumerate() {
                let (xs, ys): (Vec<f64>, Vec<f64>) = values
                    .iter()
                    .zip(&measured)
                    .filter_map(|(&v, m)| m[c].map(|y| (v as f64, y)))
                    .unzip();
                let rho = if xs.len() >= 3 {
                    spearman(&xs, &ys).filter(|r| r.is_finite()).unwrap_or(0.0)
                } else {
                    0.0
                };
                sweep.spearman[c] += rho / prompts.len() as f64;
                if attrs[c] == sweep.attribute {
                    sweep.own_spearman_by_notes[band] += rho;
                }
                if let (Some(lo), Some(hi)) = (measured[0][c], measured[points - 1][c]) {
                    sweep.change[c] += hi - lo;
                    change_counts[k][c] += 1;
                }
            }
        }
    }
    for (k, sweep) in sweeps.iter_mut().enumerate() {
        for (b, n) in band_counts.iter().enumerate() {
            sweep.own_spearman_by_notes[b] /= (*n).max(1) as f64;
        }
        for c in 0..attrs.len() {
            sweep.change[c] /= change_counts[k][c].max(1) as f64;
            sweep.change_in_deviations[c] = sweep.change[c] / deviations[c];
        }
    }
    Ok(SteeringReport {
        prompts: prompts.len(),
        prompts_by_notes: band_counts.to_vec(),
        sweep_points: points,
        axes: sweeps,
        deviations,
        reconstruction: steps_right as f64 / steps_total.max(1) as f64,
        rhythm_reconstruction: kinds_right as f64 / steps_total.max(1) as f64,
        exact_prompts: exact as f64 / prompts.len().max(1) as f64,
    })
}

/// Population standard deviation of an attribute over the phrases where it
/// is defined (1 when it is defined nowhere, so ratios stay finite).
fn deviation(a: Attribute, phrases: &[Phrase]) -> f64 {
    let v: Vec<f64> = phrases.iter().filter_map(|p| measure(a, p)).collect();
    if v.len() < 2 {
        return 1.0;
    }
    let mean = v.iter().sum::<f64>() / v.len() as f64;
    (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / v.len() as f64)
        .sqrt()
        .max(1e-9)
}

impl SteeringReport {
    /// Every way the report falls short of `t`, as sentences; empty = pass.
    pub fn failures(&self, t: &Thresholds) -> Vec<String> {
        let mut out = Vec::new();
        for sweep in &self.axes {
            let own = Attribute::ALL
                .iter()
                .position(|&a| a == sweep.attribute)
                .expect("axes use known attributes");
            let rho = sweep.spearman[own];
            let floor = t.spearman_floor(sweep.attribute);
            if rho < floor {
                out.push(format!(
                    "{} axis: mean Spearman ρ with {} is {rho:.3}, below {floor}",
                    sweep.label,
                    sweep.attribute.key(),
                ));
            }
            let own_change = sweep.change_in_deviations[own];
            if own_change <= 0.0 {
                out.push(format!(
                    "{} axis: {} does not grow across the sweep ({own_change:.2} deviations)",
                    sweep.label,
                    sweep.attribute.key()
                ));
            }
            for (c, a) in Attribute::ALL.iter().enumerate() {
                let other = sweep.change_in_deviations[c].abs();
                if c != own && other > t.max_cross_ratio * own_change.abs() {
                    out.push(format!(
                        "{} axis: {} moves {other:.2} deviations, more than {} × the {own_change:.2} of {}",
                        sweep.label,
                        a.key(),
                        t.max_cross_ratio,
                        sweep.attribute.key()
                    ));
                }
            }
        }
        if self.reconstruction < t.min_reconstruction {
            out.push(format!(
                "reconstruction at slider 0 is {:.1} % of grid steps, below {:.0} %",
                100.0 * self.reconstruction,
                100.0 * t.min_reconstruction
            ));
        }
        out
    }

    /// The figures as Markdown tables.
    pub fn to_markdown(&self) -> String {
        let mut s = String::new();
        let head: Vec<String> = Attribute::ALL.iter().map(|a| a.key().to_string()).collect();
        s.push_str(&format!(
            "Held-out prompts: {}; each axis swept over {} slider values from −1 to +1 (argmax decoding).\n\n",
            self.prompts, self.sweep_points
        ));
        s.push_str(&format!(
            "Reconstruction at slider 0: **{:.1} %** of grid steps ({:.1} % of steps right in kind — onset, hold or rest — whatever the pitch; {:.1} % of prompts note for note).\n\n",
            100.0 * self.reconstruction,
            100.0 * self.rhythm_reconstruction,
            100.0 * self.exact_prompts
        ));
        s.push_str("Attribute-change matrix (rows: axis swept; columns: mean change of each measured attribute from slider −1 to +1, in standard deviations of that attribute over the prompts; raw change in attribute units in brackets):\n\n");
        s.push_str(&table_head("axis (span)", &head));
        for a in &self.axes {
            let cells: Vec<String> = a
                .change_in_deviations
                .iter()
                .zip(&a.change)
                .map(|(d, c)| format!("{d:+.2} ({c:+.2})"))
                .collect();
            s.push_str(&format!(
                "| {} ({:.2}) | {} |\n",
                a.label,
                a.span,
                cells.join(" | ")
            ));
        }
        s.push_str(
            "\nMean Spearman ρ between slider value and measured attribute (rows: axis swept):\n\n",
        );
        let with_holes: Vec<String> = head.iter().cloned().chain(["holes".into()]).collect();
        s.push_str(&table_head("axis", &with_holes));
        for a in &self.axes {
            let cells: Vec<String> = a.spearman.iter().map(|r| format!("{r:+.3}")).collect();
            s.push_str(&format!(
                "| {} | {} | {} |\n",
                a.label,
                cells.join(" | "),
                a.holes.total()
            ));
        }
        s.push_str(
            "\nThe same ρ on each axis's own attribute, split by how many notes the prompt has:\n\n",
        );
        let bands: Vec<String> = NOTE_BANDS
            .iter()
            .zip(&self.prompts_by_notes)
            .map(|((lo, hi), n)| {
                if *lo <= 1 {
                    format!("≤ {hi} notes ({n} prompts)")
                } else if *hi >= 64 {
                    format!("{lo}+ notes ({n} prompts)")
                } else {
                    format!("{lo}–{hi} notes ({n} prompts)")
                }
            })
            .collect();
        s.push_str(&table_head("axis", &bands));
        for a in &self.axes {
            let cells: Vec<String> = a
                .own_spearman_by_notes
                .iter()
                .map(|r| format!("{r:+.3}"))
                .collect();
            s.push_str(&format!("| {} | {} |\n", a.label, cells.join(" | ")));
        }
        s.push_str(&format!(
            "\nAttribute standard deviations over the prompts: {}.\n",
            Attribute::ALL
                .iter()
                .zip(&self.deviations)
                .map(|(a, d)| format!("{} {d:.2}", a.key()))
                .collect::<Vec<_>>()
                .join(", ")
        ));
        s
    }
}

/// A Markdown table's header and rule line: `first` over the row labels,
/// then one column per entry of `columns`.
fn table_head(first: &str, columns: &[String]) -> String {
    format!(
        "| {first} | {} |\n|---|{}\n",
        columns.join(" | "),
        "---|".repeat(columns.len())
    )
}

/// Held-out prompts: the corpus generator with a seed training never uses.
pub const HELD_OUT_SEED: u64 = 0x4E1D_0D7;
/// 256 rather than the 64 used before: one prompt's ρ can be anything from
/// −1 to 1, and for one model the mean ρ over the first 64 prompts and over
/// all 256 differed by up to 0.03 (contour 0.849 against 0.871).
pub const HELD_OUT_PROMPTS: usize = 256;
/// Slider values per sweep (−1, −0.75, …, +1).
pub const SWEEP_POINTS: usize = 9;

/// The held-out prompts every proof uses.
pub fn held_out_prompts() -> Vec<Phrase> {
    crate::corpus::generate(HELD_OUT_SEED, HELD_OUT_PROMPTS)
}
