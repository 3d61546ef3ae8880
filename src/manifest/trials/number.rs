//! Fold scores read from CSV cells: plain decimals through an exact fast path, anything else
//! through `str::parse`.

/// A fold score read from a CSV cell: plain decimal digits through [`decimal`], anything else
/// trimmed and through `str::parse` (a cell that is not UTF-8 is not a number). `None` when it is
/// not a number.
pub(super) fn parse_score(cell: &[u8]) -> Option<f64> {
    decimal(cell).or_else(|| std::str::from_utf8(cell).ok()?.trim().parse::<f64>().ok())
}

/// The powers of ten that an f64 holds exactly (5^22 < 2^53, so 10^22 is the last).
const EXACT_POWERS_OF_TEN: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// A number written as plain decimal digits with an optional fraction (`0.8123`, `1`, `12.50`),
/// parsed without the general parser. Its digits, at most 19 and read as one integer m, are at
/// most 2^53 and the k digits after the point at most 19, so m and 10^k are both exact in an f64 and m / 10^k is
/// one correctly rounded division: the correctly rounded value of the decimal, which is what
/// `str::parse::<f64>` returns (the exact case of Clinger 1990, "How to read floating point
/// numbers accurately"). `None` for anything else (a sign, an exponent, white space, `.5`, `5.`,
/// more digits), which the caller hands to `str::parse`.
fn decimal(text: &[u8]) -> Option<f64> {
    // At most 19 digits, which a u64 holds without overflow (10^19 - 1 < 2^64); longer text goes
    // to the general parser (20 digits without a point wrap, and are refused below).
    if text.is_empty() || text.len() > 20 {
        return None;
    }
    let mut digits: u64 = 0;
    let mut point = None;
    for (at, &b) in text.iter().enumerate() {
        let digit = b.wrapping_sub(b'0');
        if digit <= 9 {
            digits = digits.wrapping_mul(10).wrapping_add(u64::from(digit));
        } else if b == b'.' && point.is_none() {
            point = Some(at);
        } else {
            return None;
        }
    }
    let fraction = match point {
        None => 0,
        // `.5` and `5.` are for the general parser.
        Some(0) => return None,
        Some(at) if at + 1 == text.len() => return None,
        Some(at) => text.len() - at - 1,
    };
    if text.len() - usize::from(point.is_some()) > 19 || digits > 1 << 53 {
        return None;
    }
    Some(digits as f64 / EXACT_POWERS_OF_TEN[fraction])
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        #[test]
        fn decimal_equals_str_parse(
            whole in "[0-9]{0,24}",
            point in any::<bool>(),
            fraction in "[0-9]{0,26}",
        ) {
            let text = if point { format!("{whole}.{fraction}") } else { whole.clone() };
            let parsed = text.parse::<f64>().ok();
            match decimal(text.as_bytes()) {
                Some(fast) => prop_assert_eq!(Some(fast.to_bits()), parsed.map(f64::to_bits)),
                None => {
                    // Only what the fast path does not claim: a form it leaves out, or more
                    // digits than fit exactly.
                    let digits = whole.len() + if point { fraction.len() } else { 0 };
                    let short = whole.trim_start_matches('0').len()
                        + if point { fraction.len() } else { 0 };
                    prop_assert!(
                        whole.is_empty()
                            || (point && fraction.is_empty())
                            || fraction.len() > 22
                            || short > 15
                            || digits > 19,
                        "{text:?} was refused"
                    );
                }
            }
        }

        #[test]
        fn anything_else_goes_to_str_parse(text in "[-+ .0-9eEinfatyINFATY_]{0,12}") {
            let expected = text.trim().parse::<f64>().ok().map(f64::to_bits);
            prop_assert_eq!(parse_score(text.as_bytes()).map(f64::to_bits), expected);
        }
    }
}
