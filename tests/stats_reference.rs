//! Reference tests for `vetscore::stats`.
//!
//! Two kinds of expected values, never the code's own output:
//! - hand-cited published values (Newcombe 1998a/b, Harter 1961, Cochran 1977, t tables) and hand
//!   arithmetic, written beside each assertion with their source;
//! - library values from `tests/reference/stats_values.json`, written by
//!   `tests/reference/generate.py` with scipy 1.17.1, statsmodels 0.15.0 and numpy 2.4.6 (the
//!   versions are stored in the file and checked below). Each group names the library function.
#![allow(clippy::unwrap_used)]

use std::sync::OnceLock;

use serde_json::Value;
use vetscore::stats::{
    self, Interval, ProportionMethod, SelectionBias, best_of_n_tail, binomial_sf_ge,
    blom_expected_max, ceil_product, cochran_rows, cochran_rows_ceil, expected_max_normal,
    hoeffding_margin, hoeffding_rows, incomplete_beta, mean_t_interval, newcombe_difference,
    normal_sf, proportion_interval, t_quantile, t_sf, two_proportion_z_test, z_two_sided,
};

fn reference() -> &'static Value {
    static DATA: OnceLock<Value> = OnceLock::new();
    DATA.get_or_init(|| {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/stats_values.json"
        );
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
    })
}

fn group(name: &str) -> &'static [Value] {
    reference()[name].as_array().unwrap()
}

/// A JSON number, or the strings "inf" / "-inf" the generator writes for infinities.
fn num(v: &Value) -> f64 {
    match v.as_str() {
        Some("inf") => f64::INFINITY,
        Some("-inf") => f64::NEG_INFINITY,
        _ => v.as_f64().unwrap(),
    }
}

fn count(v: &Value) -> u64 {
    v.as_u64().unwrap()
}

/// |actual − expected| ≤ max(rel·|expected|, abs); equal infinities pass.
#[track_caller]
fn assert_close(actual: f64, expected: f64, rel: f64, abs: f64, what: &str) {
    if actual == expected {
        return;
    }
    let err = (actual - expected).abs();
    assert!(
        err <= (rel * expected.abs()).max(abs),
        "{what}: got {actual:e}, expected {expected:e} (abs err {err:e}, rel {:e})",
        err / expected.abs()
    );
}

/// Relative comparison only (for tail probabilities, which may be tiny but never 0 here).
#[track_caller]
fn assert_rel(actual: f64, expected: f64, rel: f64, what: &str) {
    assert_close(actual, expected, rel, f64::MIN_POSITIVE, what);
}

fn method_of(name: &str) -> ProportionMethod {
    match name {
        "wilson" => ProportionMethod::Wilson,
        "beta" => ProportionMethod::ClopperPearson,
        "agresti_coull" => ProportionMethod::AgrestiCoull,
        "jeffreys" => ProportionMethod::Jeffreys,
        other => panic!("unknown method {other}"),
    }
}

#[test]
fn reference_file_records_pinned_versions() {
    let v = &reference()["versions"];
    assert_eq!(v["scipy"], "1.17.1");
    assert_eq!(v["statsmodels"], "0.15.0");
    assert_eq!(v["numpy"], "2.4.6");
}

// ---------------------------------------------------------------------------------------------
// Single proportions
// ---------------------------------------------------------------------------------------------

