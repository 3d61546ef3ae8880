//! scikit-learn's own search results (`cv_results_`) as a trials source.
//!
//! A search object's `cv_results_`, written by `pandas.DataFrame(search.cv_results_).to_csv()`
//! or `.to_json()`, holds one row per configuration: `split{k}_test_{name}` columns are the
//! folds (k from 0), `params` the configuration, `mean_test_{name}` the mean over folds and
//! `rank_test_{name}` the rank (1 is chosen; ties share a rank). `name` is `score` for a search
//! with one scorer, else the key of each scorer. scikit-learn maximises, so losses are stored
//! negated (`neg_log_loss`); [`scorer_metric`] maps a scorer name to the manifest's metric and
//! the sign, and anything it cannot map is refused rather than guessed.
//!
//! The trial id is the pandas index (the CSV's first, unnamed column; the JSON keys), or the
//! 0-based row position when the file has no index. Without `search.selected_trial` the selected
//! trial is the first row ranked 1, which is the row scikit-learn's `best_index_` takes.

use super::Metric;
use super::trials::TrialReader;
use crate::diag::{Diagnostic, Place};

/// Means written by pandas' JSON writer carry ten decimals; a mean that differs from the mean of
/// its folds by more than this (plus a relative part for large losses) is not the same search.
const MEAN_MATCH: f64 = 1e-8;

/// The manifest's metric and whether the stored value is negated, for a scikit-learn scorer
/// name; `None` for a scorer vetscore has no metric for.
pub fn scorer_metric(name: &str) -> Option<(Metric, bool)> {
    Some(match name {
        "accuracy" => (Metric::Accuracy, false),
        "balanced_accuracy" => (Metric::BalancedAccuracy, false),
        "f1" | "f1_macro" | "f1_micro" => (Metric::F1, false),
        "roc_auc" => (Metric::RocAuc, false),
        "r2" => (Metric::R2, false),
        "neg_log_loss" => (Metric::LogLoss, true),
        "neg_root_mean_squared_error" => (Metric::Rmse, true),
        "neg_mean_absolute_error" => (Metric::Mae, true),
        _ => return None,
    })
}

/// The scorer the manifest names for a results file (`search.scorer`), and where.
#[derive(Debug, Clone)]
pub struct ScorerName {
    pub name: String,
    pub file: String,
    pub place: Place,
    pub path: String,
}

/// Whether a header (or JSON column list) looks like scikit-learn's results.
pub fn is_cv_results<'a>(mut columns: impl Iterator<Item = &'a str>) -> bool {
    columns.any(|c| c.starts_with("split0_test_"))
}

/// Which columns hold the chosen metric's folds, its mean and rank, and how to read them.
pub struct Layout {
    pub folds: Vec<usize>,
    pub mean: Option<usize>,
    pub rank: Option<usize>,
    pub negated: bool,
    pub id: Option<usize>,
    /// Column names, for diagnostics.
    pub names: Vec<String>,
}

