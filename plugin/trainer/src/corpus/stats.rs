//! How well a corpus spans the attributes and how independent they are.
//!
//! Correlated attributes in the training data make the trained sliders drag
//! each other along, so the corpus reports its pairwise Pearson correlations.

use nudgebar_music::attributes::{measure, Attribute};
use nudgebar_music::Phrase;
use std::fmt::Write;

/// Pearson's product-moment correlation of two equally long samples.
/// `None` when there are fewer than two pairs or either sample is constant
/// (the coefficient is undefined there).
pub fn pearson(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len();
    if n != y.len() || n < 2 {
        return None;
    }
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = y.iter().sum::<f64>() / n as f64;
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in x.iter().zip(y) {
        let (dx, dy) = (a - mx, b - my);
        sxy += dx * dy;
        sxx += dx * dx;
        syy += dy * dy;
    }
    if sxx <= 0.0 || syy <= 0.0 {
        return None;
    }
    Some((sxy / (sxx.sqrt() * syy.sqrt())).clamp(-1.0, 1.0))
}

/// Spearman's rank correlation: Pearson's r of the ranks, ties given their
/// average rank. Rank order is what the attribute-regularization loss sees
/// (it compares signs of pairwise differences), so this is the figure that
/// says most directly how much one slider's training signal leaks into another.
pub fn spearman(x: &[f64], y: &[f64]) -> Option<f64> {
    if x.len() != y.len() {
        return None;
    }
    pearson(&ranks(x), &ranks(y))
}

/// 1-based ranks with ties averaged.
fn ranks(v: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..v.len()).collect();
    order.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut out = vec![0.0; v.len()];
    let mut i = 0;
    while i < order.len() {
        let mut j = i;
        while j + 1 < order.len() && v[order[j + 1]] == v[order[i]] {
            j += 1;
        }
        let rank = (i + j) as f64 / 2.0 + 1.0;
        for &k in &order[i..=j] {
            out[k] = rank;
        }
        i = j + 1;
    }
    out
}

/// The measured value of every attribute (in `Attribute::ALL` order) for each
/// phrase; `None` where an attribute is undefined for that phrase.
pub fn attribute_table(phrases: &[Phrase]) -> Vec<Vec<Option<f64>>> {
    phrases
        .iter()
        .map(|p| Attribute::ALL.iter().map(|&a| measure(a, p)).collect())
        .collect()
}

/// Pairwise Pearson correlations between the attributes of `Attribute::ALL`
/// (the four slider attributes and mean pitch), as a square matrix in that
/// order. Each pair uses the phrases where both attributes are defined; an
/// undefined coefficient is NaN.
pub fn correlations(phrases: &[Phrase]) -> Vec<Vec<f64>> {
    matrix(phrases, pearson)
}

/// Like [`correlations`], with Spearman's rank correlation.
pub fn rank_correlations(phrases: &[Phrase]) -> Vec<Vec<f64>> {
    matrix(phrases, spearman)
}

fn matrix(phrases: &[Phrase], coefficient: fn(&[f64], &[f64]) -> Option<f64>) -> Vec<Vec<f64>> {
    let table = attribute_table(phrases);
    let n = Attribute::ALL.len();
    let mut out = vec![vec![f64::NAN; n]; n];
    for i in 0..n {
        for j in 0..n {
            let (x, y): (Vec<f64>, Vec<f64>) = table
                .iter()
                .filter_map(|row| Some((row[i]?, row[j]?)))
                .unzip();
            out[i][j] = coefficient(&x, &y).unwrap_or(f64::NAN);
        }
    }
    out
}

/// Smallest, largest and mean value of one attribute over a corpus, its 5th
/// and 95th percentiles (contour has long tails: two notes a sixteenth apart
/// make a steep slope), and how many phrases it was defined for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Span {
    pub min: f64,
    pub p05: f64,
    pub mean: f64,
    pub p95: f64,
    pub max: f64,
    pub defined: usize,
}

