//! The report's figures, computed from slider sweeps on the engine.

use nudgebar_engine::steer::sweep::{self, SweepPoint};
use nudgebar_engine::{Engine, EngineError, ModelIdentity};
use nudgebar_music::attributes::{least_squares_slope, Attribute};
use nudgebar_music::Phrase;
use serde::{Deserialize, Serialize};

#[derive(Debug, Clone, PartialEq)]
pub struct ReportOptions {
    /// Slider values per sweep, evenly from −reach to +reach.
    pub points: usize,
    pub reach: f32,
    /// The map: which axis runs along x (index into the model's axes) …
    pub map_axis: usize,
    /// … which latent dimension along y (default: the first dimension no
    /// regularized axis owns, else the one after the axis's own) …
    pub map_dimension: Option<usize>,
    /// … and which attribute is shown (default: the axis's own).
    pub map_attribute: Option<Attribute>,
    /// Cells per side of the map.
    pub map_cells: usize,
    /// The map's y runs over ±this many latent units around the prompt's code.
    pub map_latent_reach: f32,
}

impl Default for ReportOptions {
    fn default() -> Self {
        ReportOptions {
            points: 9,
            reach: 1.0,
            map_axis: 0,
            map_dimension: None,
            map_attribute: None,
            map_cells: 15,
            map_latent_reach: 2.5,
        }
    }
}

/// One axis: how it steers and where it breaks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AxisFigures {
    pub attribute: Attribute,
    pub label: String,
    /// Mean Spearman ρ between slider and the axis's attribute over the
    /// prompts (a prompt whose attribute never moved counts as 0).
    pub mean_rho: f64,
    pub rho_per_prompt: Vec<Option<f64>>,
    /// Share of prompts whose decode is a hole, per slider value.
    pub hole_rate: Vec<f64>,
    /// Mean measured value of the axis's attribute per slider value (over
    /// the prompts where it is defined).
    pub mean_response: Vec<Option<f64>>,
    /// The raw sweeps: `[prompt][slider]`.
    pub sweeps: Vec<Vec<SweepPoint>>,
}

/// `per_unit[axis][attribute]`: the mean over prompts of the least-squares
/// slope of the attribute against the slider — how much a full slider unit
/// moves each attribute, in the attribute's unit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ChangeMatrix {
    pub axes: Vec<Attribute>,
    pub attributes: Vec<Attribute>,
    pub per_unit: Vec<Vec<Option<f64>>>,
}

/// One attribute decoded over a grid of (slider on one axis, offset on one
/// latent dimension), from the first prompt's code.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LatentMap {
    pub attribute: Attribute,
    pub axis: Attribute,
    pub dimension: usize,
    pub sliders: Vec<f32>,
    pub offsets: Vec<f32>,
    /// `values[row = offset][column = slider]`; None where undefined.
    pub values: Vec<Vec<Option<f64>>>,
    /// Same layout: the decode there is a hole.
    pub holes: Vec<Vec<bool>>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelReport {
    pub model: ModelIdentity,
    pub prompts: usize,
    pub sliders: Vec<f32>,
    pub axes: Vec<AxisFigures>,
    pub change: ChangeMatrix,
    pub map: LatentMap,
}

/// Runs every sweep and computes the report.
pub fn measure(
    engine: &mut Engine,
    prompts: &[Phrase],
    options: &ReportOptions,
) -> Result<ModelReport, EngineError> {
    if prompts.is_empty() {
        return Err(EngineError::Setting(
            "The report needs at least one prompt to sweep the sliders from.".into(),
        ));
    }
    if options.points < 2
        || options.map_cells < 2
        || options.points > 101
        || options.map_cells > 101
    {
        return Err(EngineError::Setting(
            "Use 2 to 101 slider points and map cells per side.".into(),
        ));
    }
    let axes: Vec<_> = engine.axes().to_vec();
    if options.map_axis >= axes.len() {
        return Err(EngineError::Setting(format!(
            "The map's axis {} does not exist; this model has {} axes (numbered from 0).",
            options.map_axis,
            axes.len()
        )));
    }
    let sliders = sweep::slider_grid(options.reach, options.points);
    let mut figures = Vec::with_capacity(axes.len());
    let mut per_unit = Vec::with_capacity(axes.len());
    for (a, axis) in axes.iter().enumerate() {
        let mut sweeps = Vec::with_capacity(prompts.len());
        for p in prompts {
            sweeps.push(engine.sweep_axis(p, a, &sliders)?);
        }
        figures.push(axis_figures(axis.attribute, &axis.label, sweeps));
        per_unit.push(
            Attribute::ALL
                .iter()
                .map(|&attr| mean_slope(&figures[a].sweeps, attr))
                .collect(),
        );
    }
    let map = latent_map(engine, &prompts[0], options)?;
    Ok(ModelReport {
        model: engine.identity().clone(),
        prompts: prompts.len(),
        sliders,
        axes: figures,
        change: ChangeMatrix {
            axes: axes.iter().map(|a| a.attribute).collect(),
            attributes: Attribute::ALL.to_vec(),
            per_unit,
        },
        map,
    })
}