/// Newcombe (1998a) Stat. Med. 17:857–872, Table II, 95% limits to 4 decimals (from memory):
/// method 3 (Wilson score) and method 5 (Clopper–Pearson exact).
#[test]
fn newcombe_1998a_single_proportion_examples() {
    #[rustfmt::skip]
    let table: [(u64, u64, [f64; 2], [f64; 2]); 5] = [
        // x, n, Wilson (L, U), Clopper–Pearson (L, U)
        (81, 263, [0.2553, 0.3662], [0.2527, 0.3676]),
        (15, 148, [0.0624, 0.1605], [0.0578, 0.1617]),
        (0, 20, [0.0000, 0.1611], [0.0000, 0.1684]),
        (1, 29, [0.0061, 0.1718], [0.0009, 0.1776]),
        (29, 29, [0.8830, 1.0000], [0.8806, 1.0000]),
    ];
    for (x, n, wilson, exact) in table {
        for (method, expected) in [
            (ProportionMethod::Wilson, wilson),
            (ProportionMethod::ClopperPearson, exact),
        ] {
            let ci = proportion_interval(x, n, 0.95, method).unwrap();
            let what = format!("{x}/{n} {method:?}");
            // Half a unit in the 4th decimal, plus float slack.
            assert_close(ci.lower, expected[0], 0.0, 5.000_1e-5, &what);
            assert_close(ci.upper, expected[1], 0.0, 5.000_1e-5, &what);
        }
    }
}

/// statsmodels 0.15.0 `proportion_confint(x, n, alpha, method)` for wilson / beta / agresti_coull
/// / jeffreys, to 1e-9 relative (1e-12 absolute). Jeffreys boundary bounds are excluded here and
/// tested in `jeffreys_boundary_convention`.
#[test]
fn proportion_intervals_match_statsmodels() {
    for row in group("proportion_confint") {
        let (x, n, conf) = (count(&row["x"]), count(&row["n"]), num(&row["confidence"]));
        for name in ["wilson", "beta", "agresti_coull", "jeffreys"] {
            let ci = proportion_interval(x, n, conf, method_of(name)).unwrap();
            let what = format!("{name} {x}/{n} at {conf}");
            let expected = &row[name];
            if !(name == "jeffreys" && x == 0) {
                assert_close(ci.lower, num(&expected[0]), 1e-9, 1e-12, &what);
            }
            if !(name == "jeffreys" && x == n) {
                assert_close(ci.upper, num(&expected[1]), 1e-9, 1e-12, &what);
            }
            assert!(ci.lower <= x as f64 / n as f64 && x as f64 / n as f64 <= ci.upper);
        }
    }
}

/// Decision: Jeffreys uses the Brown, Cai & DasGupta (2001, Stat. Sci. 16:101–133) boundary
/// modification, L = 0 at x = 0 and U = 1 at x = n. statsmodels 0.15.0 returns the raw Beta
/// quantiles there instead (0/20: L = 2.42e-5, 29/29: U = 0.99998), so those two numbers must
/// differ from ours while the other bound agrees.
#[test]
fn jeffreys_boundary_convention() {
    for row in group("proportion_confint") {
        let (x, n, conf) = (count(&row["x"]), count(&row["n"]), num(&row["confidence"]));
        let raw = &row["jeffreys"];
        let ci = proportion_interval(x, n, conf, ProportionMethod::Jeffreys).unwrap();
        if x == 0 {
            assert_eq!(ci.lower, 0.0);
            assert!(num(&raw[0]) > 0.0, "statsmodels keeps the raw quantile");
        }
        if x == n {
            assert_eq!(ci.upper, 1.0);
            assert!(num(&raw[1]) < 1.0, "statsmodels keeps the raw quantile");
        }
    }
}

/// Clopper–Pearson and Jeffreys bounds for n = 1e4 … 1e7 and x = 0, 1, 2, n/2, n − 1, n against
/// `scipy.stats.beta.ppf` / `beta.isf` (scipy 1.17.1). scipy's own ppf is off by up to ~3e-9
/// relative at shapes near 1e6, so the tolerance is 1e-8 relative. Each of these calls must
/// return promptly: statrs' `Beta::inverse_cdf` hangs on several of them.
#[test]
fn large_n_exact_bounds_match_scipy() {
    for row in group("large_n_bounds") {
        let (x, n, conf) = (count(&row["x"]), count(&row["n"]), num(&row["confidence"]));
        let cp = proportion_interval(x, n, conf, ProportionMethod::ClopperPearson).unwrap();
        let what = format!("Clopper–Pearson {x}/{n}");
        match row["clopper_pearson"][0].as_f64() {
            Some(lo) => assert_rel(cp.lower, lo, 1e-8, &what),
            None => assert_eq!(cp.lower, 0.0),
        }
        match row["clopper_pearson"][1].as_f64() {
            Some(hi) => assert_rel(cp.upper, hi, 1e-8, &what),
            None => assert_eq!(cp.upper, 1.0),
        }
        let j = proportion_interval(x, n, conf, ProportionMethod::Jeffreys).unwrap();
        let what = format!("Jeffreys {x}/{n}");
        if x > 0 {
            assert_rel(j.lower, num(&row["jeffreys"][0]), 1e-8, &what);
        }
        if x < n {
            assert_rel(j.upper, num(&row["jeffreys"][1]), 1e-8, &what);
        }
    }
}

