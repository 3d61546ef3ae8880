//! Bootstrap bias-corrected cross-validation (BBC-CV): an estimate of the selected configuration's
//! performance that pays for the selection, from every configuration's out-of-fold results.
//!
//! Owns: [`CorrectnessMatrix`] (bit-packed per-row correctness, for accuracy),
//! [`RowValueMatrix`] (one value per configuration and row, for a per-row loss or score whose
//! metric is its mean), [`OofResults`] (the two, or any [`super::WeightedMetric`], behind one
//! input), [`bbc_cv`] and [`BbcEstimate`].
//!
//! Method (Tsamardinos, Greasidou & Borboudakis 2018, "Bootstrapping the out-of-sample
//! predictions for efficient and accurate cross-validation", Machine Learning 107:1895–1922,
//! BBC-CV): pool the out-of-fold results of all configurations into one matrix; in each of B
//! bootstrap resamples of the rows, select the configuration with the best performance on the
//! in-bag rows (counted with their multiplicities) and score that configuration on the rows left
//! out of the resample. The estimate is the mean of the B out-of-bag scores; its interval is their
//! percentile interval. Selection happens inside every resample, so the estimate carries the
//! optimism of choosing the best of many; the plain out-of-fold score of the configuration chosen
//! on all rows does not.
//!
//! Speed: the in-bag performance of every configuration is Σᵢ mᵢ·xᵢ over rows i with multiplicity
//! mᵢ. For correctness the multiplicities are split into bit planes (mᵢ = Σ_b 2ᵇ·bit_b(mᵢ)), so each
//! configuration's in-bag count is Σ_b 2ᵇ·popcount(plane_b ∧ correct) over 64-row words. Resamples
//! run in fixed blocks of [`BLOCK`], each on its own generator seeded from a master generator, and
//! the blocks are shared among threads by index; every block writes its own slots, so the result
//! is bit-identical for any thread count.
//!
//! Must not: read the clock or OS entropy, panic, or do more than [`MAX_WORK`] units of work (the
//! resample count is cut to fit and the count used is returned).

use super::bootstrap::{check_resamples, percentile_interval};
use super::error::{Result, StatsError, check_unit_open};
use super::proportion::Interval;
use super::rng::Rng;
use super::weighted::WeightedMetric;

/// Resamples per block: one generator per block, so blocks can run on any thread.
const BLOCK: usize = 32;

/// Fewest resamples that may enter an estimate, as the other bootstraps accept (below 100 a 95%
/// interval's tails rest on two or three draws; common practice, no source).
const MIN_RESAMPLES: u32 = 100;

/// Bound on the total work, in units of one row drawn or one 64-bit word (correctness) / one
/// value (per-row values) read for one configuration. 3·10¹⁰ units are roughly a minute on one
/// core; B = 1000 on 100 configurations × 100,000 rows of correctness needs about 7·10⁸.
pub const MAX_WORK: u64 = 30_000_000_000;

/// Per-row correctness of each configuration's out-of-fold prediction, bit-packed: bit i of
/// configuration c is set when c predicted row i correctly. Accuracy is the mean.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CorrectnessMatrix {
    rows: usize,
    words: usize,
    bits: Vec<u64>,
}

impl CorrectnessMatrix {
    /// Matrix of `configurations` × `rows`, all incorrect.
    pub fn new(configurations: usize, rows: usize) -> Self {
        let words = rows.div_ceil(64);
        Self {
            rows,
            words,
            bits: vec![0; words * configurations],
        }
    }

    /// From one row of 0/1 bytes per configuration (any non-zero byte counts as correct).
    /// Errors: configurations of different lengths.
    pub fn from_rows(configurations: &[&[u8]]) -> Result<Self> {
        let rows = configurations.first().map_or(0, |c| c.len());
        let mut matrix = Self::new(configurations.len(), rows);
        for (c, values) in configurations.iter().enumerate() {
            if values.len() != rows {
                return Err(StatsError::LengthMismatch {
                    name: "configuration correctness",
                    expected: rows,
                    got: values.len(),
                });
            }
            for (i, &v) in values.iter().enumerate() {
                if v != 0 {
                    matrix.set(c, i);
                }
            }
        }
        Ok(matrix)
    }