fn axis_figures(attribute: Attribute, label: &str, sweeps: Vec<Vec<SweepPoint>>) -> AxisFigures {
    let rho_per_prompt: Vec<Option<f64>> = sweeps
        .iter()
        .map(|points| {
            let (xs, ys): (Vec<f64>, Vec<f64>) = points
                .iter()
                .filter_map(|p| p.attributes.get(attribute).map(|v| (p.slider as f64, v)))
                .unzip();
            sweep::spearman(&xs, &ys)
        })
        .collect();
    let n = sweeps.len() as f64;
    let mean_rho = rho_per_prompt.iter().map(|r| r.unwrap_or(0.0)).sum::<f64>() / n;
    let count = sweeps.first().map_or(0, Vec::len);
    let hole_rate = (0..count)
        .map(|k| sweeps.iter().filter(|s| s[k].hole).count() as f64 / n)
        .collect();
    let mean_response = (0..count)
        .map(|k| {
            let vals: Vec<f64> = sweeps
                .iter()
                .filter_map(|s| s[k].attributes.get(attribute))
                .collect();
            (!vals.is_empty()).then(|| vals.iter().sum::<f64>() / vals.len() as f64)
        })
        .collect();
    AxisFigures {
        attribute,
        label: label.to_string(),
        mean_rho,
        rho_per_prompt,
        hole_rate,
        mean_response,
        sweeps,
    }
}

/// Mean over prompts of the slope of `attribute` against the slider; None
/// when no prompt defines it at two slider values.
fn mean_slope(sweeps: &[Vec<SweepPoint>], attribute: Attribute) -> Option<f64> {
    let slopes: Vec<f64> = sweeps
        .iter()
        .filter_map(|points| {
            let xy: Vec<(f64, f64)> = points
                .iter()
                .filter_map(|p| p.attributes.get(attribute).map(|v| (p.slider as f64, v)))
                .collect();
            least_squares_slope(&xy)
        })
        .collect();
    (!slopes.is_empty()).then(|| slopes.iter().sum::<f64>() / slopes.len() as f64)
}

fn latent_map(
    engine: &mut Engine,
    prompt: &Phrase,
    options: &ReportOptions,
) -> Result<LatentMap, EngineError> {
    let axis = engine.axes()[options.map_axis].clone();
    let size = engine.latent_size();
    let dimension = match options.map_dimension {
        Some(d) if d < size => d,
        Some(d) => {
            return Err(EngineError::Setting(format!(
                "The map's latent dimension {d} does not exist; the code has {size} dimensions (0 to {}).",
                size - 1
            )))
        }
        None => engine
            .free_dimensions()
            .iter()
            .position(|f| *f)
            .unwrap_or((axis.dimension.unwrap_or(0) + 1) % size),
    };
    let attribute = options.map_attribute.unwrap_or(axis.attribute);
    let sliders = sweep::slider_grid(options.reach, options.map_cells);
    let offsets = sweep::slider_grid(options.map_latent_reach, options.map_cells);
    let prepared = engine.prepare(prompt)?;
    let base = engine.encode(&prepared)?.mean;
    let mut codes = Vec::with_capacity(sliders.len() * offsets.len() * base.len());
    for &y in &offsets {
        for &x in &sliders {
            codes.extend(base.iter().enumerate().map(|(i, b)| {
                let d = i % size;
                b + x * axis.span * axis.direction[d] + if d == dimension { y } else { 0.0 }
            }));
        }
    }
    let points = sweep::decode_points(engine, &prepared, &codes)?;
    let cols = sliders.len();
    let mut values = vec![Vec::with_capacity(cols); offsets.len()];
    let mut holes = vec![Vec::with_capacity(cols); offsets.len()];
    for (k, (readout, hole, _)) in points.into_iter().enumerate() {
        values[k / cols].push(readout.get(attribute));
        holes[k / cols].push(hole);
    }
    Ok(LatentMap {
        attribute,
        axis: axis.attribute,
        dimension,
        sliders,
        offsets,
        values,
        holes,
    })
}