/// The span of every attribute (in `Attribute::ALL` order).
pub fn spans(phrases: &[Phrase]) -> Vec<Option<Span>> {
    let table = attribute_table(phrases);
    (0..Attribute::ALL.len())
        .map(|i| {
            let mut v: Vec<f64> = table.iter().filter_map(|row| row[i]).collect();
            if v.is_empty() {
                return None;
            }
            v.sort_by(f64::total_cmp);
            // Nearest-rank percentile: an actual value of the corpus.
            let rank = |q: f64| v[((q * v.len() as f64).ceil() as usize).clamp(1, v.len()) - 1];
            Some(Span {
                min: v[0],
                p05: rank(0.05),
                mean: v.iter().sum::<f64>() / v.len() as f64,
                p95: rank(0.95),
                max: v[v.len() - 1],
                defined: v.len(),
            })
        })
        .collect()
}

/// A Markdown report: the span of each attribute and the correlation matrix.
pub fn report(phrases: &[Phrase]) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "Corpus of {} phrases.\n", phrases.len());
    let _ = writeln!(
        s,
        "| attribute | min | 5 % | mean | 95 % | max | defined for |"
    );
    let _ = writeln!(s, "|---|---:|---:|---:|---:|---:|---:|");
    for (a, span) in Attribute::ALL.iter().zip(spans(phrases)) {
        match span {
            Some(sp) => {
                let _ = writeln!(
                    s,
                    "| {} ({}) | {:.2} | {:.2} | {:.2} | {:.2} | {:.2} | {} |",
                    a.label(),
                    a.unit(),
                    sp.min,
                    sp.p05,
                    sp.mean,
                    sp.p95,
                    sp.max,
                    sp.defined
                );
            }
            None => {
                let _ = writeln!(
                    s,
                    "| {} ({}) | – | – | – | – | – | 0 |",
                    a.label(),
                    a.unit()
                );
            }
        }
    }
    for (title, r) in [
        ("Pearson r between attributes", correlations(phrases)),
        (
            "Spearman ρ between attributes (rank order, what the regularizer sees)",
            rank_correlations(phrases),
        ),
    ] {
        let _ = writeln!(s, "\n{title}:\n");
        let header: Vec<&str> = Attribute::ALL.iter().map(|a| a.label()).collect();
        let _ = writeln!(s, "| | {} |", header.join(" | "));
        let _ = writeln!(s, "|---|{}", "---:|".repeat(header.len()));
        for (i, a) in Attribute::ALL.iter().enumerate() {
            let cells: Vec<String> = r[i]
                .iter()
                .map(|v| {
                    if v.is_nan() {
                        "–".to_string()
                    } else {
                        format!("{v:+.2}")
                    }
                })
                .collect();
            let _ = writeln!(s, "| {} | {} |", a.label(), cells.join(" | "));
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pearson_on_a_worked_example() {
        // Perfect linear relations give ±1; a constant sample is undefined.
        assert!((pearson(&[1.0, 2.0, 3.0], &[2.0, 4.0, 6.0]).unwrap() - 1.0).abs() < 1e-12);
        assert!((pearson(&[1.0, 2.0, 3.0], &[3.0, 2.0, 1.0]).unwrap() + 1.0).abs() < 1e-12);
        assert_eq!(pearson(&[1.0, 1.0], &[1.0, 2.0]), None);
        // x = 1..5, y = 2,4,5,4,5: Sxy = 6, Sxx = 10, Syy = 6, r = 6/sqrt(60).
        let r = pearson(&[1.0, 2.0, 3.0, 4.0, 5.0], &[2.0, 4.0, 5.0, 4.0, 5.0]).unwrap();
        assert!((r - 6.0 / 60f64.sqrt()).abs() < 1e-12);
    }

    #[test]
    fn spearman_uses_average_ranks_for_ties() {
        assert_eq!(ranks(&[10.0, 20.0, 20.0, 5.0]), vec![2.0, 3.5, 3.5, 1.0]);
        // Any monotone relation has ρ = 1, even a curved one.
        let x = [1.0, 2.0, 3.0, 4.0];
        let y = [1.0, 8.0, 27.0, 64.0];
        assert!((spearman(&x, &y).unwrap() - 1.0).abs() < 1e-12);
    }
}
