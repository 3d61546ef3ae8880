//! The metric, its interval and paired comparisons, recomputed from predictions (pure).
//!
//! Intervals by metric: accuracy, a binomial interval on the count of correct rows (the
//! policy's method); ROC AUC, DeLong et al. (1988) by the algorithm of Sun & Xu (2014), widened
//! to a score-type interval where that is wider, so it keeps its width at AUC = 0, ½ (all tied)
//! and 1 and with one row per class (`stats::roc_auc_delong`); log loss
//! and MAE, a Student-t interval over per-row losses; RMSE, the square root of a t interval on
//! the mean squared error; balanced accuracy and F1, a seeded bootstrap that resamples the
//! confusion-matrix counts; R², a seeded row bootstrap. Resample count and seed come from the
//! policy, so a result is reproducible; every bootstrap lowers its count when a resample is
//! costly (many rows, or many classes), refuses when even the
//! fewest resamples would not finish in seconds, and records the count it used
//! ([`affordable_resamples`]).

use serde::Serialize;

use super::{Class, Columns, PredictionSet, count_by_id, pair_by_id};
use crate::manifest::Metric;
use crate::manifest::raw::F1Mode;
use crate::stats::{
    self, ConfusionMatrix, F1Average, Interval, IntervalSettings as Settings, ProportionMethod,
};

/// How a recomputed interval was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, schemars::JsonSchema)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Method {
    Proportion {
        method: ProportionMethod,
    },
    /// DeLong et al. (1988), widened to the score-type AUC interval where that is wider.
    DeLong,
    /// The score-type AUC interval alone: a class has one row, so DeLong's variance is undefined.
    MannWhitneyScore,
    RowMean,
    Bootstrap {
        resamples: u32,
        seed: u64,
    },
}

/// The metric recomputed from predictions.
#[derive(Debug, Clone, PartialEq)]
pub struct Recomputed {
    pub value: f64,
    pub interval: Interval,
    pub method: Method,
    pub rows: u64,
    /// Correct rows, for accuracy.
    pub correct: Option<u64>,
    /// For ROC AUC, the model's DeLong pieces on all its rows, in file order, so that the
    /// paired test with a baseline on the same rows ([`compare`]) does not compute them again.
    pub auc_pieces: Option<stats::AucPieces>,
}

/// Bootstrap work per interval is capped at this many draws (cells of the resampled table, or
/// rows), about half a second at ~10 ns a draw (measured: 4,096 classes × 2,000 resamples,
/// 3.4e10 cell draws, took 423 s, 12 ns each), so a check of many models stays fast: above it the
/// resample count is lowered and the report states the count used.
const BOOTSTRAP_DRAWS: u64 = 50_000_000;

/// Fewest resamples an interval is given (below 100 a 95% interval's tails rest on two or three
/// draws; common practice, no source, as `stats::bootstrap`'s own minimum).
const MIN_RESAMPLES: u32 = 100;

/// Most draws a bootstrap may take at its fewest resamples (about ten seconds); past that it
/// is refused rather than run.
const BOOTSTRAP_DRAWS_MOST: u64 = 1_000_000_000;

/// The resamples a bootstrap costing `draws` per resample uses: the policy's `wanted`, or as
/// many as fit [`BOOTSTRAP_DRAWS`] but at least 100; `Err` when even 100 would pass
/// [`BOOTSTRAP_DRAWS_MOST`]. `what` names the bootstrap for the message. Every resampling
/// method goes through here, so total work is bounded whatever the rows, classes or policy.
pub fn affordable_resamples(wanted: u32, draws: u64, what: &str) -> Result<u32, String> {
    let draws = draws.max(1);
    if draws.saturating_mul(u64::from(MIN_RESAMPLES)) > BOOTSTRAP_DRAWS_MOST {
        return Err(format!(
            "{what} would take {draws} draws per resample, and even {MIN_RESAMPLES} resamples \
             pass the limit of {BOOTSTRAP_DRAWS_MOST} draws"
        ));
    }
    let affordable = u32::try_from(BOOTSTRAP_DRAWS / draws).unwrap_or(u32::MAX);
    Ok(wanted.min(affordable).max(MIN_RESAMPLES))
}

fn f1_average(mode: F1Mode, positive: Option<u32>) -> Result<F1Average, String> {
    Ok(match mode {
        F1Mode::Binary => F1Average::Binary {
            positive: positive.ok_or("binary F1 needs `positive_class`")? as usize,
        },
        F1Mode::Macro => F1Average::Macro,
        F1Mode::Micro => F1Average::Micro,
    })
}

