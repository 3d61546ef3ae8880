//! Validation fold size: every fold has enough rows (and rows per class) to measure anything.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Quantity, Severity};
use crate::stats;

rule_settings! {
    /// Settings of the fold-size rule.
    severity = Severity::Error;
    /// Fewest rows a validation fold may hold.
    min_rows: u64 = 30, looser: Smaller,
    /// Fewest rows of any one class a validation fold may hold (when class counts are given).
    min_class_rows: u64 = 5, looser: Smaller,
    /// Margin of error the report states the needed rows for (Cochran's formula).
    margin: f64 = 0.05, looser: Any,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "fold_size",
    name: "Validation fold size",
    explanation: "Checks that every validation fold of the selected configuration holds at least \
`min_rows` rows and, when per-class counts are given, at least `min_class_rows` rows of every \
class. A fold of n rows measures an accuracy p with standard error √(p(1−p)/n): with 4 rows one \
misclassified row moves the fold score by 0.25, and a best-of-many search will find \
configurations that are lucky on such folds. The finding states the standard error of the \
smallest fold at the CV estimate and the rows a fold would need for a margin of error E at the \
policy's confidence by Cochran's formula n = z²·p(1−p)/E² (Cochran 1977, Sampling Techniques, \
ch. 4), both at the CV estimate and at the worst case p = 0.5. At the boundary (every fold \
perfect, or every row wrong) p̂(1−p̂) is 0 and would report an exact fold needing no rows, so \
both use the Agresti–Coull (1998) centre p̃ = (x + z²/2)/(n + z²) of the pooled CV count x of n \
rows instead of p̂, and the fold's standard error is √(p̃(1−p̃)/(m + z²)) for its m rows. Rows \
equal to the minimum pass.",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    let mut out = Vec::new();
    if raw.min_rows == Some(0) {
        out.push(("min_rows".into(), "expected at least 1 row, found 0".into()));
    }
    if let Some(m) = raw.margin
        && !(m > 0.0 && m < 1.0)
    {
        out.push((
            "margin".into(),
            format!("expected a number between 0 and 1, found {m}"),
        ));
    }
    out
}

fn check(subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    let settings = &settings.fold_size;
    let Some(search) = &subject.model.search else {
        return Outcome::inconclusive(
            "The manifest has no cross-validation folds, so their size cannot be checked.",
        );
    };
    let folds = &search.cv.folds;
    let smallest = folds.iter().map(|f| f.rows).min().unwrap_or(0);
    let small_folds = folds.iter().filter(|f| f.rows < settings.min_rows).count() as u64;
    let mut evidence = vec![
        Evidence::count("smallest_fold", "Rows in the smallest fold", smallest),
        Evidence::count("min_rows", "Required rows per fold", settings.min_rows),
        Evidence::count("small_folds", "Folds below the minimum", small_folds),
        Evidence::count("folds", "Folds", folds.len() as u64),
    ];
    // A class absent from a fold's counts has no rows in that fold: writers often omit zero
    // counts, and skipping the class would let a fold without any of it pass.
    let classes: std::collections::BTreeSet<&str> = folds
        .iter()
        .filter_map(|f| f.class_rows.as_ref())
        .flat_map(|c| c.keys())
        .chain(
            subject
                .model
                .data
                .class_counts
                .iter()
                .flat_map(|c| c.train.keys()),
        )
        .map(String::as_str)
        .collect();
    let smallest_class = folds
        .iter()
        .filter_map(|f| f.class_rows.as_ref())
        .flat_map(|c| classes.iter().map(|k| c.get(*k).copied().unwrap_or(0)))
        .min();
    if let Some(rows) = smallest_class {
        evidence.push(Evidence::count(
            "smallest_class",
            "Rows of the rarest class in any fold",
            rows,
        ));
        evidence.push(Evidence::count(
            "min_class_rows",
            "Required rows per class",
            settings.min_class_rows,
        ));
    }
    evidence.push(Evidence::number(
        "margin",
        "Margin of error",
        settings.margin,
        Quantity::Score,
    ));
    if let Ok(rows) = stats::cochran_rows_ceil(0.5, settings.margin, ctx.intervals.confidence) {
        evidence.push(Evidence::count(
            "rows_needed_worst",
            "Rows for the margin at p = 0.5",
            rows,
        ));
    }
    if let (true, Some(cv)) = (subject.model.metric.is_proportion(), &subject.cv) {
        // At the Agresti–Coull centre p̃ of the pooled CV count, not at p̂: at p̂ = 0 or 1 the
        // plug-in p̂(1 − p̂) is 0, which would report a perfect fold as exact and needing no rows.
        let confidence = ctx.intervals.confidence;
        let pooled = cv.successes.unwrap_or(cv.value * cv.rows as f64);
        if let (Ok(se_pooled), Ok(z)) = (
            stats::agresti_coull_std_error(pooled, cv.rows, confidence),
            stats::z_two_sided(confidence),
        ) {
            let n_tilde = cv.rows as f64 + z * z;
            let p_tilde = (pooled + 0.5 * z * z) / n_tilde;
            // Same p̃, the smallest fold's rows: √(p̃(1 − p̃)/(m + z²)).
            let fold_se = se_pooled * (n_tilde / (smallest as f64 + z * z)).sqrt();
            evidence.push(Evidence::number(
                "fold_se",
                "Standard error of the smallest fold",
                fold_se,
                Quantity::Score,
            ));
            evidence.push(Evidence::number(
                "p_tilde",
                "CV estimate, Agresti–Coull centre",
                p_tilde,
                Quantity::Score,
            ));
            if let Ok(rows) = stats::cochran_rows_ceil(p_tilde, settings.margin, confidence) {
                evidence.push(Evidence::count(
                    "rows_needed",
                    "Rows for the margin at the CV estimate",
                    rows,
                ));
            }
        }
    }
    let class_ok = smallest_class.is_none_or(|r| r >= settings.min_class_rows);
    let rows_ok = small_folds == 0;
    match (rows_ok, class_ok) {
        (true, true) => Outcome::pass(
            "Every one of the {folds} folds holds at least {min_rows} rows (smallest: \
             {smallest_fold}).",
            evidence,
        ),
        (false, _) => Outcome::fail(
            "{small_folds} of {folds} folds hold fewer than {min_rows} rows (smallest: \
             {smallest_fold}); a margin of ±{margin} needs about {rows_needed_worst} rows.",
            evidence,
        ),
        (true, false) => Outcome::fail(
            "A fold holds only {smallest_class} rows of its rarest class, fewer than \
             {min_class_rows}.",
            evidence,
        ),
    }
}
