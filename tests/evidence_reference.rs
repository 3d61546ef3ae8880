//! Reference tests for the per-example evidence in `vetscore::stats`: metrics recomputed from
//! predictions, DeLong's AUC variance, McNemar, paired and corrected t-tests, and the bootstraps.
//!
//! Expected values come from outside the code, never from its own output:
//! - `tests/reference/evidence_values.json`, written by `tests/reference/generate_evidence.py`
//!   with scikit-learn 1.9.1, statsmodels 0.15.0, scipy 1.17.1 and numpy 2.4.6 (versions stored
//!   in the file and checked below); each assertion names the library function;
//! - published worked examples (Agresti 2002; Hanley & McNeil 1982), cited beside the check and
//!   marked "from memory" where recalled;
//! - a direct O(m·n) implementation of DeLong's structural components written in this file, for
//!   the fast midrank algorithm;
//! - coverage of the bootstraps by seeded simulation against a known true value.
#![allow(clippy::unwrap_used)]

use std::sync::OnceLock;

use serde_json::Value;
use vetscore::stats::{
    ConfusionMatrix, DEFAULT_RESAMPLES, F1Average, LogLoss, MCNEMAR_EXACT_BELOW, PairedT,
    RegressionErrors, RegressionStatistic, bootstrap_confusion, bootstrap_rows,
    corrected_resampled_t, mcnemar_auto, mcnemar_chi2, mcnemar_exact, paired_accuracy_difference,
    roc_auc_delong, roc_auc_delong_paired,
};

fn reference() -> &'static Value {
    static DATA: OnceLock<Value> = OnceLock::new();
    DATA.get_or_init(|| {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/evidence_values.json"
        );
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
    })
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array().unwrap().iter().map(num).collect()
}

fn indices(v: &Value) -> Vec<usize> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap() as usize)
        .collect()
}

fn bools(v: &Value) -> Vec<bool> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_bool().unwrap())
        .collect()
}

/// |actual − expected| ≤ tol·max(1, |expected|): relative for large values, absolute near 0.
#[track_caller]
fn close(actual: f64, expected: f64, tol: f64, what: &str) {
    let bound = tol * expected.abs().max(1.0);
    assert!(
        (actual - expected).abs() <= bound,
        "{what}: got {actual}, expected {expected} (tolerance {bound})"
    );
}

/// Relative comparison for p-values and other small positive numbers.
#[track_caller]
fn close_rel(actual: f64, expected: f64, tol: f64, what: &str) {
    assert!(
        (actual - expected).abs() <= tol * expected.abs(),
        "{what}: got {actual}, expected {expected} (relative tolerance {tol})"
    );
}

#[test]
fn reference_file_has_the_pinned_versions() {
    let v = &reference()["versions"];
    assert_eq!(v["scikit-learn"], "1.9.1");
    assert_eq!(v["statsmodels"], "0.15.0");
    assert_eq!(v["scipy"], "1.17.1");
    assert_eq!(v["numpy"], "2.4.6");
}

// ---------------------------------------------------------------------------------------------
// Metrics against scikit-learn 1.9.1
// ---------------------------------------------------------------------------------------------