    /// Marks row `row` of configuration `configuration` correct (out-of-range indices are ignored
    /// by construction: callers build the matrix with its own dimensions).
    pub fn set(&mut self, configuration: usize, row: usize) {
        if row < self.rows
            && let Some(word) = self.bits.get_mut(configuration * self.words + row / 64)
        {
            *word |= 1u64 << (row % 64);
        }
    }

    /// Number of configurations.
    pub fn configurations(&self) -> usize {
        self.bits.len().checked_div(self.words).unwrap_or(0)
    }

    /// Number of rows.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// The packed words of one configuration (bits past `rows` are zero).
    pub fn words_of(&self, configuration: usize) -> &[u64] {
        let start = configuration * self.words;
        self.bits.get(start..start + self.words).unwrap_or(&[])
    }

    /// Whether row `row` of `configuration` is correct.
    pub fn get(&self, configuration: usize, row: usize) -> bool {
        self.words_of(configuration)
            .get(row / 64)
            .is_some_and(|w| w >> (row % 64) & 1 == 1)
    }
}

/// Whether a larger per-row value is better (a score) or worse (a loss).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    HigherIsBetter,
    LowerIsBetter,
}

/// One finite value per configuration and row (e.g. a per-row log loss or squared error); the
/// configuration's metric is the mean over rows. Stored configuration by configuration.
#[derive(Debug, Clone, PartialEq)]
pub struct RowValueMatrix {
    rows: usize,
    values: Vec<f64>,
    direction: Direction,
}

impl RowValueMatrix {
    /// From `values` laid out configuration by configuration, `rows` values each.
    /// Errors: `rows` = 0, a length that is not a multiple of `rows`, a non-finite value.
    pub fn new(values: Vec<f64>, rows: usize, direction: Direction) -> Result<Self> {
        if rows == 0 || !values.len().is_multiple_of(rows) {
            return Err(StatsError::LengthMismatch {
                name: "per-row values",
                expected: rows.max(1) * (values.len() / rows.max(1)).max(1),
                got: values.len(),
            });
        }
        if let Some(&value) = values.iter().find(|v| !v.is_finite()) {
            return Err(StatsError::NotFinite {
                name: "per-row value",
                value,
            });
        }
        Ok(Self {
            rows,
            values,
            direction,
        })
    }

    /// Every value, configuration by configuration.
    pub fn values(&self) -> &[f64] {
        &self.values
    }

    fn row_values(&self, configuration: usize) -> &[f64] {
        let start = configuration * self.rows;
        self.values.get(start..start + self.rows).unwrap_or(&[])
    }
}

/// The out-of-fold results BBC-CV resamples.
#[derive(Debug, Clone, Copy)]
pub enum OofResults<'a> {
    /// Accuracy from bit-packed correctness (the fast path).
    Correctness(&'a CorrectnessMatrix),
    /// Any metric that is the mean of a per-row value.
    RowValues(&'a RowValueMatrix),
    /// Any other metric, recomputed from the rows with their multiplicities (F1, ROC AUC, ...).
    Weighted(&'a dyn WeightedMetric),
}

impl std::fmt::Debug for dyn WeightedMetric + '_ {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "WeightedMetric({} × {})",
            self.configurations(),
            self.rows()
        )
    }
}

impl OofResults<'_> {
    fn configurations(&self) -> usize {
        match self {
            Self::Correctness(m) => m.configurations(),
            Self::RowValues(m) => m.values.len() / m.rows,
            Self::Weighted(m) => m.configurations(),
        }
    }

    fn rows(&self) -> usize {
        match self {
            Self::Correctness(m) => m.rows,
            Self::RowValues(m) => m.rows,
            Self::Weighted(m) => m.rows(),
        }
    }

    /// Work units of one resample (see [`MAX_WORK`]).
    fn work_per_resample(&self) -> u64 {
        let (configs, rows) = (self.configurations() as u64, self.rows() as u64);
        match self {
            // About four bit planes for n up to 10⁷ (the largest multiplicity rarely exceeds 15).
            Self::Correctness(m) => rows + configs * m.words as u64 * 5,
            Self::RowValues(_) | Self::Weighted(_) => rows + configs * rows,
        }
    }

    /// Plain out-of-fold metric of every configuration on all rows.
    fn plain_scores(&self) -> Vec<f64> {
        let n = self.rows() as f64;
        let all_rows = match self {
            Self::Weighted(m) => vec![1; m.rows()],
            _ => Vec::new(),
        };
        (0..self.configurations())
            .map(|c| match self {
                Self::Correctness(m) => {
                    let hits: u64 = m
                        .words_of(c)
                        .iter()
                        .map(|w| u64::from(w.count_ones()))
                        .sum();
                    hits as f64 / n
                }
                Self::RowValues(m) => m.row_values(c).iter().sum::<f64>() / n,
                Self::Weighted(m) => m.score(c, &all_rows),
            })
            .collect()
    }

    fn higher_is_better(&self) -> bool {
        match self {
            Self::Correctness(_) => true,
            Self::RowValues(m) => m.direction == Direction::HigherIsBetter,
            Self::Weighted(m) => m.higher_is_better(),
        }
    }
}