/// Closed forms at the boundaries (Clopper & Pearson 1934; common practice): 0/n has
/// U = 1 − (α/2)^(1/n), n/n has L = (α/2)^(1/n). For 0/20 at 95%: 1 − 0.025^(1/20) = 0.16843347.
#[test]
fn clopper_pearson_boundary_closed_forms() {
    let ci = proportion_interval(0, 20, 0.95, ProportionMethod::ClopperPearson).unwrap();
    assert_eq!(ci.lower, 0.0);
    assert_close(
        ci.upper,
        1.0 - 0.025_f64.powf(1.0 / 20.0),
        1e-14,
        0.0,
        "0/20",
    );
    let ci = proportion_interval(5, 5, 0.95, ProportionMethod::ClopperPearson).unwrap();
    assert_eq!(ci.upper, 1.0);
    assert_close(ci.lower, 0.025_f64.powf(1.0 / 5.0), 1e-14, 0.0, "5/5");
    // Wilson is exactly 0 / 1 at the boundaries, not a rounding residue.
    let w = proportion_interval(0, 1000, 0.95, ProportionMethod::Wilson).unwrap();
    assert_eq!(w.lower, 0.0);
    let w = proportion_interval(7, 7, 0.95, ProportionMethod::Wilson).unwrap();
    assert_eq!(w.upper, 1.0);
}

// ---------------------------------------------------------------------------------------------
// Two proportions
// ---------------------------------------------------------------------------------------------

/// Newcombe (1998b) Stat. Med. 17:873–890, Table II example (a), 56/70 − 48/80: method 10 gives
/// 0.0524 to 0.3339 (from memory).
#[test]
fn newcombe_1998b_difference_example() {
    let ci = newcombe_difference(56, 70, 48, 80, 0.95).unwrap();
    assert_close(ci.lower, 0.0524, 0.0, 5.000_1e-5, "Newcombe L");
    assert_close(ci.upper, 0.3339, 0.0, 5.000_1e-5, "Newcombe U");
}

/// statsmodels 0.15.0 `confint_proportions_2indep(method='newcomb', compare='diff')` and
/// `proportions_ztest([x1, x2], [n1, n2])` (pooled, two-sided). Normal tails from statrs' erfc are
/// good to ~1e-10 relative, so p-values are compared at 1e-9.
#[test]
fn two_sample_matches_statsmodels() {
    for row in group("two_sample") {
        let (x1, n1, x2, n2) = (
            count(&row["x1"]),
            count(&row["n1"]),
            count(&row["x2"]),
            count(&row["n2"]),
        );
        let what = format!("{x1}/{n1} vs {x2}/{n2}");
        let ci = newcombe_difference(x1, n1, x2, n2, num(&row["confidence"])).unwrap();
        assert_close(ci.lower, num(&row["newcombe"][0]), 1e-9, 1e-12, &what);
        assert_close(ci.upper, num(&row["newcombe"][1]), 1e-9, 1e-12, &what);
        let z = two_proportion_z_test(x1, n1, x2, n2).unwrap();
        assert_close(z.statistic, num(&row["z"]), 1e-12, 1e-14, &what);
        assert_close(z.p_value, num(&row["p_value"]), 1e-9, 1e-15, &what);
    }
}

