//! Properties that must hold for every input, checked on random inputs (proptest): the
//! proportion intervals, the expected maximum of normals, the best-of-N tail, and the Markdown
//! escaping of untrusted text, alone and through the rendered report. The properties are
//! consequences of the definitions (an interval contains its point estimate; a larger sample
//! narrows it; more confidence widens it; a maximum over more draws is larger; a tail
//! probability falls as the threshold rises), so no expected number comes from the code itself.
//! Case counts stay small: the suite runs in debug builds on two CI cores.

#![allow(clippy::unwrap_used)]

#[path = "../fuzz/harness.rs"]
mod harness;

use proptest::prelude::*;
use vetscore::report::escape;
use vetscore::stats::{self, ProportionMethod};

const METHODS: [ProportionMethod; 4] = [
    ProportionMethod::Wilson,
    ProportionMethod::ClopperPearson,
    ProportionMethod::AgrestiCoull,
    ProportionMethod::Jeffreys,
];

/// Floating-point slack for comparisons between two computed bounds.
const EPS: f64 = 1e-12;

fn method() -> impl Strategy<Value = ProportionMethod> {
    prop::sample::select(METHODS.to_vec())
}

fn confidence() -> impl Strategy<Value = f64> {
    prop::sample::select(vec![0.5, 0.8, 0.9, 0.95, 0.99, 0.999])
}

/// Text that leans on the characters Markdown and HTML give meaning to, mixed with any Unicode.
fn hostile_text() -> impl Strategy<Value = String> {
    let pieces = prop::sample::select(vec![
        "<",
        ">",
        "</",
        "<!--",
        "<?",
        "<a href=x>",
        "](",
        "[x](http://e.test)",
        "![i](j)",
        "@",
        "@team",
        "\\",
        "|",
        "`",
        "*",
        "_",
        "#",
        "\n",
        "\r",
        "\u{2028}",
        "&amp;",
        "www.",
        "://",
        "mailto:",
        "x",
        " ",
        "é",
        "\u{200d}",
    ]);
    prop::collection::vec(
        prop_oneof![pieces.prop_map(str::to_owned), any::<String>()],
        0..24,
    )
    .prop_map(|v| v.concat())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn interval_holds_the_estimate_inside_the_unit_range(
        n in 1u64..100_000, frac in 0.0f64..=1.0, c in confidence(), m in method(),
    ) {
        let x = (frac * n as f64).round() as u64;
        let i = stats::proportion_interval(x, n, c, m).unwrap();
        let p = x as f64 / n as f64;
        prop_assert!(0.0 <= i.lower && i.lower <= i.upper && i.upper <= 1.0, "{i:?}");
        prop_assert!(i.lower <= p + EPS && p - EPS <= i.upper, "{p} outside {i:?} ({m:?})");
    }

    #[test]
    fn interval_narrows_as_n_grows_at_a_fixed_proportion(
        k in 0u64..=10, base in 10u64..=10, a in 1u64..50, extra in 1u64..50,
        c in confidence(), m in method(),
    ) {
        // x/n = k/10 exactly at n = 10a and at n = 10(a + extra).
        let small = stats::proportion_interval(k * a, base * a, c, m).unwrap();
        let b = a + extra;
        let large = stats::proportion_interval(k * b, base * b, c, m).unwrap();
        prop_assert!(large.width() <= small.width() + EPS, "{small:?} -> {large:?} ({m:?})");
    }

    #[test]
    fn interval_widens_as_confidence_rises(
        n in 1u64..5_000, frac in 0.0f64..=1.0, c1 in 0.5f64..0.99, step in 0.001f64..0.0099,
        m in method(),
    ) {
        let x = (frac * n as f64).round() as u64;
        let c2 = c1 + step;
        let low = stats::proportion_interval(x, n, c1, m).unwrap();
        let high = stats::proportion_interval(x, n, c2, m).unwrap();
        prop_assert!(high.lower <= low.lower + EPS && low.upper <= high.upper + EPS,
            "{c1}: {low:?}, {c2}: {high:?} ({m:?})");
    }

    #[test]
    fn expected_max_of_normals_increases_with_n(n in 1u64..1_000_000, more in 1u64..1_000) {
        let a = stats::expected_max_normal(n).unwrap();
        let b = stats::expected_max_normal(n + more).unwrap();
        prop_assert!(b > a, "E[max] at {n}: {a}, at {}: {b}", n + more);
    }

    #[test]
    fn best_of_n_tail_is_a_probability_monotone_in_x_and_n(
        configs in 1u64..10_000, more in 1u64..1_000, n in 1u64..5_000,
        p in 0.0f64..=1.0, x1 in 0.0f64..=1.0, x2 in 0.0f64..=1.0,
    ) {
        let (lo, hi) = if x1 <= x2 { (x1, x2) } else { (x2, x1) };
        let at_lo = stats::best_of_n_tail(configs, n, p, lo).unwrap();
        let at_hi = stats::best_of_n_tail(configs, n, p, hi).unwrap();
        let more_configs = stats::best_of_n_tail(configs + more, n, p, lo).unwrap();
        for t in [at_lo, at_hi, more_configs] {
            prop_assert!((0.0..=1.0).contains(&t), "{t}");
        }
        prop_assert!(at_hi <= at_lo + EPS, "x {lo}: {at_lo}, x {hi}: {at_hi}");
        prop_assert!(more_configs + EPS >= at_lo, "N {configs}: {at_lo}, more: {more_configs}");
    }

    #[test]
    fn escaped_text_opens_no_markup(text in hostile_text()) {
        let out = escape::markdown(&text);
        prop_assert!(!out.contains('\n') && !out.contains('\r'), "{out:?}");
        let bytes = out.as_bytes();
        for (i, w) in bytes.windows(2).enumerate() {
            prop_assert!(
                !(w[0] == b'<' && (w[1].is_ascii_alphabetic() || b"/!?".contains(&w[1]))),
                "tag opens at {i}: {out:?}"
            );
        }
        prop_assert!(!out.contains('<'), "{out:?}");
        prop_assert!(!out.contains("]("), "{out:?}");
        prop_assert!(!harness::has_autolink(&out), "{out:?}");
        for (i, c) in out.char_indices() {
            if c == '@' {
                let next = out[i + 1..].chars().next();
                prop_assert!(!next.is_some_and(|n| n.is_alphanumeric() || n == '_'), "{out:?}");
            }
            if c == '|' {
                let slashes = out[..i].bytes().rev().take_while(|&b| b == b'\\').count();
                prop_assert!(slashes % 2 == 1, "raw | at {i}: {out:?}");
            }
        }
    }
}