/// What [`bbc_cv`] returns.
#[derive(Debug, Clone, PartialEq)]
pub struct BbcEstimate {
    /// Bias-corrected estimate: mean of the out-of-bag scores of the in-bag winners.
    pub estimate: f64,
    /// Percentile interval of the out-of-bag scores at the requested confidence.
    pub interval: Interval,
    /// Standard deviation of the out-of-bag scores (the estimate's Monte Carlo standard error
    /// is this over √`resamples_used`).
    pub spread: f64,
    /// Resamples requested.
    pub resamples_requested: u32,
    /// Resamples that entered the estimate: the request cut to [`MAX_WORK`], less resamples whose
    /// out-of-bag set was empty (possible only for a handful of rows).
    pub resamples_used: u32,
    /// Configuration with the best plain out-of-fold score on all rows (first on a tie).
    pub selected: usize,
    /// Its plain out-of-fold score: the optimistic figure BBC-CV corrects.
    pub selected_score: f64,
}

/// Runs BBC-CV (Tsamardinos, Greasidou & Borboudakis 2018; see the module docs) with
/// `resamples` resamples of the rows from `seed`, on `threads` threads (1 or more; the result does
/// not depend on it). Ties in the in-bag selection go to the lowest configuration index.
///
/// Errors: no configuration or fewer than 2 rows; `confidence` not in (0, 1); `resamples` outside
/// 100..=1,000,000; `threads` = 0; fewer than 100 resamples fit in [`MAX_WORK`] or have a
/// non-empty out-of-bag set.
pub fn bbc_cv(
    results: OofResults<'_>,
    resamples: u32,
    confidence: f64,
    seed: u64,
    threads: usize,
) -> Result<BbcEstimate> {
    bbc_cv_within(results, resamples, confidence, seed, threads, MAX_WORK)
}