// ---------------------------------------------------------------------------------------------
// Normal and t
// ---------------------------------------------------------------------------------------------

/// `scipy.stats.norm.isf((1 − c)/2)` and `norm.sf(z)`.
#[test]
fn normal_matches_scipy() {
    let normal = &reference()["normal"];
    for row in normal["z_two_sided"].as_array().unwrap() {
        let c = num(&row["confidence"]);
        assert_close(z_two_sided(c).unwrap(), num(&row["value"]), 1e-13, 0.0, "z");
    }
    for row in normal["sf"].as_array().unwrap() {
        let z = num(&row["z"]);
        assert_close(
            normal_sf(z).unwrap(),
            num(&row["value"]),
            1e-9,
            0.0,
            "normal sf",
        );
    }
    // 1.96 for 95% (common practice, no source).
    assert_close(z_two_sided(0.95).unwrap(), 1.96, 0.0, 5e-3, "z 95%");
}

/// `scipy.stats.t.ppf(p, df)` for df = 0.5 … 1e9 and ∞ and p from 1e-300 to 1 − 1e-12, to 1e-9
/// relative (incomplete-beta inversion up to df 1000, Cornish–Fisher above).
#[test]
fn t_quantiles_match_scipy() {
    for row in reference()["t"]["ppf"].as_array().unwrap() {
        let (p, df) = (num(&row["p"]), num(&row["df"]));
        let what = format!("t.ppf({p}, {df})");
        assert_close(
            t_quantile(p, df).unwrap(),
            num(&row["value"]),
            1e-9,
            1e-11,
            &what,
        );
    }
}

/// Two-sided 5% points of t from a printed table (e.g. Fisher & Yates, *Statistical Tables*),
/// 3 decimals, from memory.
#[test]
fn t_quantiles_match_printed_table() {
    for (df, table) in [
        (1.0, 12.706),
        (2.0, 4.303),
        (4.0, 2.776),
        (9.0, 2.262),
        (29.0, 2.045),
        (120.0, 1.980),
        (f64::INFINITY, 1.960),
    ] {
        assert_close(
            t_quantile(0.975, df).unwrap(),
            table,
            0.0,
            5.001e-4,
            "t table",
        );
    }
}

/// `scipy.stats.t.sf(t, df)` for df = 1 … 1e9 and ∞, to 1e-9 relative.
#[test]
fn t_tails_match_scipy() {
    for row in reference()["t"]["sf"].as_array().unwrap() {
        let (t, df) = (num(&row["t"]), num(&row["df"]));
        let what = format!("t.sf({t}, {df})");
        assert_close(t_sf(t, df).unwrap(), num(&row["value"]), 1e-9, 0.0, &what);
    }
}

/// `scipy.stats.ttest_1samp(values, 0).confidence_interval(c)` and `scipy.stats.sem`.
#[test]
fn mean_interval_matches_scipy() {
    for row in group("mean_t_interval") {
        let values: Vec<f64> = row["values"].as_array().unwrap().iter().map(num).collect();
        let conf = num(&row["confidence"]);
        let e = mean_t_interval(&values, conf).unwrap();
        assert_close(e.mean, num(&row["mean"]), 1e-14, 1e-16, "mean");
        assert_close(e.std_error, num(&row["std_error"]), 1e-12, 0.0, "sem");
        assert_eq!(e.df, (values.len() - 1) as f64);
        let i = &row["interval"];
        assert_close(e.interval.lower, num(&i[0]), 1e-10, 1e-13, "t CI lower");
        assert_close(e.interval.upper, num(&i[1]), 1e-10, 1e-13, "t CI upper");
    }
}

// ---------------------------------------------------------------------------------------------
// Incomplete beta and binomial tails
// ---------------------------------------------------------------------------------------------