fn confusion(set: &PredictionSet) -> Result<ConfusionMatrix, String> {
    let Columns::Classification {
        classes,
        actual,
        predicted,
        ..
    } = &set.columns
    else {
        return Err("a classification metric needs a classification predictions file".into());
    };
    let predicted = predicted
        .as_ref()
        .ok_or("this metric needs a `prediction` column")?;
    let mut m = ConfusionMatrix::new(classes.len().max(1)).map_err(|e| e.to_string())?;
    for (&a, &p) in actual.iter().zip(predicted) {
        m.push(a as usize, p as usize).map_err(|e| e.to_string())?;
    }
    Ok(m)
}

fn binary_scores(set: &PredictionSet) -> Result<(&[f64], Vec<bool>), String> {
    let Columns::Classification {
        classes,
        actual,
        score,
        ..
    } = &set.columns
    else {
        return Err("ROC AUC needs a classification predictions file".into());
    };
    if classes.len() != 2 {
        return Err(format!(
            "ROC AUC here is for two classes; the file has {}",
            classes.len()
        ));
    }
    let score = score.as_ref().ok_or("ROC AUC needs a `score` column")?;
    let positive = set.positive.ok_or("ROC AUC needs `positive_class`")?;
    Ok((
        score,
        actual.iter().map(|&a| u32::from(a) == positive).collect(),
    ))
}

/// Recomputes `metric` with its interval; `Err` says why it cannot be. The interval is clipped
/// to the metric's range ([`Metric::range`]): the t intervals over per-row losses (log loss,
/// MAE) reach below 0 when a few large losses dominate the spread, and a report must not show a
/// negative loss as plausible.
pub fn recompute(
    set: &PredictionSet,
    metric: Metric,
    f1: F1Mode,
    s: Settings,
) -> Result<Recomputed, String> {
    let mut r = recompute_unclipped(set, metric, f1, s)?;
    let (low, high) = metric.range();
    r.interval = Interval {
        lower: r.interval.lower.clamp(low, high),
        upper: r.interval.upper.clamp(low, high),
    };
    Ok(r)
}

