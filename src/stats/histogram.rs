//! A streaming histogram whose range grows to fit the data, in constant memory.
//!
//! Owns: [`Histogram`]. Values are counted in `FINE_BINS` equal bins; when a value falls outside
//! the current range, the range doubles (towards the value) and neighbouring bins merge in pairs,
//! so memory never depends on how many values arrive. [`Histogram::bins`] then groups the fine
//! bins into a few display bins between the smallest and largest value seen. A display bin's
//! count can be off by the values of one fine bin at each of its edges; that is below what a text
//! histogram shows.
//!
//! Must not: store the values themselves.

/// Fine bins kept while streaming.
const FINE_BINS: usize = 1024;

/// Most doublings of the range for one value. Each doubles the width, and the width is at least
/// `f64::MIN_POSITIVE` (2.2e-308), so about 2,050 of them pass any finite value; the cap only
/// guards against a width that stops growing (it did, at 0, when the bin width underflowed).
const MAX_GROWS: u32 = 2_100;

/// Streaming histogram of finite values.
#[derive(Debug, Clone, PartialEq)]
pub struct Histogram {
    lo: f64,
    width: f64,
    counts: Vec<u64>,
    /// Values held back until the range is known (the first `FINE_BINS` values).
    pending: Vec<f64>,
    total: u64,
    min: f64,
    max: f64,
}

/// One display bin: `[lower, upper)` (the last bin includes its upper edge) and its count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bin {
    pub lower: f64,
    pub upper: f64,
    pub count: u64,
}

impl Default for Histogram {
    fn default() -> Self {
        Histogram {
            lo: 0.0,
            width: 0.0,
            counts: Vec::new(),
            pending: Vec::new(),
            total: 0,
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
        }
    }
}

impl Histogram {
    /// Counts one value; non-finite values are ignored (callers validate first).
    pub fn push(&mut self, x: f64) {
        if !x.is_finite() {
            return;
        }
        self.total += 1;
        self.min = self.min.min(x);
        self.max = self.max.max(x);
        if self.counts.is_empty() {
            self.pending.push(x);
            if self.pending.len() == FINE_BINS {
                self.fix_range();
            }
            return;
        }
        self.count(x);
    }

    /// Number of values counted.
    pub fn total(&self) -> u64 {
        self.total
    }

    fn fix_range(&mut self) {
        let bins = FINE_BINS as f64;
        // Divided first so that the span of ±1e308 does not overflow.
        let span = self.max / bins - self.min / bins;
        self.lo = self.min;
        // A range a little wider than the data keeps the maximum inside the last bin. A span of
        // a few subnormals (0 and 5e-324) would give a width of 0, which no doubling can widen:
        // the width is kept a normal positive number.
        let width = if span > 0.0 {
            span * (1.0 + 1e-9)
        } else {
            f64::EPSILON.max(self.min.abs() * 1e-12)
        };
        self.width = if width.is_finite() {
            width.max(f64::MIN_POSITIVE)
        } else {
            f64::MAX / bins
        };
        self.counts = vec![0; FINE_BINS];
        for x in std::mem::take(&mut self.pending) {
            self.count(x);
        }
    }

    fn count(&mut self, x: f64) {
        let mut grows = 0;
        while x < self.lo && grows < MAX_GROWS {
            self.grow(false);
            grows += 1;
        }
        while x >= self.lo + self.width * FINE_BINS as f64 && grows < MAX_GROWS {
            self.grow(true);
            grows += 1;
        }
        // After the cap (never reached with a positive width) the value lands in an edge bin;
        // a NaN quotient converts to bin 0.
        let i = (((x - self.lo) / self.width) as usize).min(FINE_BINS - 1);
        self.counts[i] += 1;
    }

    /// Doubles the range upward or downward, merging neighbouring bins.
    fn grow(&mut self, upward: bool) {
        let mut merged = vec![0; FINE_BINS];
        let offset = if upward { 0 } else { FINE_BINS / 2 };
        for (j, c) in self.counts.iter().enumerate() {
            merged[offset + j / 2] += c;
        }
        if !upward {
            self.lo -= self.width * FINE_BINS as f64;
        }
        self.width *= 2.0;
        self.counts = merged;
    }

    /// The values grouped into `bins` equal bins between the smallest and largest value.
    pub fn bins(&self, bins: usize) -> Vec<Bin> {
        if self.total == 0 || bins == 0 {
            return Vec::new();
        }
        let span = self.max - self.min;
        let step = if span > 0.0 { span / bins as f64 } else { 0.0 };
        let mut out: Vec<Bin> = (0..bins)
            .map(|i| Bin {
                lower: self.min + step * i as f64,
                upper: if i + 1 == bins {
                    self.max
                } else {
                    self.min + step * (i + 1) as f64
                },
                count: 0,
            })
            .collect();
        let index = |x: f64| -> usize {
            if step == 0.0 {
                0
            } else {
                (((x - self.min) / step) as usize).min(bins - 1)
            }
        };
        if self.counts.is_empty() {
            for &x in &self.pending {
                out[index(x)].count += 1;
            }
        } else {
            for (j, &c) in self.counts.iter().enumerate().filter(|(_, c)| **c > 0) {
                let center = self.lo + self.width * (j as f64 + 0.5);
                out[index(center.clamp(self.min, self.max))].count += c;
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_subnormal_span_does_not_hang() {
        // 1,023 zeros and one 5e-324 (the smallest subnormal): the fine-bin width used to
        // underflow to 0 and `count` doubled it forever. Afterwards: every value counted once.
        let mut h = Histogram::default();
        for _ in 0..1023 {
            h.push(0.0);
        }
        h.push(5e-324);
        h.push(1e-300);
        h.push(-1e308);
        h.push(1e308);
        assert_eq!(h.total(), 1027);
        assert_eq!(h.bins(16).iter().map(|b| b.count).sum::<u64>(), 1027);
    }

    #[test]
    fn small_inputs_are_binned_exactly() {
        let mut h = Histogram::default();
        for x in [0.1, 0.2, 0.2, 0.9] {
            h.push(x);
        }
        let bins = h.bins(4);
        assert_eq!(
            bins.iter().map(|b| b.count).collect::<Vec<_>>(),
            vec![3, 0, 0, 1]
        );
        assert_eq!(bins[0].lower, 0.1);
        assert_eq!(bins[3].upper, 0.9);
    }

    #[test]
    fn large_inputs_keep_every_value_and_grow_both_ways() {
        // Uniform steps 0..10_000 pushed from the middle outwards: every value is counted and the
        // ten display bins hold about 1,000 each (common practice, no source: a uniform grid).
        let mut h = Histogram::default();
        for i in (5_000..10_000).chain((0..5_000).rev()) {
            h.push(i as f64);
        }
        assert_eq!(h.total(), 10_000);
        assert!(h.counts.len() == FINE_BINS && h.pending.is_empty());
        let bins = h.bins(10);
        assert_eq!(bins.iter().map(|b| b.count).sum::<u64>(), 10_000);
        for b in &bins {
            assert!((985..=1_015).contains(&b.count), "{b:?}");
        }
    }

    #[test]
    fn constant_values_fall_in_one_bin() {
        let mut h = Histogram::default();
        for _ in 0..5_000 {
            h.push(0.75);
        }
        let bins = h.bins(5);
        assert_eq!(bins[0].count, 5_000);
    }
}