/// `scipy.special.betainc(a, b, x)` for shapes 0.5 … 1e7 at the mean and ±1, 3, 6 sd.
#[test]
fn incomplete_beta_matches_scipy() {
    for row in group("incomplete_beta") {
        let (a, b, x) = (num(&row["a"]), num(&row["b"]), num(&row["x"]));
        let what = format!("I_{x}({a}, {b})");
        assert_rel(
            incomplete_beta(a, b, x).unwrap(),
            num(&row["value"]),
            1e-8,
            &what,
        );
    }
}

/// `scipy.stats.binom.sf(k − 1, n, p)` = P(X ≥ k) for n = 20 … 1e7, k at the mean ± 0, 1, 3, 6 sd
/// and at 1 and n.
#[test]
fn binomial_tails_match_scipy() {
    for row in group("binomial_sf") {
        let (k, n, p) = (count(&row["k"]), count(&row["n"]), num(&row["p"]));
        let what = format!("P(Bin({n}, {p}) >= {k})");
        assert_rel(
            binomial_sf_ge(k, n, p).unwrap(),
            num(&row["value"]),
            1e-8,
            &what,
        );
    }
}

/// −expm1(N·log1p(−binom.sf(k − 1, n, p))) with k = ⌈n·x⌉ in exact rational arithmetic, scipy.
/// Includes the note's case N = 900, n = 20, p = 0.616, x = 0.8: k = 16, single tail 0.067774501.
#[test]
fn best_of_n_matches_scipy() {
    for row in group("best_of_n") {
        let (configs, n) = (count(&row["configs"]), count(&row["n"]));
        let (p, x) = (num(&row["p"]), num(&row["x"]));
        let what = format!("best of {configs}, n = {n}, p = {p}, x = {x}");
        assert_eq!(ceil_product(n, x), count(&row["k"]), "{what}");
        let single = binomial_sf_ge(count(&row["k"]), n, p).unwrap();
        assert_rel(single, num(&row["single_tail"]), 1e-8, &what);
        let value = best_of_n_tail(configs, n, p, x).unwrap();
        assert_rel(value, num(&row["value"]), 1e-8, &what);
    }
    let single = binomial_sf_ge(16, 20, 0.616).unwrap();
    assert_close(single, 0.067_774_501, 0.0, 5.1e-10, "single-config tail");
}

/// The chance that the best of N reaches x can only fall as x rises, stays in [0, 1], and rises
/// with N (order-statistic facts, common practice).
#[test]
fn best_of_n_is_monotone() {
    for (configs, n, p) in [
        (900, 20, 0.616),
        (10_000_000, 1_000_000, 0.5),
        (3, 1000, 0.9),
    ] {
        let mut previous = 1.0;
        for step in 0..=200 {
            let x = f64::from(step) / 200.0;
            let v = best_of_n_tail(configs, n, p, x).unwrap();
            assert!((0.0..=1.0).contains(&v));
            assert!(v <= previous, "not monotone at x = {x}");
            previous = v;
        }
    }
    let fewer = best_of_n_tail(10, 1000, 0.7, 0.73).unwrap();
    let more = best_of_n_tail(100, 1000, 0.7, 0.73).unwrap();
    assert!(fewer < more);
}

// ---------------------------------------------------------------------------------------------
// Sample sizes and rounding
// ---------------------------------------------------------------------------------------------

/// Cochran (1977) *Sampling Techniques*, 3rd ed., ch. 4: ±5% at 95% with p = ½ needs
/// 1.96² · 0.25 / 0.05² = 384.16 rows with z rounded to 1.96 (hand arithmetic), 384.146 with the
/// exact z; either way ⌈·⌉ = 385. Exact-z values: scipy `norm.isf` in the JSON.
#[test]
fn cochran_sample_sizes() {
    let n0 = cochran_rows(0.5, 0.05, 0.95).unwrap();
    assert_close(n0, 384.16, 0.0, 0.015, "Cochran with rounded z");
    assert_close(n0, 384.146, 0.0, 5e-4, "Cochran with exact z");
    assert_eq!(cochran_rows_ceil(0.5, 0.05, 0.95).unwrap(), 385);
    for row in group("cochran") {
        let (p, e, c) = (num(&row["p"]), num(&row["margin"]), num(&row["confidence"]));
        assert_close(
            cochran_rows(p, e, c).unwrap(),
            num(&row["value"]),
            1e-13,
            0.0,
            "n0",
        );
    }
    // 2400.91 → 2401 and 9603.65 → 9604 at ±2% and ±1% (exact z, hand arithmetic from above).
    assert_eq!(cochran_rows_ceil(0.5, 0.02, 0.95).unwrap(), 2401);
    assert_eq!(cochran_rows_ceil(0.5, 0.01, 0.95).unwrap(), 9604);
    assert_eq!(cochran_rows(0.0, 0.05, 0.95).unwrap(), 0.0);
}