fn recompute_unclipped(
    set: &PredictionSet,
    metric: Metric,
    f1: F1Mode,
    s: Settings,
) -> Result<Recomputed, String> {
    let rows = set.rows() as u64;
    let err = |e: stats::StatsError| e.to_string();
    match metric {
        Metric::Accuracy => {
            let m = confusion(set)?;
            let correct: u64 = (0..m.classes())
                .map(|k| m.counts()[k * m.classes() + k])
                .sum();
            Ok(Recomputed {
                value: m.accuracy().map_err(err)?,
                interval: stats::proportion_interval(correct, m.total(), s.confidence, s.method)
                    .map_err(err)?,
                method: Method::Proportion { method: s.method },
                rows,
                correct: Some(correct),
                auc_pieces: None,
            })
        }
        Metric::BalancedAccuracy | Metric::F1 => {
            let m = confusion(set)?;
            // Only F1 has an averaging mode; balanced accuracy never needs `positive_class`.
            let average = match metric {
                Metric::F1 => Some(f1_average(f1, set.positive)?),
                _ => None,
            };
            let k = m.classes() as u64;
            let resamples = affordable_resamples(
                s.resamples,
                k * k,
                &format!("the bootstrap of a {k}-class confusion matrix"),
            )?;
            let statistic = |c: &ConfusionMatrix| match average {
                Some(average) => c.f1(average),
                None => c.balanced_accuracy(),
            };
            Ok(Recomputed {
                value: statistic(&m).map_err(err)?,
                interval: stats::bootstrap_confusion(
                    &m,
                    statistic,
                    resamples,
                    s.confidence,
                    s.seed,
                )
                .map_err(err)?,
                method: Method::Bootstrap {
                    resamples,
                    seed: s.seed,
                },
                rows,
                correct: None,
                auc_pieces: None,
            })
        }
        Metric::RocAuc => {
            let (scores, labels) = binary_scores(set)?;
            let (auc, pieces) =
                stats::roc_auc_delong_with_pieces(scores, &labels, s.confidence).map_err(err)?;
            Ok(Recomputed {
                value: auc.auc,
                interval: auc.interval,
                method: if auc.variance.is_some() {
                    Method::DeLong
                } else {
                    Method::MannWhitneyScore
                },
                rows,
                correct: None,
                auc_pieces: Some(pieces),
            })
        }
        Metric::LogLoss => {
            let Columns::Classification {
                prob_true: Some(p), ..
            } = &set.columns
            else {
                return Err("log loss needs probabilities: a `score` in [0, 1] for two classes, or `prob_<class>` columns".into());
            };
            let mut loss = stats::LogLoss::new();
            for &v in p {
                loss.push(v).map_err(err)?;
            }
            Ok(Recomputed {
                value: loss.value().map_err(err)?,
                interval: loss.interval(s.confidence).map_err(err)?,
                method: Method::RowMean,
                rows,
                correct: None,
                auc_pieces: None,
            })
        }
        Metric::Rmse | Metric::Mae | Metric::R2 => {
            let Columns::Regression { target, prediction } = &set.columns else {
                return Err("a regression metric needs a regression predictions file".into());
            };
            let mut errors = stats::RegressionErrors::new();
            for (&t, &y) in target.iter().zip(prediction) {
                errors.push(t, y).map_err(err)?;
            }
            let (value, interval, method) = match metric {
                Metric::Rmse => {
                    let mse = errors.mse_interval(s.confidence).map_err(err)?;
                    let interval = Interval {
                        lower: mse.lower.max(0.0).sqrt(),
                        upper: mse.upper.max(0.0).sqrt(),
                    };
                    (errors.rmse().map_err(err)?, interval, Method::RowMean)
                }
                Metric::Mae => (
                    errors.mae().map_err(err)?,
                    errors.mean_abs_error_interval(s.confidence).map_err(err)?,
                    Method::RowMean,
                ),
                _ => {
                    let pairs: Vec<(f64, f64)> = target
                        .iter()
                        .copied()
                        .zip(prediction.iter().copied())
                        .collect();
                    let resamples = affordable_resamples(
                        s.resamples,
                        rows,
                        &format!("the row bootstrap of {rows} rows"),
                    )?;
                    (
                        errors.r2().map_err(err)?,
                        stats::bootstrap_rows(
                            &pairs,
                            stats::RegressionStatistic::R2,
                            resamples,
                            s.confidence,
                            s.seed,
                        )
                        .map_err(err)?,
                        Method::Bootstrap {
                            resamples,
                            seed: s.seed,
                        },
                    )
                }
            };
            Ok(Recomputed {
                value,
                interval,
                method,
                rows,
                correct: None,
                auc_pieces: None,
            })
        }
    }
}

/// A paired comparison of a model with its baseline on the same rows (model − baseline, in the
/// direction where positive is better).
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// Rows present in both files.
    pub paired_rows: u64,
    /// Ids found in only one of the two files.
    pub unpaired: u64,
    /// Rows whose true label or target differs between the two files.
    pub label_mismatches: u64,
    /// The improvement (model better than baseline when positive) and its interval.
    pub improvement: f64,
    pub interval: Interval,
    /// The p-value to report: the larger of the named test's and the sign-flip bound
    /// ([`stats::floored_p`]).
    pub p_value: f64,
    /// The named test's own p-value.
    pub test_p_value: f64,
    /// The sign-flip bound: the exact sign-flip p-value on at most 16 per-row (or per-fold)
    /// differences, else 2/2^m for the m rows on which the two models differ.
    pub p_floor: f64,
    /// The test used; a bootstrap names the resamples it used.
    pub test: String,
    /// Whether the test found no spread in the differences (every difference the same, up to
    /// float rounding: [`stats::no_spread`] of its interval), so it measured no uncertainty.
    pub no_spread: bool,
    /// McNemar's discordant counts: rows only the model gets right, rows only the baseline does.
    pub discordant: Option<(u64, u64)>,
}

/// Pairs past which [`count_where`] counts on two threads.
const COUNT_ON_TWO_THREADS: usize = 1 << 20;

/// The pairs (row in the model, row in the baseline) for which `holds` is true: on two
/// threads, a half each, past [`COUNT_ON_TWO_THREADS`] pairs. The columns are read in id order,
/// out of file order, so a pass is bound by memory latency; a count is a whole number, the same
/// on any number of threads.
fn count_where(pairs: &[(u32, u32)], holds: impl Fn(usize, usize) -> bool + Sync) -> u64 {
    count_where_on(pairs, holds, pairs.len() >= COUNT_ON_TWO_THREADS)
}

