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

/// A byte repeated in each of a word's 8 bytes.
const fn each_byte(b: u8) -> u64 {
    u64::from_ne_bytes([b; 8])
}

/// The high bit of each byte of `x` that is zero, exact for the lowest such byte (bytes above
/// it may be marked too, after a borrow): only the lowest mark is read.
const fn zero_bytes(x: u64) -> u64 {
    x.wrapping_sub(each_byte(1)) & !x & each_byte(0x80)
}

/// Where the first comma or line feed is among the 8 bytes of `word` (read little-endian: the
/// first byte lowest), or `None` when none of them is one.
#[inline]
pub(super) fn delimiter_in(word: u64) -> Option<usize> {
    let marks = zero_bytes(word ^ each_byte(b',')) | zero_bytes(word ^ each_byte(b'\n'));
    (marks != 0).then(|| (marks.trailing_zeros() / 8) as usize)
}

/// A fold score at the start of the 8 bytes of `word` (little-endian), read a word at a time
/// without a branch per byte: when a comma or line feed ends the cell within the word and the
/// cell is plain decimal digits with at most one point, neither first nor last, the value
/// [`decimal`] gives for it and the cell's length. `None` for anything else (the caller reads
/// the cell byte by byte). Cells of at most 7 bytes hold at most 7 digits, so [`decimal`]'s
/// limits on digits never apply.
#[inline]
pub(super) fn short_decimal(word: u64) -> Option<(f64, usize)> {
    let len = delimiter_in(word)?;
    if len == 0 {
        return None;
    }
    // The cell's bytes, the rest of the word zero.
    let cell = word & ((1u64 << (8 * len)) - 1);
    let in_cell = each_byte(0x80) & ((1u64 << (8 * len)) - 1);
    let points = zero_bytes(cell ^ each_byte(b'.')) & in_cell;
    let (digits, count, fraction) = if points == 0 {
        (cell, len, 0)
    } else {
        let at = (points.trailing_zeros() / 8) as usize;
        if at == 0 || at + 1 == len {
            return None;
        }
        // The point taken out: the bytes after it move down one.
        let below = cell & ((1u64 << (8 * at)) - 1);
        let above = (cell >> (8 * (at + 1))) << (8 * at);
        (below | above, len - 1, len - at - 1)
    };
    // Each digit's value in its byte (a second point, or any other byte, is no digit), the
    // bytes past the digits zero.
    let values = (digits ^ each_byte(b'0')) & ((1u64 << (8 * count)) - 1);
    if (values | values.wrapping_add(each_byte(0x76))) & each_byte(0x80) != 0 {
        return None;
    }
    // The digits moved to the word's top bytes (leading zeros below), then summed in pairs,
    // fours and eights: the first digit is the most significant.
    let mut x = values << (8 * (8 - count));
    x = (x.wrapping_mul(10 * 256 + 1)) >> 8 & 0x00FF_00FF_00FF_00FF;
    x = (x.wrapping_mul(100 * 65536 + 1)) >> 16 & 0x0000_FFFF_0000_FFFF;
    x = (x.wrapping_mul(10000 * (1 << 32) + 1)) >> 32;
    Some((x as f64 / EXACT_POWERS_OF_TEN[fraction], len))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Every cell of 1 to 5 digits, with a point before, after or between any of them or none,
    /// then a comma: read a word at a time to the value `str::parse` gives (the standard
    /// library's correctly rounded parse), and a point first or last left to the general path,
    /// as [`decimal`] leaves it (765,430 cells).
    #[test]
    fn every_short_decimal_is_read_a_word_at_a_time() {
        let mut cells = 0;
        for width in 1..=5usize {
            for n in 0..10u32.pow(width as u32) {
                let digits = format!("{n:0width$}");
                // No point, or one at each place from before the first digit to after the last.
                for point in std::iter::once(None).chain((0..=width).map(Some)) {
                    let cell = match point {
                        None => digits.clone(),
                        Some(at) => format!("{}.{}", &digits[..at], &digits[at..]),
                    };
                    let mut bytes = format!("{cell},").into_bytes();
                    bytes.resize(8, b'9');
                    let word = u64::from_le_bytes(bytes[..8].try_into().unwrap());
                    let inner = point.is_none_or(|at| at > 0 && at < width);
                    let want = inner.then(|| (cell.parse::<f64>().unwrap().to_bits(), cell.len()));
                    assert_eq!(decimal(cell.as_bytes()).is_some(), inner, "{cell}");
                    assert_eq!(
                        short_decimal(word).map(|(v, l)| (v.to_bits(), l)),
                        want,
                        "{cell}"
                    );
                    cells += 1;
                }
            }
        }
        // 10^w numbers of w digits, each with w + 2 places for the point (none included).
        assert_eq!(cells, 765_430);
    }

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

        /// A cell read a word at a time gives what [`decimal`] gives for it, with the cell's
        /// length, or nothing (and the caller reads it byte by byte); every plain decimal of up
        /// to 7 bytes ended by a delimiter within the word is read.
        #[test]
        fn a_word_at_a_time_agrees_with_decimal(
            cell in "[0-9.]{0,7}|[0-9]{0,3}[.][0-9]{0,3}|[ -~]{0,7}",
            end in prop_oneof![Just(b','), Just(b'\n'), Just(b'\r'), Just(b'x')],
            after in proptest::collection::vec(any::<u8>(), 8),
        ) {
            let mut bytes = cell.as_bytes().to_vec();
            bytes.push(end);
            bytes.extend(after);
            let word = u64::from_le_bytes(bytes[..8].try_into().unwrap());
            let cut = bytes[..8].iter().position(|&b| b == b',' || b == b'\n');
            prop_assert_eq!(delimiter_in(word), cut);
            let fast = short_decimal(word);
            match cut {
                Some(len) if len > 0 => {
                    let want = decimal(&bytes[..len]);
                    prop_assert_eq!(fast.map(|(v, l)| (v.to_bits(), l)), want.map(|v| (v.to_bits(), len)));
                }
                _ => prop_assert_eq!(fast, None),
            }
        }

        #[test]
        fn anything_else_goes_to_str_parse(text in "[-+ .0-9eEinfatyINFATY_]{0,12}") {
            let expected = text.trim().parse::<f64>().ok().map(f64::to_bits);
            prop_assert_eq!(parse_score(text.as_bytes()).map(f64::to_bits), expected);
        }
    }
}