proptest! {
    // Each case evaluates two models and renders the whole report.
    #![proptest_config(ProptestConfig::with_cases(24))]

    #[test]
    fn rendered_reports_keep_untrusted_names_and_claims_inert(
        name in hostile_text(), claim in hostile_text(),
    ) {
        let input = format!("{name}\0{claim}");
        harness::markdown(input.as_bytes());
    }
}

/// CSV-like bytes: a header from the column names the reader knows (some repeated), then rows
/// of cells drawn from ids, classes, numbers, blanks, quotes, line breaks and control bytes.
fn predictions_file() -> impl Strategy<Value = Vec<u8>> {
    let column = prop::sample::select(vec![
        "id",
        "label",
        "prediction",
        "score",
        "target",
        "prob_a",
        "prob_b",
        "other",
    ]);
    let cell = prop::sample::select(vec![
        "r1", "r2", "r3", "a", "b", "c", "", " ", "0.5", "1", "-3e9", "nan", "\"x\ny\"", "\"\"",
        "\u{1}", "r\tx", "\"a,b\"",
    ]);
    (
        prop::collection::vec(column, 1..6),
        prop::collection::vec(prop::collection::vec(cell, 0..6), 0..12),
        any::<u8>(),
    )
        .prop_map(|(header, rows, selector)| {
            let mut text = vec![selector];
            text.extend_from_slice(header.join(",").as_bytes());
            for row in rows {
                text.push(b'\n');
                text.extend_from_slice(row.join(",").as_bytes());
            }
            text
        })
}

proptest! {
    // Each case writes a scratch file and reads it back through the opener.
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn predictions_files_are_read_or_refused_with_a_diagnostic(file in predictions_file()) {
        harness::predictions(&file);
    }

    #[test]
    fn id_lists_are_compared_or_refused_with_a_diagnostic(
        train in prop::collection::vec(any::<u8>(), 0..200),
        test in prop::collection::vec(any::<u8>(), 0..200),
    ) {
        let mut data = train.into_iter().filter(|&b| b != 0).collect::<Vec<u8>>();
        data.push(0);
        data.extend(test);
        harness::ids(&data);
    }
}