/// [`count_where`] on one thread or on two.
fn count_where_on(
    pairs: &[(u32, u32)],
    holds: impl Fn(usize, usize) -> bool + Sync,
    two_threads: bool,
) -> u64 {
    let count = |part: &[(u32, u32)]| {
        part.iter()
            .map(|&(i, j)| u64::from(holds(i as usize, j as usize)))
            .sum::<u64>()
    };
    if !two_threads {
        return count(pairs);
    }
    let (first, second) = pairs.split_at(pairs.len() / 2);
    let (b, a) = crate::parallel::both(|| count(second), || count(first));
    a + b
}

/// The baseline's class indices translated to the model's, by name.
fn to_model(model_classes: &[String], baseline_classes: &[String]) -> Vec<Option<Class>> {
    baseline_classes
        .iter()
        .map(|name| {
            model_classes
                .iter()
                .position(|c| c == name)
                .map(|i| i as Class)
        })
        .collect()
}

/// [`compare`] for accuracy, from McNemar's counts alone, tallied as the ids are walked
/// ([`count_by_id`]; a pass reads the columns out of file order): b, rows only the model gets
/// right; c, rows only the baseline does; and the rows whose labels differ. Each side is given
/// as its class names, labels and predictions.
fn compare_accuracy(
    model: &PredictionSet,
    baseline: &PredictionSet,
    (classes_a, actual_a, predicted_a): (&[String], &[Class], &[Class]),
    (classes_b, actual_b, predicted_b): (&[String], &[Class], &[Class]),
    confidence: f64,
) -> Result<Comparison, String> {
    let err = |e: stats::StatsError| e.to_string();
    let to_model = to_model(classes_a, classes_b);
    let counted = count_by_id(model, baseline, |i, j| {
        let (right_a, right_b) = (predicted_a[i] == actual_a[i], predicted_b[j] == actual_b[j]);
        [
            u64::from(to_model[actual_b[j] as usize] != Some(actual_a[i])),
            u64::from(right_a && !right_b),
            u64::from(right_b && !right_a),
        ]
    });
    let mut comparison = Comparison::new(counted.pairs, counted.unpaired)?;
    let [mismatches, b, c] = counted.sums;
    comparison.label_mismatches = mismatches;
    let test = stats::mcnemar_auto(b, c, stats::MCNEMAR_EXACT_BELOW).map_err(err)?;
    comparison.improvement = (b as f64 - c as f64) / counted.pairs as f64;
    comparison.interval =
        stats::paired_accuracy_difference(b, c, counted.pairs, confidence).map_err(err)?;
    comparison.set_p(test.p_value, None, b + c)?;
    comparison.test = if test.exact {
        "McNemar, exact binomial"
    } else {
        "McNemar, chi-square with continuity correction"
    }
    .into();
    comparison.discordant = Some((b, c));
    Ok(comparison)
}

