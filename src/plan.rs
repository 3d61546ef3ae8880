//! `vetscore plan`: how many rows a test split needs, and how many times it can be looked at,
//! for a stated margin of error. Useful when writing a policy. Pure arithmetic on the stats
//! module; the app prints the result.

use serde::Serialize;

use crate::stats::{self, StatsError};

/// The questions asked.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlanInput {
    pub rows: Option<u64>,
    pub margin: Option<f64>,
    pub looks: u64,
    pub confidence: f64,
}

/// The answers, each with the method that gave it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Plan {
    pub confidence: f64,
    pub looks: u64,
    /// For the given rows: the margin of error of an accuracy near 0.5 (the widest case).
    pub rows: Option<u64>,
    pub margin_normal: Option<f64>,
    /// Hoeffding (1963) margin with a union bound over `looks`: holds for any distribution.
    pub margin_hoeffding: Option<f64>,
    pub margin_bonferroni: Option<f64>,
    /// For the given margin: rows needed, by Cochran (1977) and by Hoeffding over `looks`.
    pub margin: Option<f64>,
    pub rows_cochran: Option<u64>,
    pub rows_hoeffding: Option<u64>,
    /// For the given rows and margin: how many looks keep the margin.
    pub looks_bonferroni: Option<u64>,
    pub looks_hoeffding: Option<u64>,
    /// Whether a looks answer stopped at the most looks searched ([`MAX_LOOKS`]): the split
    /// affords at least that many.
    pub looks_capped: bool,
}

/// Most looks searched for; an answer that reaches it is reported as "at least" this number
/// (`looks_capped`).
pub const MAX_LOOKS: u64 = 1_000_000_000;

/// Answers what the input asks.
pub fn plan(input: PlanInput) -> Result<Plan, StatsError> {
    let alpha = 1.0 - input.confidence;
    let z = stats::z_two_sided(input.confidence)?;
    let mut plan = Plan {
        confidence: input.confidence,
        looks: input.looks,
        rows: input.rows,
        margin_normal: None,
        margin_hoeffding: None,
        margin_bonferroni: None,
        margin: input.margin,
        rows_cochran: None,
        rows_hoeffding: None,
        looks_bonferroni: None,
        looks_hoeffding: None,
        looks_capped: false,
    };
    if let Some(n) = input.rows {
        plan.margin_normal = Some(z * (0.25 / n as f64).sqrt());
        plan.margin_hoeffding = Some(stats::hoeffding_margin(n, alpha, input.looks)?);
        plan.margin_bonferroni = Some(bonferroni_margin(n, input.confidence, input.looks)?);
    }
    if let Some(e) = input.margin {
        plan.rows_cochran = Some(stats::cochran_rows_ceil(0.5, e, input.confidence)?);
        plan.rows_hoeffding = Some(stats::hoeffding_rows_ceil(e, alpha, input.looks)?);
        if let Some(n) = input.rows {
            plan.looks_bonferroni = Some(most_looks(|k| {
                Ok(bonferroni_margin(n, input.confidence, k)? <= e)
            })?);
            plan.looks_hoeffding = Some(most_looks(|k| {
                Ok(stats::hoeffding_margin(n, alpha, k)? <= e)
            })?);
            plan.looks_capped =
                [plan.looks_bonferroni, plan.looks_hoeffding].contains(&Some(MAX_LOOKS));
        }
    }
    Ok(plan)
}

/// Normal margin at p = 0.5 with the confidence Bonferroni-adjusted for `looks`: z at α/k,
/// taken from α/k itself so that 1 − α/k never rounds to 1 however many looks.
fn bonferroni_margin(rows: u64, confidence: f64, looks: u64) -> Result<f64, StatsError> {
    let alpha = (1.0 - confidence) / looks as f64;
    Ok(stats::z_two_sided_alpha(alpha)? * (0.25 / rows as f64).sqrt())
}

/// The largest k in [0, MAX_LOOKS] with `fits(k)`, for a `fits` that holds up to some k and not
/// after (margins grow with the number of looks). 0 when even one look does not fit.
fn most_looks(fits: impl Fn(u64) -> Result<bool, StatsError>) -> Result<u64, StatsError> {
    if !fits(1)? {
        return Ok(0);
    }
    let (mut lo, mut hi) = (1, 2);
    while hi < MAX_LOOKS && fits(hi)? {
        lo = hi;
        hi = (hi * 2).min(MAX_LOOKS);
    }
    if hi == MAX_LOOKS && fits(hi)? {
        return Ok(MAX_LOOKS);
    }
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if fits(mid)? {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Ok(lo)
}