/// [`bbc_cv`] with the work bound as an argument (so tests can reach the cut and the refusal).
fn bbc_cv_within(
    results: OofResults<'_>,
    resamples: u32,
    confidence: f64,
    seed: u64,
    threads: usize,
    max_work: u64,
) -> Result<BbcEstimate> {
    check_unit_open("confidence", confidence)?;
    check_resamples(resamples)?;
    if threads == 0 {
        return Err(StatsError::CountOutOfRange {
            name: "threads",
            value: 0,
            expected: "at least 1",
        });
    }
    let (configs, rows) = (results.configurations(), results.rows());
    if configs == 0 {
        return Err(StatsError::TooFewValues { needed: 1, got: 0 });
    }
    if rows < 2 {
        return Err(StatsError::TooFewValues {
            needed: 2,
            got: rows,
        });
    }
    let fit = max_work / results.work_per_resample().max(1);
    let drawn = u64::from(resamples).min(fit) as usize;
    if drawn < MIN_RESAMPLES as usize {
        return Err(StatsError::CountOutOfRange {
            name: "resamples within the work bound",
            value: drawn as u64,
            expected: "at least 100 (fewer configurations or rows are needed)",
        });
    }

    let blocks = drawn.div_ceil(BLOCK);
    let mut master = Rng::seed_from_u64(seed);
    let block_seeds: Vec<u64> = (0..blocks).map(|_| master.next_u64()).collect();
    // One slot per resample: the out-of-bag score, or NaN for an empty out-of-bag set.
    let mut scores = vec![f64::NAN; drawn];
    let run_share = |share: &mut [(usize, &mut [f64])]| {
        let mut work = Workspace::new(rows);
        for (block, slots) in share.iter_mut() {
            let mut rng = Rng::seed_from_u64(block_seeds[*block]);
            for slot in slots.iter_mut() {
                *slot = work.one_resample(&results, &mut rng);
            }
        }
    };
    let mut chunks: Vec<(usize, &mut [f64])> = scores.chunks_mut(BLOCK).enumerate().collect();
    let threads = threads.min(blocks);
    if threads == 1 {
        run_share(&mut chunks);
    } else {
        // Deal the blocks out round-robin by index; which thread runs a block does not change it.
        let mut shares: Vec<Vec<(usize, &mut [f64])>> = (0..threads).map(|_| Vec::new()).collect();
        for (i, chunk) in chunks.into_iter().enumerate() {
            shares[i % threads].push(chunk);
        }
        let run_share = &run_share;
        let outcome = std::thread::scope(|scope| {
            let mut handles = Vec::new();
            let mut all_spawned = true;
            for mut share in shares {
                match std::thread::Builder::new().spawn_scoped(scope, move || {
                    run_share(&mut share);
                }) {
                    Ok(handle) => handles.push(handle),
                    Err(_) => all_spawned = false,
                }
            }
            // Join every handle (no short-circuit), then report whether all ran to the end.
            let joined: Vec<bool> = handles.into_iter().map(|h| h.join().is_ok()).collect();
            all_spawned && joined.iter().all(|&ok| ok)
        });
        if !outcome {
            // A spawn failed (its share was moved into the failed closure and dropped) or a
            // thread panicked: recompute everything on this thread, which gives the same bits.
            let mut chunks: Vec<(usize, &mut [f64])> =
                scores.chunks_mut(BLOCK).enumerate().collect();
            run_share(&mut chunks);
        }
    }

    let oob: Vec<f64> = scores.into_iter().filter(|s| !s.is_nan()).collect();
    if oob.len() < MIN_RESAMPLES as usize {
        return Err(StatsError::TooFewValues {
            needed: MIN_RESAMPLES as usize,
            got: oob.len(),
        });
    }
    let used = oob.len();
    let estimate = oob.iter().sum::<f64>() / used as f64;
    let spread =
        (oob.iter().map(|s| (s - estimate).powi(2)).sum::<f64>() / (used as f64 - 1.0)).sqrt();
    let plain = results.plain_scores();
    let selected = best_index(&plain, results.higher_is_better());
    Ok(BbcEstimate {
        estimate,
        interval: percentile_interval(oob, confidence),
        spread,
        resamples_requested: resamples,
        resamples_used: used as u32,
        selected,
        selected_score: plain.get(selected).copied().unwrap_or(f64::NAN),
    })
}

/// Index of the best value (first on a tie).
fn best_index(values: &[f64], higher_is_better: bool) -> usize {
    let mut best = 0;
    for (i, &v) in values.iter().enumerate().skip(1) {
        let better = if higher_is_better {
            v > values[best]
        } else {
            v < values[best]
        };
        if better {
            best = i;
        }
    }
    best
}

/// Buffers reused across the resamples of one thread.
struct Workspace {
    multiplicity: Vec<u32>,
    planes: Vec<Vec<u64>>,
    /// Weights of the out-of-bag rows (1 where the multiplicity is 0), for weighted metrics.
    out_of_bag: Vec<u32>,
}

impl Workspace {
    fn new(rows: usize) -> Self {
        Self {
            multiplicity: vec![0; rows],
            planes: Vec::new(),
            out_of_bag: Vec::new(),
        }
    }

    /// Draws one resample of the rows and returns the out-of-bag score of its in-bag winner, or
    /// NaN when every row was drawn.
    fn one_resample(&mut self, results: &OofResults<'_>, rng: &mut Rng) -> f64 {
        let rows = self.multiplicity.len();
        self.multiplicity.iter_mut().for_each(|m| *m = 0);
        for _ in 0..rows {
            let i = rng.below(rows as u64) as usize;
            self.multiplicity[i] += 1;
        }
        match results {
            OofResults::Correctness(m) => self.correctness_resample(m),
            OofResults::RowValues(m) => self.row_value_resample(m),
            OofResults::Weighted(m) => self.weighted_resample(*m),
        }
    }