/// Compares the model with its baseline on their shared rows. `model_pieces` are the model's
/// DeLong pieces on all its rows ([`Recomputed::auc_pieces`]), used for ROC AUC when every model
/// row is paired (a component depends on every other row, so a subset is computed afresh).
pub fn compare(
    model: &PredictionSet,
    baseline: &PredictionSet,
    metric: Metric,
    f1: F1Mode,
    settings: Settings,
    model_pieces: Option<&stats::AucPieces>,
) -> Result<Comparison, String> {
    let confidence = settings.confidence;
    let err = |e: stats::StatsError| e.to_string();
    if metric == Metric::Accuracy
        && let (
            Columns::Classification {
                classes: ca,
                actual: aa,
                predicted: Some(pa),
                ..
            },
            Columns::Classification {
                classes: cb,
                actual: ab,
                predicted: Some(pb),
                ..
            },
        ) = (&model.columns, &baseline.columns)
    {
        return compare_accuracy(model, baseline, (ca, aa, pa), (cb, ab, pb), confidence);
    }
    let (pairs, unpaired) = pair_by_id(model, baseline);
    let mut comparison = Comparison::new(pairs.len() as u64, unpaired)?;
    match (&model.columns, &baseline.columns) {
        (
            Columns::Classification {
                classes: ca,
                actual: aa,
                predicted: pa,
                score: sa,
                ..
            },
            Columns::Classification {
                classes: cb,
                actual: ab,
                predicted: pb,
                score: sb,
                ..
            },
        ) => {
            // With both prediction columns, accuracy is compared by `compare_accuracy`.
            if metric == Metric::Accuracy {
                return Err(if pa.is_none() {
                    "McNemar's test needs the model's `prediction` column"
                } else {
                    "McNemar's test needs the baseline's `prediction` column"
                }
                .into());
            }
            let to_model = to_model(ca, cb);
            comparison.label_mismatches =
                count_where(&pairs, |i, j| to_model[ab[j] as usize] != Some(aa[i]));
            match metric {
                Metric::RocAuc => {
                    let (sa, sb) = (
                        sa.as_ref()
                            .ok_or("DeLong's test needs the model's `score` column")?,
                        sb.as_ref()
                            .ok_or("DeLong's test needs the baseline's `score` column")?,
                    );
                    let positive = model.positive.ok_or("ROC AUC needs `positive_class`")?;
                    let labels: Vec<bool> = pairs
                        .iter()
                        .map(|&(i, _)| u32::from(aa[i as usize]) == positive)
                        .collect();
                    let xb: Vec<f64> = pairs.iter().map(|&(_, j)| sb[j as usize]).collect();
                    let every_row = pairs.len() == model.rows();
                    let paired = match model_pieces.filter(|p| every_row && p.rows() == sa.len()) {
                        Some(pieces) => {
                            let a = pieces.reordered(pairs.iter().map(|&(i, _)| i as usize));
                            stats::roc_auc_delong_paired_with(&a, &xb, &labels, confidence)
                        }
                        None => {
                            let xa: Vec<f64> = pairs.iter().map(|&(i, _)| sa[i as usize]).collect();
                            stats::roc_auc_delong_paired(&xa, &xb, &labels, confidence)
                        }
                    }
                    .map_err(|e| format!("DeLong's paired test: {e}"))?;
                    comparison.improvement = paired.difference;
                    comparison.interval = paired.interval;
                    let differing = pairs
                        .iter()
                        .zip(&xb)
                        .filter(|&(&(i, _), b)| sa[i as usize] != *b)
                        .count();
                    comparison.set_p(paired.p_value, None, differing as u64)?;
                    comparison.test = "DeLong, paired".into();
                }
                Metric::LogLoss => {
                    let (
                        Columns::Classification {
                            prob_true: Some(qa),
                            ..
                        },
                        Columns::Classification {
                            prob_true: Some(qb),
                            ..
                        },
                    ) = (&model.columns, &baseline.columns)
                    else {
                        return Err(
                            "a paired log-loss test needs probabilities in both files".into()
                        );
                    };
                    let result = paired_losses(
                        &pairs,
                        |i| -qa[i].max(1e-15).ln(),
                        |j| -qb[j].max(1e-15).ln(),
                        confidence,
                    )?;
                    comparison.fill_t(result)?;
                }
                Metric::F1 | Metric::BalancedAccuracy => {
                    let (pa, pb) = (
                        pa.as_ref()
                            .ok_or("the paired bootstrap needs the model's `prediction` column")?,
                        pb.as_ref().ok_or(
                            "the paired bootstrap needs the baseline's `prediction` column",
                        )?,
                    );
                    let k = ca.len();
                    if k > 64 {
                        return Err(format!(
                            "the paired bootstrap is limited to 64 classes; the file has {k}"
                        ));
                    }
                    let mut joint = vec![0u64; k * k * k];
                    let mut differing = 0u64;
                    for &(i, j) in &pairs {
                        let b_pred = to_model[pb[j as usize] as usize].ok_or(
                            "the baseline predicts a class the model's file does not have",
                        )?;
                        differing += u64::from(b_pred != pa[i as usize]);
                        let cell = (aa[i as usize] as usize * k + pa[i as usize] as usize) * k
                            + b_pred as usize;
                        joint[cell] += 1;
                    }
                    // Only F1 has an averaging mode; balanced accuracy never needs `positive_class`.
                    let average = match metric {
                        Metric::F1 => Some(f1_average(f1, model.positive)?),
                        _ => None,
                    };
                    let statistic = |c: &ConfusionMatrix| match average {
                        Some(average) => c.f1(average),
                        None => c.balanced_accuracy(),
                    };
                    let resamples = affordable_resamples(
                        settings.resamples,
                        (k * k * k) as u64,
                        &format!("the paired bootstrap of {k} classes"),
                    )?;
                    let r = stats::bootstrap_paired_confusion(
                        k,
                        &joint,
                        statistic,
                        resamples,
                        confidence,
                        settings.seed,
                    )
                    .map_err(err)?;
                    comparison.improvement = r.difference;
                    comparison.interval = r.interval;
                    comparison.set_p(r.p_value, None, differing)?;
                    comparison.test = format!(
                        "paired bootstrap of the joint confusion table, {resamples} resamples"
                    );
                }
                other => {
                    return Err(format!(
                        "no paired test for {} applies to a classification file",
                        other.name()
                    ));
                }
            }
        }
        (
            Columns::Regression {
                target: ta,
                prediction: ya,
            },
            Columns::Regression {
                target: tb,
                prediction: yb,
            },
        ) => {
            comparison.label_mismatches = count_where(&pairs, |i, j| ta[i] != tb[j]);
            let loss: fn(f64, f64) -> f64 = match metric {
                Metric::Mae => |t, y| (t - y).abs(),
                _ => |t, y| (t - y) * (t - y),
            };
            let result = paired_losses(
                &pairs,
                |i| loss(ta[i], ya[i]),
                |j| loss(tb[j], yb[j]),
                confidence,
            )?;
            if metric == Metric::Mae {
                comparison.fill_t(result)?;
            } else {
                // RMSE and R²: the paired t on squared errors decides (equal MSE is equal RMSE
                // and equal R² on the same targets); the improvement and its interval are
                // restated in the metric's own units.
                let mut d = stats::RegressionDifference::new();
                for &(i, j) in &pairs {
                    d.push(ta[i as usize], ya[i as usize], yb[j as usize]);
                }
                let squared = result.t;
                comparison.fill_t(result)?;
                if metric == Metric::Rmse {
                    let e = d.rmse(confidence).map_err(err)?;
                    comparison.improvement = e.difference;
                    comparison.interval = e.interval;
                    comparison.test =
                        "paired t on per-row squared errors; RMSE difference by the delta method"
                            .into();
                } else {
                    let scale = d.r2_per_squared_error().map_err(err)?;
                    comparison.improvement = squared.mean * scale;
                    comparison.interval = Interval {
                        lower: squared.interval.lower * scale,
                        upper: squared.interval.upper * scale,
                    };
                    comparison.test = "paired t on per-row squared errors, in R² units".into();
                }
            }
        }
        _ => return Err("the model and the baseline predictions are of different kinds".into()),
    }
    // A t-test judged its spread on the raw differences (fill_t); every test is also judged on
    // the interval it reports.
    comparison.no_spread |= stats::no_spread(comparison.interval);
    Ok(comparison)
}