#[test]
fn binary_metrics_match_sklearn() {
    for case in reference()["binary"].as_array().unwrap() {
        let labels = bools(&case["labels"]);
        let predicted = indices(&case["pred_a"]);
        let mut m = ConfusionMatrix::new(2).unwrap();
        for (&y, &p) in labels.iter().zip(&predicted) {
            m.push(usize::from(y), p).unwrap();
        }
        let name = case["name"].as_str().unwrap();
        // sklearn.metrics.accuracy_score / balanced_accuracy_score / f1_score.
        close(m.accuracy().unwrap(), num(&case["accuracy"]), 1e-12, name);
        close(
            m.balanced_accuracy().unwrap(),
            num(&case["balanced_accuracy"]),
            1e-12,
            name,
        );
        let f1 = |a| m.f1(a).unwrap();
        close(
            f1(F1Average::Binary { positive: 1 }),
            num(&case["f1_binary"]),
            1e-12,
            name,
        );
        close(
            f1(F1Average::Binary { positive: 0 }),
            num(&case["f1_binary_neg"]),
            1e-12,
            name,
        );
        close(f1(F1Average::Macro), num(&case["f1_macro"]), 1e-12, name);
        close(f1(F1Average::Micro), num(&case["f1_micro"]), 1e-12, name);

        // sklearn.metrics.log_loss on P(positive), with its [eps, 1 − eps] clipping (the cases
        // include exact 0 and 1 probabilities); interval: scipy ttest_1samp on per-row losses.
        let scores = floats(&case["scores_a"]);
        let mut loss = LogLoss::new();
        for (&p, &y) in scores.iter().zip(&labels) {
            loss.push_binary(p, y).unwrap();
        }
        close(loss.value().unwrap(), num(&case["log_loss_a"]), 1e-10, name);
        let ci = loss.interval(0.95).unwrap();
        let expected = floats(&case["log_loss_a_interval"]);
        close(ci.lower, expected[0], 1e-9, name);
        close(ci.upper, expected[1], 1e-9, name);

        // sklearn.metrics.roc_auc_score for both models (ties in the rounded scores).
        let scores_b = floats(&case["scores_b"]);
        let a = roc_auc_delong(&scores, &labels, 0.95).unwrap();
        close(a.auc, num(&case["roc_auc_a"]), 1e-12, name);
        let b = roc_auc_delong(&scores_b, &labels, 0.95).unwrap();
        close(b.auc, num(&case["roc_auc_b"]), 1e-12, name);
        let positives = labels.iter().filter(|&&y| y).count() as u64;
        assert_eq!(
            (a.positives, a.negatives),
            (positives, labels.len() as u64 - positives)
        );
    }
}

#[test]
fn paired_tests_on_the_binary_cases_match_statsmodels_and_scipy() {
    let eps = f64::EPSILON;
    for case in reference()["binary"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let labels = bools(&case["labels"]);
        let (sa, sb) = (floats(&case["scores_a"]), floats(&case["scores_b"]));
        // Discordant counts from the same 0.5 threshold the generator used.
        let (mut b, mut c) = (0u64, 0u64);
        let mut paired = PairedT::new();
        for ((&pa, &pb), &y) in sa.iter().zip(&sb).zip(&labels) {
            let right_a = (pa >= 0.5) == y;
            let right_b = (pb >= 0.5) == y;
            b += u64::from(right_a && !right_b);
            c += u64::from(!right_a && right_b);
            let row_loss = |p: f64| -(if y { p } else { 1.0 - p }).clamp(eps, 1.0 - eps).ln();
            paired.push(row_loss(pa) - row_loss(pb));
        }
        assert_eq!(
            (b, c),
            (
                case["mcnemar_b"].as_u64().unwrap(),
                case["mcnemar_c"].as_u64().unwrap()
            )
        );
        // scipy.stats.ttest_rel(loss_a, loss_b) and its confidence_interval(0.95).
        let r = paired.finish(0.95).unwrap();
        let t = &case["ttest_rel"];
        close(r.t, num(&t["t"]), 1e-9, name);
        close_rel(r.p_value, num(&t["p"]), 1e-9, name);
        assert_eq!(r.df, num(&t["df"]));
        let ci = floats(&t["ci95"]);
        close(r.interval.lower, ci[0], 1e-9, name);
        close(r.interval.upper, ci[1], 1e-9, name);
    }
}

