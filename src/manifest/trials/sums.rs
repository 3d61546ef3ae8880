//! The sums of a run of trials, made where the run is parsed and joined in file order.
//!
//! Pushing trials one by one ([`TrialReader::push`]) checks each trial's scores, feeds the
//! selection accumulator and looks for the selected configuration: all of it work on one trial
//! at a time, on the one thread that keeps the trials in file order. A thread that has parsed a
//! run of trials does the same work for the run ([`Sums::of`]), and the reader joins the run in
//! one step ([`TrialReader::take_sums`]): the ids and lines appended, the accumulator absorbed
//! ([`SelectionBias::absorb`]), each mean counted. The result is the one pushing the run's
//! trials would give, to the bit; a run with any trial the push would refuse is pushed trial by
//! trial instead, so that every problem is reported as before.

use super::{Candidate, Selected, TrialReader, same_scores};
use crate::diag::Place;
use crate::manifest::Metric;
use crate::stats::SelectionBias;

/// What the trials of a source are checked against, for the threads that parse it.
#[derive(Clone)]
pub(super) struct Checks {
    /// The scores a trial may have (the metric's range).
    lo: f64,
    hi: f64,
    /// 1, or -1 for a metric where lower is better (the accumulator maximises).
    sign: f64,
    folds: usize,
    selected: Option<Selected>,
}

impl Checks {
    pub(super) fn new(metric: Metric, folds: usize, selected: Option<Selected>) -> Checks {
        let (lo, hi) = metric.range();
        let sign = if metric.higher_is_better() { 1.0 } else { -1.0 };
        Checks {
            lo,
            hi,
            sign,
            folds,
            selected,
        }
    }

    /// Whether [`TrialReader::push`] takes `scores` without a problem.
    fn passes(&self, scores: &[f64]) -> bool {
        // Every score looked at (no early exit, so the loop needs no branch per score).
        scores.len() == self.folds
            && scores.iter().fold(true, |ok, s| {
                ok & (s.is_finite() & (*s >= self.lo) & (*s <= self.hi))
            })
    }
}

/// The sums of a run of trials that all pass the checks.
pub(super) struct Sums {
    /// Whether every trial of the run passes; the sums are of no use otherwise.
    clean: bool,
    bias: SelectionBias,
    /// Each trial's mean score, for the histogram, in order.
    means: Vec<f64>,
    signed: Vec<f64>,
    /// Trials whose scores are the selected configuration's.
    matching: u64,
    /// The first of them, by its place in the run.
    first_match: Option<usize>,
    /// The last trial with the id the manifest names, by its place in the run.
    named: Option<usize>,
}

impl Default for Sums {
    fn default() -> Self {
        Sums {
            clean: false,
            bias: SelectionBias::new(0),
            means: Vec::new(),
            signed: Vec::new(),
            matching: 0,
            first_match: None,
            named: None,
        }
    }
}

impl Sums {
    /// The sums of the trials `ids[i]`, `scores[i * folds..(i + 1) * folds]`, in the room of
    /// `reuse` (an earlier run's).
    pub(super) fn of<'a>(
        checks: &Checks,
        ids: impl Iterator<Item = &'a str>,
        scores: &[f64],
        mut reuse: Sums,
    ) -> Sums {
        reuse.bias = SelectionBias::new(checks.folds);
        reuse.means.clear();
        reuse.matching = 0;
        reuse.first_match = None;
        reuse.named = None;
        reuse.clean = checks.folds > 0;
        if !reuse.clean {
            return reuse;
        }
        for (i, (id, scores)) in ids.zip(scores.chunks_exact(checks.folds)).enumerate() {
            if !checks.passes(scores) {
                reuse.clean = false;
                return reuse;
            }
            let signed = if checks.sign == 1.0 {
                scores
            } else {
                reuse.signed.clear();
                reuse.signed.extend(scores.iter().map(|s| checks.sign * s));
                &reuse.signed
            };
            if reuse.bias.push(signed).is_err() {
                reuse.clean = false;
                return reuse;
            }
            if let Some(selected) = &checks.selected {
                if same_scores(scores, &selected.folds) {
                    reuse.matching += 1;
                    reuse.first_match.get_or_insert(i);
                }
                if selected.named.as_ref().is_some_and(|named| named.id == id) {
                    reuse.named = Some(i);
                }
            }
            reuse
                .means
                .push(scores.iter().sum::<f64>() / scores.len() as f64);
        }
        reuse
    }
}

impl TrialReader<'_> {
    /// Joins a parsed run of trials, `ids[id_ends[i - 1]..id_ends[i]]` on `lines[i]` (after
    /// `first_line`) with `scores[i * folds..]`, by its sums: what pushing them one by one would
    /// leave. False, with nothing changed, when the run must be pushed trial by trial (a trial
    /// the checks refuse, a line past 2^32, ids past 4 GiB, problems already too many).
    pub(super) fn take_sums(
        &mut self,
        sums: &Sums,
        (ids, id_ends): (&str, &[usize]),
        lines: &[u64],
        scores: &[f64],
        first_line: u64,
    ) -> bool {
        let last_line = lines.last().map_or(Some(0), |l| first_line.checked_add(*l));
        if !sums.clean
            || sums.means.len() != lines.len()
            || self.full()
            || last_line.is_none_or(|l| u32::try_from(l).is_err())
        {
            return false;
        }
        let start = self.ids.len();
        if !self.ids.append(ids.as_bytes(), id_ends) {
            return false;
        }
        if self.bias.absorb(&sums.bias).is_err() {
            self.ids.truncate(start);
            return false;
        }
        // Every line fits: the last one, the largest, does.
        self.lines.extend(
            lines
                .iter()
                .map(|l| u32::try_from(first_line + l).unwrap_or(0)),
        );
        let (folds, pushed) = (self.folds, self.pushed);
        let trial = |i: usize| {
            let from = i.checked_sub(1).map_or(0, |before| id_ends[before]);
            Candidate {
                index: pushed + i,
                id: ids[from..id_ends[i]].to_owned(),
                place: Place {
                    line: Some(first_line + lines[i]),
                    column: None,
                },
                key: "fold_scores".to_owned(),
                scores: scores[i * folds..(i + 1) * folds].to_vec(),
            }
        };
        if let Some(selected) = &self.selected {
            self.matching += sums.matching;
            let found = match selected.named {
                Some(_) => sums.named,
                None => sums.first_match.filter(|_| self.candidate.is_none()),
            };
            if let Some(i) = found {
                self.candidate = Some(trial(i));
            }
        }
        self.pushed += lines.len();
        for &mean in &sums.means {
            self.histogram.push(mean);
        }
        self.tag = 2 * self.ids.len() as u64;
        true
    }
}