/// Hoeffding (1963) with a union bound, by hand: ε = δ = 0.05, k = 1: ln(2/0.05)/(2·0.05²)
/// = ln(40)/0.005 = 3.6888794541/0.005 = 737.7759; k = 10: ln(400)/0.005 = 5.9914645471/0.005
/// = 1198.2929.
#[test]
fn hoeffding_bounds() {
    assert_close(
        hoeffding_rows(0.05, 0.05, 1).unwrap(),
        737.7759,
        0.0,
        1e-4,
        "k=1",
    );
    assert_close(
        hoeffding_rows(0.05, 0.05, 10).unwrap(),
        1198.2929,
        0.0,
        1e-4,
        "k=10",
    );
    // Inverse: with 738 rows the margin is √(ln 40 / 1476) = 0.0499925 (hand arithmetic).
    assert_close(
        hoeffding_margin(738, 0.05, 1).unwrap(),
        0.049_992_5,
        0.0,
        1e-7,
        "margin",
    );
    let rows = hoeffding_rows(0.02, 0.01, 5).unwrap();
    let back = hoeffding_margin(rows.ceil() as u64, 0.01, 5).unwrap();
    assert!(back <= 0.02 && back > 0.0199);
}

/// ⌈n·x⌉ must be exact for scores written as decimals; in f64, 100 × 0.07 = 7.000000000000001
/// (common practice, no source; the other products by hand).
#[test]
fn ceil_product_is_exact_for_decimals() {
    assert_eq!(ceil_product(100, 0.07), 7);
    assert_eq!(ceil_product(100, 0.29), 29);
    assert_eq!(ceil_product(100, 0.57), 57);
    assert_eq!(ceil_product(1000, 0.915), 915);
    assert_eq!(ceil_product(20, 0.8), 16);
    assert_eq!(ceil_product(1980, 0.616), 1220); // 1219.68 → 1220
    assert_eq!(ceil_product(10_000_000, 0.1234567), 1_234_567);
    assert_eq!(ceil_product(3, 0.5), 2);
}

// ---------------------------------------------------------------------------------------------
// Expected maximum of normals
// ---------------------------------------------------------------------------------------------

/// Harter (1961) Biometrika 48:151–165, expected largest of N standard normals, 5 decimals (from
/// memory), and the closed forms 1/√π (N = 2) and 3/(2√π) (N = 3).
#[test]
fn expected_max_matches_harter() {
    let sqrt_pi = std::f64::consts::PI.sqrt();
    // 1e-10: the normal cdf from statrs' erfc carries ~1e-11 relative error into the integrand.
    assert_close(
        expected_max_normal(2).unwrap(),
        1.0 / sqrt_pi,
        0.0,
        1e-10,
        "N=2",
    );
    assert_close(
        expected_max_normal(3).unwrap(),
        1.5 / sqrt_pi,
        0.0,
        1e-10,
        "N=3",
    );
    for (n, harter) in [
        (2, 0.56419),
        (3, 0.84628),
        (5, 1.16296),
        (10, 1.53875),
        (100, 2.50759),
    ] {
        assert_close(
            expected_max_normal(n).unwrap(),
            harter,
            0.0,
            5.001e-6,
            "Harter",
        );
    }
}