#[test]
fn multiclass_metrics_match_sklearn() {
    let case = &reference()["multiclass"];
    let k = case["classes"].as_u64().unwrap() as usize;
    let mut m = ConfusionMatrix::new(k).unwrap();
    for (&a, &p) in indices(&case["actual"])
        .iter()
        .zip(&indices(&case["predicted"]))
    {
        m.push(a, p).unwrap();
    }
    // sklearn accuracy_score, balanced_accuracy_score (class 4 only predicted, so left out,
    // as sklearn does with its "y_pred contains classes not in y_true" warning), f1_score.
    close(
        m.accuracy().unwrap(),
        num(&case["accuracy"]),
        1e-12,
        "accuracy",
    );
    close(
        m.balanced_accuracy().unwrap(),
        num(&case["balanced_accuracy"]),
        1e-12,
        "balanced",
    );
    close(
        m.f1(F1Average::Macro).unwrap(),
        num(&case["f1_macro"]),
        1e-12,
        "macro",
    );
    close(
        m.f1(F1Average::Micro).unwrap(),
        num(&case["f1_micro"]),
        1e-12,
        "micro",
    );
    // f1_score(average=None, zero_division=0) per class = one-vs-rest Binary.
    for (class, expected) in floats(&case["f1_per_class"]).into_iter().enumerate() {
        let got = m.f1(F1Average::Binary { positive: class }).unwrap();
        close(got, expected, 1e-12, "per-class f1");
    }
    // The same matrix from its counts gives the same values.
    let again = ConfusionMatrix::from_counts(k, m.counts().to_vec()).unwrap();
    assert_eq!(again, m);
    // sklearn log_loss(y, proba, labels=0..5) from each row's probability of its true class.
    let mut loss = LogLoss::new();
    for p in floats(&case["prob_of_true_class"]) {
        loss.push(p).unwrap();
    }
    close(
        loss.value().unwrap(),
        num(&case["log_loss"]),
        1e-10,
        "log loss",
    );
}

#[test]
fn regression_metrics_match_sklearn() {
    let case = &reference()["regression"];
    let mut r = RegressionErrors::new();
    for (&y, &p) in floats(&case["target"])
        .iter()
        .zip(&floats(&case["prediction"]))
    {
        r.push(y, p).unwrap();
    }
    assert_eq!(r.n(), 200);
    // sklearn mean_squared_error (and its square root), mean_absolute_error, r2_score.
    close(r.rmse().unwrap(), num(&case["rmse"]), 1e-10, "rmse");
    close(r.mse().unwrap(), num(&case["mse"]), 1e-10, "mse");
    close(r.mae().unwrap(), num(&case["mae"]), 1e-10, "mae");
    close(r.r2().unwrap(), num(&case["r2"]), 1e-10, "r2");
    // scipy.stats.ttest_1samp(|e|).confidence_interval(0.95) and the same on e².
    let mae = r.mean_abs_error_interval(0.95).unwrap();
    let expected = floats(&case["mae_interval"]);
    close(mae.lower, expected[0], 1e-9, "mae lower");
    close(mae.upper, expected[1], 1e-9, "mae upper");
    let mse = r.mse_interval(0.95).unwrap();
    let expected = floats(&case["mse_interval"]);
    close(mse.lower, expected[0], 1e-9, "mse lower");
    close(mse.upper, expected[1], 1e-9, "mse upper");
    // r2_score with constant targets (force_finite=True): perfect → 1.0, imperfect → 0.0.
    let constant = &case["constant_target_r2"];
    let r2_of = |pred: [f64; 3]| {
        let mut r = RegressionErrors::new();
        for p in pred {
            r.push(2.0, p).unwrap();
        }
        r.r2().unwrap()
    };
    assert_eq!(r2_of([2.0, 2.0, 2.0]), num(&constant["perfect"]));
    assert_eq!(r2_of([2.0, 2.5, 2.0]), num(&constant["imperfect"]));
}

// ---------------------------------------------------------------------------------------------
// McNemar, paired accuracy difference, t-tests
// ---------------------------------------------------------------------------------------------