/// A paired t-test on per-row differences, with what the sign-flip bound needs: the count of
/// rows whose difference is not 0 and, for at most [`stats::SIGN_FLIP_EXACT_UP_TO`] rows, the
/// differences themselves.
struct PairedLosses {
    t: stats::PairedTResult,
    informative: u64,
    small: Option<Vec<f64>>,
}

/// Paired t on per-row loss differences, as baseline loss − model loss (positive is better).
fn paired_losses(
    pairs: &[(u32, u32)],
    model_loss: impl Fn(usize) -> f64,
    baseline_loss: impl Fn(usize) -> f64,
    confidence: f64,
) -> Result<PairedLosses, String> {
    let mut t = stats::PairedT::new();
    let mut informative = 0u64;
    let small_enough = pairs.len() <= stats::SIGN_FLIP_EXACT_UP_TO;
    let mut small = Vec::new();
    for &(i, j) in pairs {
        let d = baseline_loss(j as usize) - model_loss(i as usize);
        informative += u64::from(d != 0.0);
        if small_enough {
            small.push(d);
        }
        t.push(d);
    }
    Ok(PairedLosses {
        t: t.finish(confidence).map_err(|e| e.to_string())?,
        informative,
        small: small_enough.then_some(small),
    })
}

impl Comparison {
    /// A comparison of `paired_rows` shared rows, `unpaired` ids in only one file, before its
    /// test; an error when no row is shared.
    fn new(paired_rows: u64, unpaired: usize) -> Result<Comparison, String> {
        if paired_rows == 0 {
            return Err("the model and the baseline share no row ids".into());
        }
        Ok(Comparison {
            paired_rows,
            unpaired: unpaired as u64,
            label_mismatches: 0,
            improvement: 0.0,
            interval: Interval {
                lower: 0.0,
                upper: 0.0,
            },
            p_value: 1.0,
            test_p_value: 1.0,
            p_floor: 1.0,
            test: String::new(),
            no_spread: false,
            discordant: None,
        })
    }