    /// The in-bag winner by the metric on the rows with their multiplicities (a NaN metric never
    /// wins; the first configuration wins ties), scored on the out-of-bag rows.
    fn weighted_resample(&mut self, metric: &dyn WeightedMetric) -> f64 {
        let higher = metric.higher_is_better();
        let mut best: Option<(usize, f64)> = None;
        for c in 0..metric.configurations() {
            let value = metric.score(c, &self.multiplicity);
            if value.is_nan() {
                continue;
            }
            let better = match best {
                None => true,
                Some((_, b)) if higher => value > b,
                Some((_, b)) => value < b,
            };
            if better {
                best = Some((c, value));
            }
        }
        let Some((winner, _)) = best else {
            return f64::NAN;
        };
        self.out_of_bag.clear();
        self.out_of_bag
            .extend(self.multiplicity.iter().map(|&m| u32::from(m == 0)));
        if self.out_of_bag.iter().all(|&w| w == 0) {
            return f64::NAN;
        }
        metric.score(winner, &self.out_of_bag)
    }

    fn correctness_resample(&mut self, matrix: &CorrectnessMatrix) -> f64 {
        let words = matrix.words;
        let largest = self.multiplicity.iter().copied().max().unwrap_or(0);
        let plane_count = (u32::BITS - largest.leading_zeros()) as usize;
        self.planes.resize_with(plane_count.max(1), Vec::new);
        for plane in &mut self.planes {
            plane.clear();
            plane.resize(words, 0);
        }
        // Out-of-bag rows: in no plane. Bits past `rows` stay zero in the correctness words, but
        // the out-of-bag mask must exclude them too.
        let mut out_of_bag = vec![0u64; words];
        for (w, chunk) in self.multiplicity.chunks(64).enumerate() {
            let mut absent = 0u64;
            for (bit, &m) in chunk.iter().enumerate() {
                if m == 0 {
                    absent |= 1u64 << bit;
                }
                let mut rest = m;
                let mut b = 0;
                while rest != 0 {
                    if rest & 1 == 1 {
                        self.planes[b][w] |= 1u64 << bit;
                    }
                    rest >>= 1;
                    b += 1;
                }
            }
            out_of_bag[w] = absent;
        }
        let oob_rows: u64 = out_of_bag.iter().map(|w| u64::from(w.count_ones())).sum();
        if oob_rows == 0 {
            return f64::NAN;
        }
        let planes = &self.planes[..plane_count];
        let mut best = (0usize, 0u64);
        for c in 0..matrix.configurations() {
            let correct = matrix.words_of(c);
            let mut count = 0u64;
            for (b, plane) in planes.iter().enumerate() {
                let hits: u64 = plane
                    .iter()
                    .zip(correct)
                    .map(|(p, x)| u64::from((p & x).count_ones()))
                    .sum();
                count += hits << b;
            }
            if c == 0 || count > best.1 {
                best = (c, count);
            }
        }
        let hits: u64 = out_of_bag
            .iter()
            .zip(matrix.words_of(best.0))
            .map(|(o, x)| u64::from((o & x).count_ones()))
            .sum();
        hits as f64 / oob_rows as f64
    }

