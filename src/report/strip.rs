//! The interval strip: a few monospace lines that put the CV interval, the test interval and the
//! claim on one axis, so a reader sees at a glance whether they agree.

use super::format;
use super::view::EstimateView;
use crate::manifest::Metric;

/// Width of the drawn axis in characters.
const WIDTH: usize = 41;

/// Draws the strip; empty when there is nothing with an interval to draw. `adjusted` is the CV
/// interval after the selection-optimism adjustment, when that rule produced one.
pub fn draw(
    metric: Metric,
    cv: Option<&EstimateView>,
    adjusted: Option<&EstimateView>,
    test: Option<&EstimateView>,
    claim: f64,
) -> Vec<String> {
    let rows: Vec<(&str, &EstimateView)> = [("CV", cv), ("CV adj", adjusted), ("test", test)]
        .into_iter()
        .filter_map(|(label, e)| e.map(|e| (label, e)))
        .collect();
    let mut points: Vec<f64> = vec![claim];
    for (_, e) in &rows {
        points.push(e.value);
        points.extend(e.lower);
        points.extend(e.upper);
    }
    if rows.iter().all(|(_, e)| e.lower.is_none()) {
        return Vec::new();
    }
    let (min, max) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        });
    let pad = ((max - min) * 0.08).max(0.005);
    let (floor, ceiling) = metric.range();
    let lo = (min - pad).max(floor);
    let hi = (max + pad).min(ceiling);
    let column = |x: f64| -> usize {
        let t = ((x - lo) / (hi - lo)).clamp(0.0, 1.0);
        (t * (WIDTH - 1) as f64).round() as usize
    };
    let mut lines = Vec::with_capacity(rows.len() + 2);
    let left = format::score(lo);
    let right = format::score(hi);
    lines.push(format!(
        "{:7}{left}{}{right}",
        "",
        " ".repeat((WIDTH + 2).saturating_sub(left.len() + right.len()))
    ));
    for (label, e) in &rows {
        let mut cells = [' '; WIDTH];
        let text = match (e.lower, e.upper) {
            (Some(l), Some(u)) => {
                let (a, b) = (column(l), column(u));
                for cell in &mut cells[a..=b] {
                    *cell = '=';
                }
                cells[a] = '[';
                cells[b] = ']';
                format!("{} {}", format::score(e.value), format::interval(l, u))
            }
            _ => format!("{} (no interval)", format::score(e.value)),
        };
        cells[column(e.value)] = 'o';
        lines.push(format!(
            "{label:<6}|{}|  {text}",
            cells.iter().collect::<String>()
        ));
    }
    let mut cells = [' '; WIDTH];
    cells[column(claim)] = '^';
    lines.push(format!(
        "{:<6}|{}|  {}",
        "claim",
        cells.iter().collect::<String>(),
        format::score(claim)
    ));
    lines
}

/// Width of the longest histogram bar in characters.
const BAR: usize = 30;

/// A text histogram of the trials' mean CV scores, marking the bin of the best one (the
/// configuration a search over these trials selects).
pub fn histogram(trials: &crate::manifest::trials::TrialSummary) -> Vec<String> {
    let most = trials
        .histogram
        .iter()
        .map(|b| b.count)
        .max()
        .unwrap_or(0)
        .max(1);
    let best = trials.bias.naive_best;
    let last = trials.histogram.len().saturating_sub(1);
    trials
        .histogram
        .iter()
        .enumerate()
        .map(|(i, b)| {
            let bar = "#".repeat(((b.count * BAR as u64).div_ceil(most)) as usize);
            let selected = best >= b.lower && (best < b.upper || (i == last && best <= b.upper));
            format!(
                "{} to {} {:>7} {bar}{}",
                format::score(b.lower),
                format::score(b.upper),
                b.count,
                if selected { "  <- best (selected)" } else { "" }
            )
        })
        .collect()
}