#[test]
fn mcnemar_matches_statsmodels() {
    // statsmodels.stats.contingency_tables.mcnemar(exact=True), (exact=False, correction=True)
    // and (exact=False, correction=False).
    for case in reference()["mcnemar"].as_array().unwrap() {
        let (b, c) = (case["b"].as_u64().unwrap(), case["c"].as_u64().unwrap());
        let what = format!("b={b} c={c}");
        let exact = mcnemar_exact(b, c).unwrap();
        assert!(exact.exact && exact.statistic.is_none());
        close_rel(exact.p_value, num(&case["exact_p"]), 1e-9, &what);
        let cc = mcnemar_chi2(b, c, true).unwrap();
        close(cc.statistic.unwrap(), num(&case["chi2_cc"]), 1e-12, &what);
        close_rel(cc.p_value, num(&case["chi2_cc_p"]), 1e-9, &what);
        let plain = mcnemar_chi2(b, c, false).unwrap();
        close(plain.statistic.unwrap(), num(&case["chi2"]), 1e-12, &what);
        close_rel(plain.p_value, num(&case["chi2_p"]), 1e-9, &what);
        assert_eq!((plain.b, plain.c), (b, c));
        let auto = mcnemar_auto(b, c, MCNEMAR_EXACT_BELOW).unwrap();
        assert_eq!(auto.exact, b + c < 25);
    }
}

#[test]
fn mcnemar_agrees_with_agresti_worked_example() {
    // Agresti, Categorical Data Analysis, 2nd ed. (2002), §10.1: presidential approval, 150
    // approve→disapprove and 86 disapprove→approve of 1600; z = −4.17, z² = 17.36, P < 0.0001
    // (from memory).
    let m = mcnemar_chi2(150, 86, false).unwrap();
    assert!((m.statistic.unwrap() - 17.36).abs() < 0.005);
    assert!((m.statistic.unwrap().sqrt() - 4.17).abs() < 0.005);
    assert!(m.p_value < 1e-4);
    // Same section: the Wald 95% interval for the change in approval, 0.040 ± 1.96 × 0.0095 =
    // (0.021, 0.059) (from memory). The Agresti & Min (2005) adjustment moves each bound by
    // under 2e-4 at n = 1600, so it agrees to the three decimals published.
    let ci = paired_accuracy_difference(150, 86, 1600, 0.95).unwrap();
    assert!((ci.lower - 0.021).abs() < 0.0005, "{ci:?}");
    assert!((ci.upper - 0.059).abs() < 0.0005, "{ci:?}");
}

#[test]
fn paired_accuracy_difference_sanity() {
    // No discordant rows: the interval still has width (Agresti–Min adds ½ per cell) and is
    // centred on 0; symmetry b ↔ c flips the interval (common practice, no source).
    let ci = paired_accuracy_difference(0, 0, 50, 0.95).unwrap();
    assert!(ci.lower < 0.0 && ci.upper > 0.0);
    assert!((ci.lower + ci.upper).abs() < 1e-15);
    let ab = paired_accuracy_difference(12, 4, 80, 0.9).unwrap();
    let ba = paired_accuracy_difference(4, 12, 80, 0.9).unwrap();
    assert!((ab.lower + ba.upper).abs() < 1e-15 && (ab.upper + ba.lower).abs() < 1e-15);
    // All rows discordant one way: clipped at 1.
    let ci = paired_accuracy_difference(10, 0, 10, 0.95).unwrap();
    assert!(ci.upper <= 1.0 && ci.lower > 0.0);
}

#[test]
fn nadeau_bengio_matches_scipy() {
    // The 10-fold example, n₂/n₁ = 1/9; corrected t, p and interval with scipy.stats.t, and the
    // uncorrected one from scipy.stats.ttest_1samp (ratio 0 and the streaming PairedT).
    let nb = &reference()["nadeau_bengio"];
    let d = floats(&nb["diffs"]);
    let r = corrected_resampled_t(&d, num(&nb["ratio"]), 0.95).unwrap();
    close(r.mean, num(&nb["mean"]), 1e-12, "mean");
    close(r.std_error, num(&nb["std_error"]), 1e-10, "se");
    close(r.t, num(&nb["t"]), 1e-9, "t");
    close_rel(r.p_value, num(&nb["p"]), 1e-9, "p");
    assert_eq!(r.df, 9.0);
    let ci = floats(&nb["ci95"]);
    close(r.interval.lower, ci[0], 1e-9, "lower");
    close(r.interval.upper, ci[1], 1e-9, "upper");
    let plain = corrected_resampled_t(&d, 0.0, 0.95).unwrap();
    close(plain.t, num(&nb["plain_t"]), 1e-9, "plain t");
    close_rel(plain.p_value, num(&nb["plain_p"]), 1e-9, "plain p");
    let mut streaming = PairedT::new();
    d.iter().for_each(|&x| streaming.push(x));
    let s = streaming.finish(0.95).unwrap();
    close(s.t, num(&nb["plain_t"]), 1e-9, "streaming t");
    close_rel(s.p_value, num(&nb["plain_p"]), 1e-9, "streaming p");
}