    fn row_value_resample(&mut self, matrix: &RowValueMatrix) -> f64 {
        let configs = matrix.values.len() / matrix.rows;
        let higher = matrix.direction == Direction::HigherIsBetter;
        let mut best = (0usize, f64::NAN);
        for c in 0..configs {
            let values = matrix.row_values(c);
            let total: f64 = values
                .iter()
                .zip(&self.multiplicity)
                .filter(|&(_, &m)| m > 0)
                .map(|(v, &m)| v * f64::from(m))
                .sum();
            let better = if higher {
                total > best.1
            } else {
                total < best.1
            };
            if c == 0 || better {
                best = (c, total);
            }
        }
        let (mut sum, mut count) = (0.0, 0u64);
        for (v, &m) in matrix.row_values(best.0).iter().zip(&self.multiplicity) {
            if m == 0 {
                sum += v;
                count += 1;
            }
        }
        if count == 0 {
            f64::NAN
        } else {
            sum / count as f64
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    /// `configs` configurations whose rows are correct independently with probability `p`.
    fn noise(rng: &mut Rng, configs: usize, rows: usize, p: f64) -> Vec<Vec<u8>> {
        (0..configs)
            .map(|_| (0..rows).map(|_| u8::from(rng.uniform() < p)).collect())
            .collect()
    }

    fn matrix(rows: &[Vec<u8>]) -> CorrectnessMatrix {
        let slices: Vec<&[u8]> = rows.iter().map(Vec::as_slice).collect();
        CorrectnessMatrix::from_rows(&slices).unwrap()
    }

    fn run(m: &CorrectnessMatrix, resamples: u32, seed: u64, threads: usize) -> BbcEstimate {
        bbc_cv(OofResults::Correctness(m), resamples, 0.95, seed, threads).unwrap()
    }

    #[test]
    fn identical_configurations_give_the_estimate_of_one() {
        // Copies tie on every in-bag count; the first wins, so every resample scores the same rows
        // of the same values as the single configuration does with the same draws.
        let mut rng = Rng::seed_from_u64(1);
        let one = noise(&mut rng, 1, 333, 0.7);
        let copies: Vec<Vec<u8>> = (0..7).map(|_| one[0].clone()).collect();
        let single = run(&matrix(&one), 1000, 5, 1);
        let many = run(&matrix(&copies), 1000, 5, 1);
        assert_eq!(single.estimate.to_bits(), many.estimate.to_bits());
        assert_eq!(single.interval, many.interval);
    }

    #[test]
    fn a_dominant_configuration_is_scored_without_optimism() {
        // Configuration 0 is correct wherever any other is (the others are it masked by noise):
        // it wins or ties (ties go to the first) every in-bag comparison, so BBC-CV scores it
        // alone. Given the out-of-bag set's size, that set is a uniformly random subset of the
        // rows (exchangeability), so the mean out-of-bag accuracy of one fixed configuration is an
        // unbiased estimate of its plain accuracy: equal within Monte Carlo error.
        let mut rng = Rng::seed_from_u64(2);
        let best = noise(&mut rng, 1, 500, 0.8).remove(0);
        let mut rows: Vec<Vec<u8>> = noise(&mut rng, 10, 500, 0.8)
            .into_iter()
            .map(|mask| mask.iter().zip(&best).map(|(m, b)| m & b).collect())
            .collect();
        rows.insert(0, best.clone());
        let all = run(&matrix(&rows), 2000, 3, 2);
        let alone = run(&matrix(&[best]), 2000, 3, 2);
        assert_eq!(all.estimate.to_bits(), alone.estimate.to_bits());
        assert_eq!(all.selected, 0);
        let mc = 4.0 * all.spread / f64::from(all.resamples_used).sqrt();
        assert!(
            (all.estimate - all.selected_score).abs() < mc,
            "{all:?} {mc}"
        );
    }

    #[test]
    fn more_noise_configurations_do_not_raise_the_estimate() {
        // One configuration with true accuracy 0.75 among noise at 0.70: more noise makes the
        // in-bag winner a noise configuration more often, whose out-of-bag accuracy is lower.
        // Same seed, so the two runs share their resample draws.
        let mut rng = Rng::seed_from_u64(3);
        let good = noise(&mut rng, 1, 400, 0.75);
        let extra = noise(&mut rng, 60, 400, 0.70);
        let few: Vec<Vec<u8>> = good.iter().chain(&extra[..5]).cloned().collect();
        let many: Vec<Vec<u8>> = good.iter().chain(&extra).cloned().collect();
        let a = run(&matrix(&few), 2000, 9, 2);
        let b = run(&matrix(&many), 2000, 9, 2);
        let mc = 4.0 * a.spread.max(b.spread) / 2000f64.sqrt();
        assert!(
            b.estimate <= a.estimate + mc,
            "{} then {}",
            a.estimate,
            b.estimate
        );
    }

    #[test]
    fn pure_noise_selection_optimism_is_removed() {
        // 100 configurations, all of true accuracy 0.7 on 200 rows: the best plain score is about
        // 0.7 + 2.5·√(0.21/200) ≈ 0.78 (expected maximum of 100 normals ≈ 2.5 sd; common
        // practice, no source). BBC-CV must remove a good part of it (0.04) without going far below the truth. (It
        // does not reach the truth: the winner's out-of-bag rows belong to the same realised data
        // on which it looked best.)
        let mut rng = Rng::seed_from_u64(4);
        let m = matrix(&noise(&mut rng, 100, 200, 0.7));
        let got = run(&m, 1000, 1, 2);
        assert!(got.selected_score > 0.75, "{}", got.selected_score);
        assert!(got.estimate < got.selected_score - 0.04, "{got:?}");
        // Nor may it turn pessimistic beyond noise: the truth of every configuration is 0.7.
        assert!(got.estimate > 0.7 - 0.04, "{got:?}");
        assert!(got.interval.lower < got.estimate && got.estimate < got.interval.upper);
    }

    #[test]
    fn same_seed_same_bits_for_any_thread_count() {
        let mut rng = Rng::seed_from_u64(5);
        let m = matrix(&noise(&mut rng, 13, 1000, 0.8));
        let one = run(&m, 1000, 42, 1);
        for threads in [1, 2, 3, 8] {
            let other = run(&m, 1000, 42, threads);
            assert_eq!(one.estimate.to_bits(), other.estimate.to_bits());
            assert_eq!(one.spread.to_bits(), other.spread.to_bits());
            assert_eq!(one.interval, other.interval);
        }
        assert_ne!(
            one.estimate.to_bits(),
            run(&m, 1000, 43, 2).estimate.to_bits()
        );
        // A number of resamples that is not a multiple of the block size.
        let odd = run(&m, 1001, 42, 2);
        assert_eq!(
            odd.estimate.to_bits(),
            run(&m, 1001, 42, 1).estimate.to_bits()
        );
        assert_eq!(odd.resamples_used, 1001);
    }

    #[test]
    fn bit_packed_and_per_row_paths_agree() {
        // Accuracy as the mean of 0/1 per-row values takes the same selections on the same draws
        // (ties go to the first in both), so the estimates agree to round-off.
        let mut rng = Rng::seed_from_u64(6);
        let rows = noise(&mut rng, 9, 150, 0.65);
        let packed = run(&matrix(&rows), 500, 8, 2);
        let values: Vec<f64> = rows.iter().flatten().map(|&b| f64::from(b)).collect();
        let m = RowValueMatrix::new(values, 150, Direction::HigherIsBetter).unwrap();
        let plain = bbc_cv(OofResults::RowValues(&m), 500, 0.95, 8, 2).unwrap();
        assert!((packed.estimate - plain.estimate).abs() < 1e-12);
        assert_eq!(packed.selected, plain.selected);
    }

    #[test]
    fn bad_arguments_and_the_work_bound_are_refused() {
        let m = CorrectnessMatrix::new(3, 50);
        let r = OofResults::Correctness(&m);
        assert!(bbc_cv(r, 99, 0.95, 1, 1).is_err());
        assert!(bbc_cv(r, 1000, 1.0, 1, 1).is_err());
        assert!(bbc_cv(r, 1000, 0.95, 1, 0).is_err());
        assert!(
            bbc_cv(
                OofResults::Correctness(&CorrectnessMatrix::new(0, 50)),
                1000,
                0.95,
                1,
                1
            )
            .is_err()
        );
        assert!(
            bbc_cv(
                OofResults::Correctness(&CorrectnessMatrix::new(2, 1)),
                1000,
                0.95,
                1,
                1
            )
            .is_err()
        );
        assert!(RowValueMatrix::new(vec![1.0, f64::NAN], 2, Direction::LowerIsBetter).is_err());
        assert!(RowValueMatrix::new(vec![1.0; 5], 2, Direction::LowerIsBetter).is_err());
        // 3000 configurations × 100,000 rows of correctness: one resample is about 2.4·10⁷ units,
        // so only about 1250 of the 2000 requested fit in the bound; the count used says so.
        let wide = CorrectnessMatrix::new(3000, 100_000);
        let per = OofResults::Correctness(&wide).work_per_resample();
        assert_eq!(per, 100_000 + 3000 * 1563 * 5);
        assert!(u64::from(MIN_RESAMPLES) * per < MAX_WORK && 2000 * per > MAX_WORK);
        // The cut and the refusal, on a small bound: 13 configurations × 1000 rows cost
        // 1000 + 13·16·5 = 2040 units per resample.
        let mut rng = Rng::seed_from_u64(7);
        let small = matrix(&noise(&mut rng, 13, 1000, 0.8));
        let r = OofResults::Correctness(&small);
        assert_eq!(r.work_per_resample(), 2040);
        let cut = bbc_cv_within(r, 1000, 0.95, 1, 2, 2040 * 150).unwrap();
        assert_eq!((cut.resamples_requested, cut.resamples_used), (1000, 150));
        assert!(bbc_cv_within(r, 1000, 0.95, 1, 2, 2040 * 99).is_err());
    }
}