/// `scipy.integrate.quad` of x·N·φ(x)·Φ(x)^(N−1) (log space, `special.log_ndtr`) up to N = 1e7, to
/// 1e-9 absolute; Blom's approximation within its known error of about 0.03 (Blom 1958).
#[test]
fn expected_max_matches_quadrature() {
    for row in group("expected_max") {
        let n = count(&row["n"]);
        let exact = num(&row["value"]);
        assert_close(expected_max_normal(n).unwrap(), exact, 0.0, 1e-9, "E[max]");
        let blom = blom_expected_max(n).unwrap();
        // 5e-10 absolute: scipy evaluates Φ⁻¹((N − 0.375)/(N + 0.25)) after rounding its argument
        // near 1, which costs ~1e-10 at N = 1e7; the Rust side uses −Φ⁻¹(0.625/(N + 0.25)).
        assert_close(
            blom,
            num(&row["blom"]),
            0.0,
            5e-10,
            "Blom vs scipy norm.ppf",
        );
        assert!((blom - exact).abs() < 0.03, "Blom error at N = {n}");
    }
}

// ---------------------------------------------------------------------------------------------
// Tibshirani & Tibshirani (2009)
// ---------------------------------------------------------------------------------------------

/// Worked by hand (invented scores, 4 configurations × 5 folds, higher is better):
///
/// ```text
///        fold1 fold2 fold3 fold4 fold5   sum   mean
///   A     0.71  0.74  0.69  0.72  0.74   3.60  0.720
///   B     0.75  0.70  0.73  0.71  0.76   3.65  0.730   <- selected
///   C     0.68  0.77  0.70  0.74  0.71   3.60  0.720
///   D     0.73  0.72  0.75  0.69  0.70   3.59  0.718
///   max   0.75  0.77  0.75  0.74  0.76
///   max−B 0.00  0.07  0.02  0.03  0.00   sum 0.12  →  B̂ = 0.12/5 = 0.024
/// ```
/// corrected = 0.730 − 0.024 = 0.706.
#[test]
fn tibshirani_worked_example() {
    let mut acc = SelectionBias::new(5);
    for scores in [
        [0.71, 0.74, 0.69, 0.72, 0.74],
        [0.75, 0.70, 0.73, 0.71, 0.76],
        [0.68, 0.77, 0.70, 0.74, 0.71],
        [0.73, 0.72, 0.75, 0.69, 0.70],
    ] {
        acc.push(&scores).unwrap();
    }
    let e = acc.finish().unwrap();
    assert_eq!(e.selected_index, 1);
    assert_eq!(e.trials, 4);
    assert_close(e.naive_best, 0.730, 0.0, 1e-12, "naive");
    assert_close(e.bias, 0.024, 0.0, 1e-12, "bias");
    assert_close(e.corrected, 0.706, 0.0, 1e-12, "corrected");
}

/// splitmix64 (Steele, Lea & Flood 2014) — a tiny, seeded, self-contained generator.
struct SplitMix64(u64);

