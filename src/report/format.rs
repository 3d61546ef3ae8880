//! Number formatting for reports: the one place that decides how many digits a reader sees.

use crate::finding::{EvidenceValue, Quantity};

/// A score with four decimals, enough to show a one-row change on 10,000 rows.
pub fn score(value: f64) -> String {
    if value.is_infinite() {
        return if value > 0.0 {
            "∞".into()
        } else {
            "−∞".into()
        };
    }
    let s = format!("{value:.4}");
    if s == "-0.0000" { "0.0000".into() } else { s }
}

/// A p-value or probability: three significant digits, with a floor for tiny values.
pub fn probability(value: f64) -> String {
    if value < 1e-4 {
        "< 0.0001".into()
    } else if value >= 0.1 {
        format!("{value:.3}")
    } else {
        let digits = (-value.log10()).ceil() as usize + 2;
        format!("{value:.digits$}")
    }
}

/// A count of rows or evaluations.
pub fn count(value: f64) -> String {
    format!("{value:.0}")
}

/// A confidence level as a percentage.
pub fn confidence(value: f64) -> String {
    let text = format!("{:.2}", value * 100.0);
    format!("{}%", text.trim_end_matches('0').trim_end_matches('.'))
}

/// An interval as `[lower, upper]`.
pub fn interval(lower: f64, upper: f64) -> String {
    format!("[{}, {}]", score(lower), score(upper))
}

/// An evidence value as text.
pub fn evidence(value: &EvidenceValue) -> String {
    match value {
        EvidenceValue::Number { value, quantity } => number(*value, *quantity),
        EvidenceValue::Interval { lower, upper, .. } => interval(*lower, *upper),
        EvidenceValue::Text { value } => value.clone(),
    }
}

fn number(value: f64, quantity: Quantity) -> String {
    match quantity {
        Quantity::Score => score(value),
        Quantity::Probability => probability(value),
        Quantity::Count => count(value),
        Quantity::Confidence => confidence(value),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formats_are_stable() {
        assert_eq!(score(0.80), "0.8000");
        assert_eq!(score(-0.0), "0.0000");
        assert_eq!(probability(0.0080450814), "0.00805");
        assert_eq!(probability(0.092256036), "0.0923");
        assert_eq!(probability(0.5), "0.500");
        assert_eq!(probability(3e-5), "< 0.0001");
        assert_eq!(confidence(0.95), "95%");
        assert_eq!(confidence(0.995), "99.5%");
        assert_eq!(interval(0.5, 0.75), "[0.5000, 0.7500]");
    }
}