/// Finds the columns of the chosen scorer, or says why it cannot be chosen.
pub fn layout(
    file: &str,
    columns: &[String],
    metric: Metric,
    folds: usize,
    scorer: Option<&ScorerName>,
) -> Result<Layout, Diagnostic> {
    let header = |message: String| Diagnostic::at(file, Place::new(1, 1), "(header)", message);
    let mut keys: Vec<&str> = columns
        .iter()
        .filter_map(|c| c.strip_prefix("split0_test_"))
        .collect();
    keys.sort_unstable();
    keys.dedup();
    let manifest_problem =
        |s: &ScorerName, message: String| Diagnostic::at(&s.file, s.place, s.path.clone(), message);
    let key = match (keys.as_slice(), scorer) {
        (["score"], _) => "score",
        (_, Some(s)) if keys.contains(&s.name.as_str()) => s.name.as_str(),
        (_, Some(s)) => {
            return Err(manifest_problem(
                s,
                format!(
                    "scorer {:?} is not among the scorers of {file}: {}",
                    s.name,
                    keys.join(", ")
                ),
            ));
        }
        (_, None) => {
            return Err(header(format!(
                "this search scored several metrics ({}); the manifest must say which one the trials are",
                keys.join(", ")
            ))
            .with_help("name it with search.scorer, e.g. `scorer: accuracy`"));
        }
    };
    // The scorer's name: the key of a multi-metric search, else the manifest's `scorer`, else
    // the estimator's default score (accuracy for a classifier, R² for a regressor).
    let (name, named_by_manifest) = match (key, scorer) {
        ("score", Some(s)) => (s.name.as_str(), true),
        ("score", None) => match metric {
            Metric::Accuracy => ("accuracy", false),
            Metric::R2 => ("r2", false),
            _ => {
                return Err(header(format!(
                    "scikit-learn wrote `split0_test_score` without the scorer's name, and the model's metric {} is not an estimator's default score",
                    metric.name()
                ))
                .with_help(format!(
                    "name the `scoring` the search used with search.scorer, e.g. `scorer: {}`",
                    example_scorer(metric)
                )));
            }
        },
        (k, s) => (k, s.is_some()),
    };
    let refuse = |message: String| match (named_by_manifest, scorer) {
        (true, Some(s)) => manifest_problem(s, message),
        _ => header(message),
    };
    let Some((mapped, negated)) = scorer_metric(name) else {
        return Err(refuse(format!(
            "scorer {name:?} has no vetscore metric; vetscore reads accuracy, balanced_accuracy, f1, f1_macro, f1_micro, roc_auc, r2, neg_log_loss, neg_root_mean_squared_error and neg_mean_absolute_error"
        ))
        .with_help("score the search with one of those scorers (e.g. neg_root_mean_squared_error instead of neg_mean_squared_error)"));
    };
    if mapped != metric {
        return Err(refuse(format!(
            "scorer {name:?} measures {}, but the model's metric is {}",
            mapped.name(),
            metric.name()
        )));
    }
    let position = |c: &str| columns.iter().position(|h| h == c);
    let mut fold_columns = Vec::with_capacity(folds);
    for k in 0..folds {
        let column = format!("split{k}_test_{key}");
        match position(&column) {
            Some(i) => fold_columns.push(i),
            None => {
                return Err(header(format!(
                    "missing column {column}: the manifest's search has {folds} folds, the file {k}"
                )));
            }
        }
    }
    if position(&format!("split{folds}_test_{key}")).is_some() {
        return Err(header(format!(
            "the file has more than {folds} splits (split{folds}_test_{key}), but the manifest's search has {folds} folds"
        )));
    }
    let id = columns
        .first()
        .filter(|c| c.is_empty() || c.as_str() == "index")
        .map(|_| 0);
    Ok(Layout {
        folds: fold_columns,
        mean: position(&format!("mean_test_{key}")),
        rank: position(&format!("rank_test_{key}")),
        negated,
        id,
        names: columns.to_vec(),
    })
}

fn example_scorer(metric: Metric) -> &'static str {
    match metric {
        Metric::LogLoss => "neg_log_loss",
        Metric::Rmse => "neg_root_mean_squared_error",
        Metric::Mae => "neg_mean_absolute_error",
        Metric::RocAuc => "roc_auc",
        Metric::F1 => "f1",
        Metric::BalancedAccuracy => "balanced_accuracy",
        Metric::Accuracy => "accuracy",
        Metric::R2 => "r2",
    }
}

/// One row's cell as a number: empty (pandas' NaN in CSV) and `null` (in JSON) are missing.
pub enum Cell<'a> {
    Number(f64),
    Missing,
    Text(&'a str),
}

