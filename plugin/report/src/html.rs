//! The report page: one HTML file with the figures, tables and inline SVG
//! charts, no scripts and no external files, so it opens anywhere and can
//! be mailed as it is.

use crate::measure::ModelReport;
use crate::plots;
use nudgebar_music::attributes::Attribute;
use std::fmt::Write;

/// Escapes text for HTML element content and attribute values.
pub fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

pub fn page(report: &ModelReport) -> Result<String, String> {
    let mut out = String::new();
    let name = escape(&report.model.name);
    let _ = write!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>Model report: {name}</title>\n<style>{STYLE}</style></head><body>\n"
    );
    let _ = writeln!(
        out,
        "<h1>Model report: {name}</h1>\n<p class=\"meta\">fingerprint {} · {} prompt(s) · sliders from {:+.2} to {:+.2} in {} steps</p>",
        escape(&report.model.fingerprint),
        report.prompts,
        report.sliders.first().copied().unwrap_or(0.0),
        report.sliders.last().copied().unwrap_or(0.0),
        report.sliders.len()
    );

    out.push_str("<h2>How each axis steers</h2>\n<p>ρ is Spearman's rank correlation between the slider and the measured attribute, averaged over the prompts (1 = the attribute always rises with the slider). The hole rate is the share of prompts whose decode was invalid or silent at that slider value; the editor shades those stretches of the slider.</p>\n<table><tr><th>axis</th><th>attribute</th><th>mean ρ</th><th>worst hole rate</th></tr>\n");
    for a in &report.axes {
        let worst = a.hole_rate.iter().copied().fold(0.0, f64::max);
        let _ = writeln!(
            out,
            "<tr><td>{}</td><td>{}</td><td class=\"num\">{:.3}</td><td class=\"num\">{:.0}%</td></tr>",
            escape(&a.label),
            a.attribute.key(),
            a.mean_rho,
            worst * 100.0
        );
    }
    out.push_str("</table>\n<div class=\"charts\">\n");
    for a in &report.axes {
        out.push_str(&plots::axis_chart(a, &report.sliders)?);
        out.push('\n');
    }
    out.push_str("</div>\n");

    out.push_str("<h2>What else each axis moves</h2>\n<p>Change of each measured attribute per slider unit (least-squares slope, averaged over the prompts). The diagonal is what the axis is for; large values elsewhere mean the axis drags other attributes along.</p>\n<table><tr><th>axis</th>");
    for attr in &report.change.attributes {
        let _ = write!(
            out,
            "<th>{}<br><small>{}</small></th>",
            attr.label(),
            escape(attr.unit())
        );
    }
    out.push_str("</tr>\n");
    for (axis, row) in report.change.axes.iter().zip(&report.change.per_unit) {
        let _ = write!(out, "<tr><td>{}</td>", axis.label());
        for (attr, v) in report.change.attributes.iter().zip(row) {
            let own = if attr == axis { " own" } else { "" };
            match v {
                Some(v) => {
                    let d = Attribute::decimals(*attr) + 1;
                    let _ = write!(out, "<td class=\"num{own}\">{v:+.d$}</td>");
                }
                None => {
                    let _ = write!(out, "<td class=\"num{own}\">–</td>");
                }
            }
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</table>\n");

    let m = &report.map;
    let holes: usize = m.holes.iter().flatten().filter(|h| **h).count()
        + m.values.iter().flatten().filter(|v| v.is_none()).count();
    let _ = writeln!(
        out,
        "<h2>Map of {} around the first prompt</h2>\n<p>Each cell is one decode: the {} slider along x, an offset on latent dimension {} along y. Pale cells measure low, deep blue high ({} to {}). Dark cells with a cross are holes (invalid, silent or unmeasurable decodes): {holes} of {} cells.</p>",
        m.attribute.label().to_lowercase(),
        m.axis.label().to_lowercase(),
        m.dimension,
        fmt_extreme(m.values.iter().flatten().flatten().copied().reduce(f64::min)),
        fmt_extreme(m.values.iter().flatten().flatten().copied().reduce(f64::max)),
        m.sliders.len() * m.offsets.len()
    );
    out.push_str(&plots::map_chart(m)?);
    out.push_str("\n</body></html>\n");
    Ok(out)
}

fn fmt_extreme(v: Option<f64>) -> String {
    v.map_or_else(|| "–".to_string(), |v| format!("{v:.2}"))
}

const STYLE: &str = "body{font-family:sans-serif;max-width:1120px;margin:2em auto;color:#222}\
h1{font-size:1.5em}h2{font-size:1.2em;margin-top:2em}.meta{color:#666}\
table{border-collapse:collapse}td,th{border:1px solid #ccc;padding:4px 8px}\
.num{text-align:right;font-variant-numeric:tabular-nums}.own{background:#eef4fa;font-weight:bold}\
.charts svg{margin:4px}";