    /// Records the named test's p-value and reports the larger of it and the sign-flip bound.
    fn set_p(
        &mut self,
        test_p: f64,
        diffs: Option<&[f64]>,
        informative: u64,
    ) -> Result<(), String> {
        let (p, bound) = stats::floored_p(test_p, diffs, informative).map_err(|e| e.to_string())?;
        self.test_p_value = test_p;
        self.p_floor = bound;
        self.p_value = p;
        Ok(())
    }

    fn fill_t(&mut self, losses: PairedLosses) -> Result<(), String> {
        self.improvement = losses.t.mean;
        self.interval = losses.t.interval;
        self.no_spread = stats::no_spread(losses.t.interval);
        self.test = "paired t on per-row losses".into();
        self.set_p(
            losses.t.p_value,
            losses.small.as_deref(),
            losses.informative,
        )
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use proptest::prelude::*;

    use super::*;
    use crate::evidence::IdArena;

    /// Counts over pairs split between two threads against the counts taken by filtering the
    /// pairs directly (an odd number of pairs, so the halves differ in size).
    #[test]
    fn a_count_on_two_threads_counts_what_filtering_counts() {
        let mut state = 0x853c_49e6_748f_ea9bu64;
        let pairs: Vec<(u32, u32)> = (0..10_001)
            .map(|_| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                ((state % 1000) as u32, (state >> 32) as u32 % 777)
            })
            .collect();
        let third = |i: usize, _: usize| i.is_multiple_of(3);
        let fifth = |_: usize, j: usize| j.is_multiple_of(5);
        let every = |_: usize, _: usize| true;
        let direct = [
            pairs.iter().filter(|&&(i, _)| i.is_multiple_of(3)).count() as u64,
            pairs.iter().filter(|&&(_, j)| j.is_multiple_of(5)).count() as u64,
            pairs.len() as u64,
        ];
        for two_threads in [true, false] {
            let counts = [
                count_where_on(&pairs, third, two_threads),
                count_where_on(&pairs, fifth, two_threads),
                count_where_on(&pairs, every, two_threads),
            ];
            assert_eq!(counts, direct);
        }
        assert_eq!(count_where_on(&[], every, true), 0);
    }

    /// A predictions set of `columns`, its rows named `r<row>` in `rows` order.
    fn set_of(rows: &[usize], columns: Columns) -> PredictionSet {
        let mut ids = IdArena::default();
        for &r in rows {
            ids.push(format!("r{r:04}").as_bytes()).unwrap();
        }
        let order = ids.sorted();
        PredictionSet {
            file: "p.csv".into(),
            ids,
            columns,
            positive: Some(1),
            fingerprint: String::new(),
            order,
        }
    }

    /// A binary predictions set with scores; rows named `r<index of rows[k]>` in `rows` order.
    fn binary_set(rows: &[usize], positive: &[bool], score: &[f64]) -> PredictionSet {
        set_of(
            rows,
            Columns::Classification {
                classes: vec!["no".into(), "yes".into()],
                actual: rows.iter().map(|&r| Class::from(positive[r])).collect(),
                predicted: None,
                score: Some(rows.iter().map(|&r| score[r]).collect()),
                prob_true: None,
            },
        )
    }

    /// An accuracy predictions set: ids `r<row>` in `rows` order, with the labels and
    /// predictions (classes "no" and "yes" as 0 and 1) of each line of the file in turn.
    fn accuracy_set(
        rows: &[usize],
        actual: &[Class],
        predicted: Option<&[Class]>,
    ) -> PredictionSet {
        set_of(
            rows,
            Columns::Classification {
                classes: vec!["no".into(), "yes".into()],
                actual: actual.to_vec(),
                predicted: predicted.map(<[Class]>::to_vec),
                score: None,
                prob_true: None,
            },
        )
    }