// ---------------------------------------------------------------------------------------------
// DeLong against a direct implementation of the structural components
// ---------------------------------------------------------------------------------------------

/// ψ(X, Y) of DeLong, DeLong & Clarke-Pearson (1988): 1 if X > Y, ½ if equal, 0 otherwise.
fn psi(x: f64, y: f64) -> f64 {
    if x > y {
        1.0
    } else if x == y {
        0.5
    } else {
        0.0
    }
}

/// Direct O(m·n) structural components (DeLong et al. 1988, §2): V₁₀(Xᵢ) = mean over negatives
/// of ψ(Xᵢ, Yⱼ), V₀₁(Yⱼ) = mean over positives of ψ(Xᵢ, Yⱼ).
fn direct_components(scores: &[f64], labels: &[bool]) -> (Vec<f64>, Vec<f64>) {
    let pos: Vec<f64> = scores
        .iter()
        .zip(labels)
        .filter(|p| *p.1)
        .map(|p| *p.0)
        .collect();
    let neg: Vec<f64> = scores
        .iter()
        .zip(labels)
        .filter(|p| !*p.1)
        .map(|p| *p.0)
        .collect();
    let v10 = pos
        .iter()
        .map(|&x| neg.iter().map(|&y| psi(x, y)).sum::<f64>() / neg.len() as f64)
        .collect();
    let v01 = neg
        .iter()
        .map(|&y| pos.iter().map(|&x| psi(x, y)).sum::<f64>() / pos.len() as f64)
        .collect();
    (v10, v01)
}

fn mean(v: &[f64]) -> f64 {
    v.iter().sum::<f64>() / v.len() as f64
}

/// Sample covariance with divisor len − 1.
fn cov(a: &[f64], b: &[f64]) -> f64 {
    let (ma, mb) = (mean(a), mean(b));
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - ma) * (y - mb))
        .sum::<f64>()
        / (a.len() as f64 - 1.0)
}

/// (AUC, DeLong variance) of one model, and the covariance S₁₀/m + S₀₁/n between two.
fn direct_delong(a: &[f64], b: &[f64], labels: &[bool]) -> (f64, f64, f64) {
    let (a10, a01) = direct_components(a, labels);
    let (b10, b01) = direct_components(b, labels);
    let (m, n) = (a10.len() as f64, a01.len() as f64);
    let var_a = cov(&a10, &a10) / m + cov(&a01, &a01) / n;
    let cov_ab = cov(&a10, &b10) / m + cov(&a01, &b01) / n;
    (mean(&a10), var_a, cov_ab)
}

/// Small seeded datasets for DeLong, independent of the library's generator: SplitMix64
/// (Steele, Lea & Flood 2014) written out here.
struct TestRng(u64);