impl TrialReader<'_> {
    /// Reads one results row through `layout`; `cell(i)` gives column i, `place(i)` where it is.
    pub fn push_cv_results_row<'c>(
        &mut self,
        layout: &Layout,
        row: u64,
        id: Option<String>,
        cell: impl Fn(usize) -> Cell<'c>,
        place: impl Fn(Option<usize>) -> Place,
    ) {
        let id = id.unwrap_or_else(|| row.to_string());
        let sign = if layout.negated { -1.0 } else { 1.0 };
        let mut scores = Vec::with_capacity(layout.folds.len());
        for &c in &layout.folds {
            let column = &layout.names[c];
            match cell(c) {
                Cell::Number(v) => scores.push(sign * v),
                Cell::Missing => {
                    self.cv_problem(
                        place(Some(c)),
                        column,
                        format!("trial {id:?} has no score on {column} (a failed fit?)"),
                    );
                    return;
                }
                Cell::Text(t) => {
                    self.cv_problem(
                        place(Some(c)),
                        column,
                        format!("expected a number, found {t:?}"),
                    );
                    return;
                }
            }
        }
        if let Some(c) = layout.mean
            && let Cell::Number(mean) = cell(c)
        {
            let folds = scores.iter().sum::<f64>() / scores.len().max(1) as f64;
            if (sign * mean - folds).abs() > MEAN_MATCH * (1.0 + folds.abs()) {
                self.cv_problem(
                    place(Some(c)),
                    &layout.names[c],
                    format!(
                        "trial {id:?}: {} is {mean}, but its folds average {}",
                        layout.names[c],
                        sign * folds
                    ),
                );
                return;
            }
        }
        let rank_one = layout
            .rank
            .is_some_and(|c| matches!(cell(c), Cell::Number(r) if r == 1.0));
        let before = self.accepted();
        self.push(place(None), "", &id, &scores);
        if rank_one && self.accepted() > before {
            self.mark_ranked_first(&id, place(None), &scores);
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;
    use crate::manifest::trials::{Selected, TrialReader};

    /// The shape `pandas.DataFrame(search.cv_results_).to_csv()` writes (scikit-learn 1.9.1,
    /// pandas 3.1.1: a leading unnamed index column, `params` as a quoted Python dict).
    const HEADER: &str = ",mean_fit_time,param_C,params,split0_test_score,split1_test_score,mean_test_score,std_test_score,rank_test_score\n";

    fn read(
        csv: &str,
        metric: Metric,
        folds: &[f64],
    ) -> Result<super::super::trials::TrialSummary, Vec<Diagnostic>> {
        let mut reader = TrialReader::new("cv.csv", metric, folds.len()).select(Selected {
            folds: folds.to_vec(),
            named: None,
        });
        reader.read_csv(csv.as_bytes());
        reader.finish()
    }

    #[test]
    fn ties_at_rank_one_take_the_first_row_and_say_so() {
        // Rows 0 and 1 both have mean 0.8 and rank 1 (scikit-learn ranks ties with the lowest
        // rank); best_index_ is the first, row 0.
        let csv = format!(
            "{HEADER}0,0.01,1,\"{{'C': 1}}\",0.8,0.8,0.8,0.0,1\n1,0.01,10,\"{{'C': 10}}\",0.9,0.7,0.8,0.1,1\n2,0.01,100,\"{{'C': 100}}\",0.7,0.7,0.7,0.0,3\n"
        );
        let summary = read(&csv, Metric::Accuracy, &[0.8, 0.8]).unwrap();
        assert_eq!(summary.selected_id.as_deref(), Some("0"));
        assert!(summary.selected_by.unwrap().contains("tied at rank 1"));
        // Per-fold maxima 0.9, 0.8; row 0 scores 0.8, 0.8: bias (0.1 + 0) / 2 = 0.05 (by hand).
        assert!((summary.bias.bias - 0.05).abs() < 1e-12);
        assert_eq!(summary.trials, 3);
    }

    fn neg_log_loss() -> ScorerName {
        ScorerName {
            name: "neg_log_loss".into(),
            file: "m.yaml".into(),
            place: Place::new(3, 5),
            path: "models[0].search.scorer".into(),
        }
    }

    #[test]
    fn negated_losses_are_turned_back_and_means_are_checked() {
        let header =
            ",params,split0_test_score,split1_test_score,mean_test_score,rank_test_score\n";
        let csv = format!("{header}0,\"{{}}\",-0.5,-0.3,-0.4,1\n1,\"{{}}\",-0.6,-0.6,-0.6,2\n");
        let mut reader = TrialReader::new("cv.csv", Metric::LogLoss, 2)
            .select(Selected {
                folds: vec![0.5, 0.3],
                named: None,
            })
            .scorer(Some(neg_log_loss()));
        reader.read_csv(csv.as_bytes());
        let summary = reader.finish().unwrap();
        // Lower is better: row 0 (0.5, 0.3) is best on both folds, so the bias is 0.
        assert_eq!(summary.bias.bias, 0.0);
        assert!((summary.bias.naive_best - 0.4).abs() < 1e-12);

        let wrong_mean = format!("{header}0,\"{{}}\",-0.5,-0.3,-0.45,1\n");
        let mut reader =
            TrialReader::new("cv.csv", Metric::LogLoss, 2).scorer(Some(neg_log_loss()));
        reader.read_csv(wrong_mean.as_bytes());
        let problems = reader.finish().unwrap_err();
        assert!(
            problems[0].message.contains("mean_test_score is -0.45"),
            "{problems:?}"
        );
        assert_eq!(problems[0].line, Some(2));
    }

    #[test]
    fn a_failed_fit_and_a_missing_split_are_input_errors() {
        let csv = format!("{HEADER}0,0.01,1,\"{{}}\",,0.8,,0.0,1\n");
        let problems = read(&csv, Metric::Accuracy, &[0.8, 0.8]).unwrap_err();
        assert!(problems[0].message.contains("a failed fit"), "{problems:?}");
        let problems = read(&csv, Metric::Accuracy, &[0.8, 0.8, 0.8]).unwrap_err();
        assert!(
            problems[0]
                .message
                .contains("missing column split2_test_score"),
            "{problems:?}"
        );
        let problems = read(&csv, Metric::Accuracy, &[0.8]).unwrap_err();
        assert!(
            problems[0].message.contains("more than 1 splits"),
            "{problems:?}"
        );
    }

    #[test]
    fn without_an_index_the_row_position_is_the_id() {
        let csv = "params,split0_test_score,split1_test_score,mean_test_score,rank_test_score\n\"{}\",0.6,0.6,0.6,2\n\"{}\",0.8,0.8,0.8,1\n";
        let summary = read(csv, Metric::Accuracy, &[0.8, 0.8]).unwrap();
        assert_eq!(summary.selected_id.as_deref(), Some("1"));
    }
}