    /// McNemar's counts tallied as the ids are walked, counted by hand: rows r0-r4 shared (the
    /// baseline lists them in another order), r5 the model's only, r6 the baseline's only.
    #[test]
    fn accuracy_counts_discordant_rows_by_id() {
        let settings = Settings {
            confidence: 0.95,
            method: ProportionMethod::Wilson,
            resamples: 100,
            seed: 1,
        };
        // Model right on r0, r1, r2, r5; baseline right on r0, r3 and wrong on r1, r2, r4;
        // labels differ on r4.
        let model = accuracy_set(
            &[0, 1, 2, 3, 4, 5],
            &[1, 0, 1, 0, 1, 1],
            Some(&[1, 0, 1, 1, 0, 1]),
        );
        let baseline = accuracy_set(
            &[4, 3, 2, 1, 0, 6],
            &[0, 0, 1, 0, 1, 0],
            Some(&[1, 0, 0, 1, 1, 0]),
        );
        let c = compare(
            &model,
            &baseline,
            Metric::Accuracy,
            F1Mode::Binary,
            settings,
            None,
        )
        .unwrap();
        assert_eq!((c.paired_rows, c.unpaired, c.label_mismatches), (5, 2, 1));
        // b: only the model right (r1, r2); c: only the baseline (r3).
        assert_eq!(c.discordant, Some((2, 1)));
        assert_eq!(c.improvement, (2.0 - 1.0) / 5.0);

        let without = accuracy_set(&[0, 1], &[1, 0], None);
        let err = |a: &PredictionSet, b: &PredictionSet| {
            compare(a, b, Metric::Accuracy, F1Mode::Binary, settings, None).unwrap_err()
        };
        assert_eq!(
            err(&without, &baseline),
            "McNemar's test needs the model's `prediction` column"
        );
        assert_eq!(
            err(&model, &without),
            "McNemar's test needs the baseline's `prediction` column"
        );
        let elsewhere = accuracy_set(&[7, 8], &[1, 0], Some(&[1, 0]));
        assert_eq!(
            err(&model, &elsewhere),
            "the model and the baseline share no row ids"
        );
    }

    proptest! {
        /// The paired DeLong test with the model's pieces from the recomputation equals the one
        /// that ranks the model's scores again, whatever order the two files list their rows.
        #[test]
        fn shared_model_pieces_change_no_comparison(
            rows in (4usize..200).prop_flat_map(|n| (
                prop::collection::vec(any::<bool>(), n),
                prop::collection::vec(prop_oneof![Just(0.5), 0.0f64..1.0], n),
                prop::collection::vec(prop_oneof![Just(0.5), 0.0f64..1.0], n),
                Just((0..n).collect::<Vec<usize>>()).prop_shuffle(),
            )),
        ) {
            let (mut positive, model_score, base_score, shuffled) = rows;
            positive[..4].copy_from_slice(&[true, true, false, false]);
            let n = positive.len();
            let model = binary_set(&shuffled, &positive, &model_score);
            let baseline = binary_set(&(0..n).collect::<Vec<_>>(), &positive, &base_score);
            let settings = Settings {
                confidence: 0.95,
                method: ProportionMethod::Wilson,
                resamples: 100,
                seed: 1,
            };
            let r = recompute(&model, Metric::RocAuc, F1Mode::Binary, settings).unwrap();
            let pieces = r.auc_pieces.as_ref();
            prop_assert!(pieces.is_some());
            let args = (&model, &baseline, Metric::RocAuc, F1Mode::Binary, settings);
            let fresh = compare(args.0, args.1, args.2, args.3, args.4, None).unwrap();
            let shared = compare(args.0, args.1, args.2, args.3, args.4, pieces).unwrap();
            prop_assert_eq!(format!("{fresh:?}"), format!("{shared:?}"));
        }
    }

    #[test]
    fn bootstrap_work_is_bounded_whatever_the_rows_or_classes() {
        // Arithmetic on the documented caps (5e7 draws lowered to, 1e9 at 100 resamples most).
        // Rows: 2000 resamples fit up to 25,000 rows; 1e5 rows afford 500; 1e6 and 1e7 rows the
        // floor of 100; 2e7 rows are refused.
        assert_eq!(affordable_resamples(2000, 25_000, "r"), Ok(2000));
        assert_eq!(affordable_resamples(2000, 100_000, "r"), Ok(500));
        assert_eq!(affordable_resamples(2000, 1_000_000, "r"), Ok(100));
        assert_eq!(affordable_resamples(2000, 10_000_000, "r"), Ok(100));
        assert!(affordable_resamples(2000, 20_000_000, "r").is_err());
        // Classes: a 256-class matrix (65,536 cells) with the policy's largest count, 1e6
        // resamples, gets 5e7 / 65,536 = 762; 4,096 classes (16.8 M cells) is refused.
        assert_eq!(affordable_resamples(1_000_000, 256 * 256, "c"), Ok(762));
        let refused = affordable_resamples(2000, 4096 * 4096, "the bootstrap of 4096 classes");
        assert!(
            refused
                .unwrap_err()
                .starts_with("the bootstrap of 4096 classes would take 16777216")
        );
        // The paired bootstrap of 64 classes (262,144 cells) keeps 190 resamples.
        assert_eq!(affordable_resamples(2000, 64 * 64 * 64, "p"), Ok(190));
    }
}