impl TestRng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Standard normal by Box–Muller.
    fn normal(&mut self) -> f64 {
        let u = 1.0 - self.next();
        let v = self.next();
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

fn delong_datasets() -> Vec<(Vec<f64>, Vec<f64>, Vec<bool>)> {
    let mut out = Vec::new();
    for case in reference()["binary"].as_array().unwrap() {
        out.push((
            floats(&case["scores_a"]),
            floats(&case["scores_b"]),
            bools(&case["labels"]),
        ));
    }
    let mut rng = TestRng(42);
    // Heavy ties: integer ratings 1..5, correlated between the two models.
    let (mut a, mut b, mut y) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..150 {
        let label = rng.next() < 0.3;
        let shift = if label { 1.0 } else { 0.0 };
        let common = rng.normal();
        a.push((common + shift + 3.0).round().clamp(1.0, 5.0));
        b.push(
            (0.6 * common + 0.8 * rng.normal() + 0.7 * shift + 3.0)
                .round()
                .clamp(1.0, 5.0),
        );
        y.push(label);
    }
    out.push((a, b, y));
    // Continuous scores, unbalanced classes, no ties.
    let (mut a, mut b, mut y) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..90 {
        let label = rng.next() < 0.15;
        let shift = if label { 1.3 } else { 0.0 };
        a.push(rng.normal() + shift);
        b.push(rng.normal() + 0.5 * shift);
        y.push(label);
    }
    out.push((a, b, y));
    out
}

#[test]
fn delong_matches_the_direct_structural_components() {
    for (a, b, y) in delong_datasets() {
        let (auc_a, var_a, cov_ab) = direct_delong(&a, &b, &y);
        let (auc_b, var_b, _) = direct_delong(&b, &a, &y);
        let est = roc_auc_delong(&a, &y, 0.95).unwrap();
        close(est.auc, auc_a, 1e-12, "auc");
        close_rel(est.variance.unwrap(), var_a, 1e-9, "variance");
        let p = roc_auc_delong_paired(&a, &b, &y, 0.95).unwrap();
        close(p.auc_a, auc_a, 1e-12, "paired auc a");
        close(p.auc_b, auc_b, 1e-12, "paired auc b");
        close(p.difference, auc_a - auc_b, 1e-12, "difference");
        let var_diff = var_a + var_b - 2.0 * cov_ab;
        close_rel(p.variance, var_diff, 1e-9, "variance of the difference");
        close(p.z, (auc_a - auc_b) / var_diff.sqrt(), 1e-9, "z");
        // Interval: normal, z = 1.959963985 (scipy norm.ppf(0.975), shared reference table).
        let half = 1.959_963_985 * var_diff.sqrt();
        close(p.interval.lower, auc_a - auc_b - half, 1e-9, "lower");
        close(p.interval.upper, auc_a - auc_b + half, 1e-9, "upper");
        // One model: DeLong's normal interval, widened at each end to the score-type interval
        // (checked against scipy in tests/edge_reference.rs) where that is wider.
        let half = 1.959_963_985 * var_a.sqrt();
        let positives = y.iter().filter(|&&l| l).count() as u64;
        let score =
            vetscore::stats::auc_score_interval(auc_a, positives, y.len() as u64 - positives, 0.95)
                .unwrap();
        close(
            est.interval.lower,
            (auc_a - half).max(0.0).min(score.lower),
            1e-9,
            "auc lower",
        );
        close(
            est.interval.upper,
            (auc_a + half).min(1.0).max(score.upper),
            1e-9,
            "auc upper",
        );
    }
}

#[test]
fn hanley_mcneil_rating_example() {
    // Hanley & McNeil (1982), Radiology 143:29–36, Table 1 (from memory): five-point ratings of
    // 58 normal and 51 abnormal CT images, counts 33/6/6/11/2 and 3/2/2/11/33; AUC 0.893.
    let (normal, abnormal) = ([33, 6, 6, 11, 2], [3, 2, 2, 11, 33]);
    let mut scores = Vec::new();
    let mut labels = Vec::new();
    for (rating, (&n0, &n1)) in normal.iter().zip(&abnormal).enumerate() {
        for (count, label) in [(n0, false), (n1, true)] {
            scores.extend(std::iter::repeat_n(rating as f64 + 1.0, count));
            labels.extend(std::iter::repeat_n(label, count));
        }
    }
    let est = roc_auc_delong(&scores, &labels, 0.95).unwrap();
    assert!((est.auc - 0.893).abs() < 0.0005);
    let (_, var, _) = direct_delong(&scores, &scores, &labels);
    close_rel(est.variance.unwrap(), var, 1e-9, "variance");
}

#[test]
fn delong_degenerate_cases() {
    // Perfect separation: AUC 1, every component 1, DeLong variance 0; the interval keeps the
    // width of the score-type interval (its values: tests/edge_reference.rs).
    let y = [false, false, true, true];
    let e = roc_auc_delong(&[0.1, 0.2, 0.8, 0.9], &y, 0.95).unwrap();
    assert_eq!((e.auc, e.variance), (1.0, Some(0.0)));
    assert_eq!(e.interval.upper, 1.0);
    assert!(e.interval.lower < 0.9);
    // All scores tied: AUC ½ (every pair counts ½).
    let e = roc_auc_delong(&[0.3; 4], &y, 0.95).unwrap();
    assert_eq!(e.auc, 0.5);
    // Same scores for both models: no difference, z = 0, p = 1.
    let s = [0.1, 0.7, 0.4, 0.9];
    let p = roc_auc_delong_paired(&s, &s, &y, 0.95).unwrap();
    assert_eq!((p.difference, p.z, p.p_value), (0.0, 0.0, 1.0));
}

// ---------------------------------------------------------------------------------------------
// Invalid input is an error, never a panic
// ---------------------------------------------------------------------------------------------

#[test]
fn invalid_inputs_are_errors() {
    let y = [true, false, true, false];
    assert!(roc_auc_delong(&[0.1, 0.2, 0.3], &y, 0.95).is_err()); // length
    assert!(roc_auc_delong(&[0.1, f64::NAN, 0.3, 0.4], &y, 0.95).is_err());
    assert!(roc_auc_delong(&[0.1, f64::INFINITY, 0.3, 0.4], &y, 0.95).is_err());
    assert!(roc_auc_delong(&[0.1, 0.2, 0.3, 0.4], &[true; 4], 0.95).is_err()); // no negatives
    assert!(roc_auc_delong(&[0.1, 0.2, 0.3, 0.4], &[false; 4], 0.95).is_err()); // no positives
    assert!(roc_auc_delong(&[], &[], 0.95).is_err());
    assert!(roc_auc_delong(&[0.1, 0.2, 0.3, 0.4], &y, 1.5).is_err());
    let s = [0.1, 0.2, 0.3, 0.4];
    assert!(roc_auc_delong_paired(&s, &s[..3], &y, 0.95).is_err());
    assert!(roc_auc_delong_paired(&s, &[0.1, 0.2, f64::NAN, 0.4], &y, 0.95).is_err());

    let mut m = ConfusionMatrix::new(2).unwrap();
    assert!(m.push(2, 0).is_err());
    assert!(m.accuracy().is_err());
    assert!(ConfusionMatrix::from_counts(3, vec![0; 8]).is_err());

    let mut r = RegressionErrors::new();
    assert!(r.push(f64::NAN, 0.0).is_err());
    assert!(r.mae().is_err());
    let mut l = LogLoss::new();
    assert!(l.push(-0.01).is_err());
    assert!(l.interval(0.95).is_err());

    let mut t = PairedT::new();
    t.push(f64::NAN);
    t.push(0.1);
    t.push(0.2);
    assert!(t.finish(0.95).is_err());
    assert!(corrected_resampled_t(&[], 0.1, 0.95).is_err());

    assert!(paired_accuracy_difference(3, 3, 5, 0.95).is_err());
    assert!(bootstrap_rows(&[], RegressionStatistic::R2, 1000, 0.95, 1).is_err());
}

// ---------------------------------------------------------------------------------------------
// Bootstrap coverage by seeded simulation
// ---------------------------------------------------------------------------------------------
//
// Tolerance: if an interval procedure covers exactly 95%, the number of covering intervals among
// 400 independent datasets is Binomial(400, 0.95), and P(372 ≤ X ≤ 388) = 0.950 (scipy
// binom.cdf(388) − binom.cdf(371)); a procedure at 94% or 96% true coverage still lands there
// with probability 0.83 / 0.88. So the band 93–97% (372–388) accepts a sound procedure and rejects
// one that is off by more than ~2 points; the seeds are fixed, so the outcome is deterministic.

/// Draws `rows` rows from the cell probabilities `probs` (row-major) by inversion of the
/// cumulative sum, with the test's own generator (not the library's sampler).
fn simulate_matrix(
    rng: &mut TestRng,
    probs: &[f64],
    classes: usize,
    rows: usize,
) -> ConfusionMatrix {
    let mut m = ConfusionMatrix::new(classes).unwrap();
    for _ in 0..rows {
        let u = rng.next();
        let mut acc = 0.0;
        let mut cell = probs.len() - 1;
        for (i, p) in probs.iter().enumerate() {
            acc += p;
            if u < acc {
                cell = i;
                break;
            }
        }
        m.push(cell / classes, cell % classes).unwrap();
    }
    m
}

#[test]
fn confusion_bootstrap_covers_f1_and_balanced_accuracy() {
    // Binary table (row = actual): P(TN) = .50, P(FP) = .10, P(FN) = .12, P(TP) = .28.
    // True F1 = 2·.28/(2·.28 + .10 + .12) = .56/.78; true balanced accuracy
    // = (.50/.60 + .28/.40)/2 (hand arithmetic from the table).
    let probs = [0.50, 0.10, 0.12, 0.28];
    let true_f1 = 0.56 / 0.78;
    let true_bal = (0.50 / 0.60 + 0.28 / 0.40) / 2.0;
    let mut rng = TestRng(2026);
    let (mut cover_f1, mut cover_bal) = (0, 0);
    for dataset in 0..400u64 {
        let m = simulate_matrix(&mut rng, &probs, 2, 400);
        let f1 = bootstrap_confusion(
            &m,
            |m| m.f1(F1Average::Binary { positive: 1 }),
            1000,
            0.95,
            dataset,
        )
        .unwrap();
        let bal = bootstrap_confusion(&m, |m| m.balanced_accuracy(), 1000, 0.95, 10_000 + dataset)
            .unwrap();
        cover_f1 += usize::from(f1.contains(true_f1));
        cover_bal += usize::from(bal.contains(true_bal));
    }
    assert!((372..=388).contains(&cover_f1), "F1 covered {cover_f1}/400");
    assert!(
        (372..=388).contains(&cover_bal),
        "balanced accuracy covered {cover_bal}/400"
    );
}

#[test]
fn row_bootstrap_covers_r2() {
    // y = x + ε, x ~ N(0, 1), ε ~ N(0, 0.75²), prediction ŷ = x (the true regression line, not
    // fitted): population R² = 1 − Var ε / Var y = 1 − 0.5625/1.5625 = 0.64 (hand arithmetic).
    let mut rng = TestRng(7);
    let mut covered = 0;
    for dataset in 0..400u64 {
        let rows: Vec<(f64, f64)> = (0..150)
            .map(|_| {
                let x = rng.normal();
                (x + 0.75 * rng.normal(), x)
            })
            .collect();
        let ci = bootstrap_rows(&rows, RegressionStatistic::R2, 400, 0.95, dataset).unwrap();
        covered += usize::from(ci.contains(0.64));
    }
    assert!((372..=388).contains(&covered), "R² covered {covered}/400");
}

#[test]
fn confusion_bootstrap_cost_does_not_depend_on_rows() {
    // Ten million rows, 10,000 resamples: one multinomial draw per resample, so this runs in
    // milliseconds in a release build (no timing asserted). The interval must bracket the
    // observed accuracy 0.9 and be narrow (binomial SE √(.09/1e7) ≈ 9.5e-5, hand arithmetic).
    let m = ConfusionMatrix::from_counts(2, vec![4_500_000, 500_000, 500_000, 4_500_000]).unwrap();
    let ci = bootstrap_confusion(&m, |m| m.accuracy(), 10_000, 0.95, 1).unwrap();
    assert!(ci.lower < 0.9 && 0.9 < ci.upper);
    assert!(ci.width() < 6.0 * 9.5e-5 && ci.width() > 2.0 * 9.5e-5);
    const { assert!(DEFAULT_RESAMPLES >= 1000) };
}