impl SplitMix64 {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform on (0, 1): the top 53 bits, offset by half a step so 0 never occurs.
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1_u64 << 53) as f64
    }

    /// Standard normal by Box & Muller (1958).
    fn normal(&mut self) -> f64 {
        let (u1, u2) = (self.uniform(), self.uniform());
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

/// Simulation: 30 configurations with known true scores 0.80 − 0.001·m, 5 folds, fold noise
/// N(0, 0.02²) with a shared per-fold component (folds are the same data for every configuration).
/// Over 2000 seeded repetitions, the naive best CV score overstates the selected configuration's
/// true score, and the corrected estimate is closer to the truth on average.
#[test]
fn tibshirani_correction_reduces_optimism_in_simulation() {
    const CONFIGS: usize = 30;
    const FOLDS: usize = 5;
    let mut rng = SplitMix64(20_091_201);
    let (mut naive_err, mut corrected_err, mut naive_bias) = (0.0, 0.0, 0.0);
    let reps = 2000;
    for _ in 0..reps {
        let shared: Vec<f64> = (0..FOLDS).map(|_| 0.01 * rng.normal()).collect();
        let truth: Vec<f64> = (0..CONFIGS).map(|m| 0.80 - 0.001 * m as f64).collect();
        let mut acc = SelectionBias::new(FOLDS);
        for &mu in &truth {
            let scores: Vec<f64> = shared
                .iter()
                .map(|s| mu + s + 0.02 * rng.normal())
                .collect();
            acc.push(&scores).unwrap();
        }
        let e = acc.finish().unwrap();
        let target = truth[e.selected_index];
        naive_err += (e.naive_best - target).abs();
        corrected_err += (e.corrected - target).abs();
        naive_bias += e.naive_best - target;
        assert!(e.bias >= 0.0);
    }
    let reps = f64::from(reps);
    assert!(naive_bias / reps > 0.005, "the setup must be optimistic");
    assert!(
        corrected_err / reps < naive_err / reps,
        "corrected {} vs naive {}",
        corrected_err / reps,
        naive_err / reps
    );
}

// ---------------------------------------------------------------------------------------------
// Invalid arguments: always Err, never a panic
// ---------------------------------------------------------------------------------------------

#[test]
fn invalid_arguments_are_errors() {
    use ProportionMethod::*;
    for method in [Wilson, ClopperPearson, AgrestiCoull, Jeffreys] {
        assert!(proportion_interval(5, 10, 0.0, method).is_err());
        assert!(proportion_interval(5, 10, 1.0, method).is_err());
        assert!(proportion_interval(5, 10, f64::NAN, method).is_err());
        assert!(proportion_interval(11, 10, 0.95, method).is_err());
        assert!(proportion_interval(0, 0, 0.95, method).is_err());
    }
    assert!(newcombe_difference(3, 2, 1, 2, 0.95).is_err());
    assert!(newcombe_difference(1, 2, 1, 0, 0.95).is_err());
    assert!(two_proportion_z_test(1, 0, 1, 2).is_err());
    assert!(two_proportion_z_test(1, 2, 3, 2).is_err());
    assert!(t_quantile(0.975, 0.0).is_err());
    assert!(t_quantile(0.975, -3.0).is_err());
    assert!(t_quantile(f64::NAN, 3.0).is_err());
    assert!(t_sf(1.0, f64::NAN).is_err());
    assert!(cochran_rows(1.5, 0.05, 0.95).is_err());
    assert!(cochran_rows(0.5, 0.0, 0.95).is_err());
    assert!(cochran_rows(0.5, 0.05, 1.0).is_err());
    assert!(cochran_rows_ceil(f64::NAN, 0.05, 0.95).is_err());
    assert!(hoeffding_rows(0.0, 0.05, 1).is_err());
    assert!(hoeffding_rows(0.05, 0.0, 1).is_err());
    assert!(hoeffding_rows(0.05, 0.05, 0).is_err());
    assert!(hoeffding_margin(0, 0.05, 1).is_err());
    assert!(binomial_sf_ge(1, 10, -0.1).is_err());
    assert!(incomplete_beta(1.0, 1.0, -0.1).is_err());
    assert!(best_of_n_tail(1, 10, f64::NAN, 0.5).is_err());
    assert!(expected_max_normal(0).is_err());
    assert!(mean_t_interval(&[1.0], 0.95).is_err());
    assert!(stats::count_from_proportion(0.5, 0, 1e-6).is_err());
    let err = proportion_interval(11, 10, 0.95, Wilson).unwrap_err();
    assert!(err.to_string().contains("11") && err.to_string().contains("10"));
    let err = t_quantile(0.5, -3.0).unwrap_err();
    assert!(err.to_string().contains("df") && err.to_string().contains("-3"));
}

#[test]
fn interval_is_serializable() {
    let json = serde_json::to_value(Interval {
        lower: 0.25,
        upper: 0.5,
    })
    .unwrap();
    assert_eq!(json, serde_json::json!({"lower": 0.25, "upper": 0.5}));
}
