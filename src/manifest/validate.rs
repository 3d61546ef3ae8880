//! Raw manifest to validated [`Model`]s, collecting every problem.

use std::collections::BTreeMap;

use std::path::Path;

use serde_saphyr::Spanned;

use super::raw::{
    RawClassCounts, RawCv, RawData, RawEvaluation, RawFold, RawManifest, RawModel, RawSearch,
};
use super::trials::{self, RawTrial, TrialReader, TrialSummary};
use super::{
    Claim, ClassCounts, CrossValidation, CvScheme, Data, Evaluation, FORMAT_VERSION, Fold, Metric,
    Model, Origin, Search,
};
use crate::diag::{Diagnostic, Diagnostics, Place};

mod out_of_fold;
mod reads;

pub use reads::Readers;
use reads::{PredictionsRead, Prefetched};

/// A proportion score may be rounded by the writer; it is accepted as k/n when it lies within
/// half a unit of the fourth decimal of k/n (scores are commonly printed with four decimals).
const PROPORTION_ROUNDING: f64 = 5e-5;

/// Largest row count accepted, 2^53: every count is used in `f64` arithmetic by the statistics,
/// and above 2^53 an `f64` no longer holds every integer. The limit also bounds the sums of fold
/// and class counts, so they cannot overflow `u64` (validation sums in `u128`).
pub const MAX_ROWS: u64 = 1 << 53;

/// Validates a parsed manifest. `file` is used in diagnostics; files the manifest names must
/// lie inside `root`; `readers` says whether a model's per-example files are read concurrently
/// (the results are the same either way).
pub fn validate(
    file: &str,
    raw: RawManifest,
    root: &Path,
    readers: Readers,
) -> Result<Vec<Model>, Vec<Diagnostic>> {
    let mut out = Diagnostics::default();
    out.extend(crate::diag::format_version(
        file,
        "manifest",
        &raw.format_version,
        FORMAT_VERSION,
    ));
    if raw.models.value.is_empty() {
        out.push(Diagnostic::at(
            file,
            Place::of(&raw.models.referenced),
            "models",
            "expected at least one model, found an empty list",
        ));
    }
    let mut models = Vec::with_capacity(raw.models.value.len());
    for (i, spanned) in raw.models.value.into_iter().enumerate() {
        let mut v = Validator {
            file,
            root,
            out: &mut out,
            readers,
            prefetched: Prefetched::default(),
        };
        if let Some(model) = v.model(&format!("models[{i}]"), spanned) {
            models.push(model);
        }
    }
    out.finish(models)
}

/// What reading a baseline's predictions needs from the model's: it exists, and the classes and
/// positive class it names.
struct Pairing<'a> {
    classes: Option<&'a [String]>,
    positive: Option<&'a str>,
}

struct Validator<'a> {
    file: &'a str,
    root: &'a Path,
    out: &'a mut Diagnostics,
    readers: Readers,
    /// The current model's files, read ahead ([`reads`]).
    prefetched: Prefetched,
}

/// Why a file named in the manifest is not confined to the check's root directory.
enum Unconfined {
    /// The root cannot be resolved (the reason).
    Root(String),
    Outside,
}

impl Validator<'_> {
    fn problem(&mut self, place: Place, path: &str, message: impl Into<String>) {
        self.out
            .push(Diagnostic::at(self.file, place, path, message));
    }

    /// Checks a score is finite and inside the metric's range.
    fn score(&mut self, place: Place, path: &str, metric: Metric, value: f64) -> bool {
        let (lo, hi) = metric.range();
        if !value.is_finite() {
            self.problem(
                place,
                path,
                format!("expected a finite number, found {value}"),
            );
            false
        } else if value < lo || value > hi {
            self.problem(
                place,
                path,
                format!("{} must lie in [{lo}, {hi}], found {value}", metric.name()),
            );
            false
        } else {
            true
        }
    }

    fn model(&mut self, path: &str, spanned: Spanned<RawModel>) -> Option<Model> {
        let place = Place::of(&spanned.referenced);
        let raw = spanned.value;
        let before = self.out.len();
        self.prefetch(path, &raw);
        let model = self.model_read(path, place, raw, before);
        // Whatever was read ahead and not asked for (the model's own file failed) goes now.
        self.prefetched = Prefetched::default();
        model
    }

    fn model_read(
        &mut self,
        path: &str,
        place: Place,
        raw: RawModel,
        before: usize,
    ) -> Option<Model> {
        if raw.name.trim().is_empty() {
            self.problem(
                place,
                &format!("{path}.name"),
                "expected a model name, found an empty string",
            );
        }
        if !raw.metric.fits(raw.task) {
            self.problem(
                place,
                &format!("{path}.metric"),
                format!(
                    "metric {} does not apply to a {:?} task",
                    raw.metric.name(),
                    raw.task
                )
                .to_lowercase(),
            );
        }
        let trained_at = raw
            .trained_at
            .as_deref()
            .and_then(|t| self.timestamp(place, &format!("{path}.trained_at"), t));
        let id_files = (
            raw.data.value.train_ids_file.clone(),
            raw.data.value.test_ids_file.clone(),
        );
        let data = self.data(&format!("{path}.data"), raw.data);
        let leakage = self.leakage(place, &format!("{path}.data"), id_files);
        // Where the claim says it beats a baseline, for the message when no baseline is given.
        let beats_baseline = raw
            .claim
            .value
            .beats_baseline
            .then(|| Place::of(&raw.claim.referenced));
        // The baseline's file is read with the classes and positive class the model's names.
        let (classes, positive) = raw.predictions.as_ref().map_or((None, None), |p| {
            (p.value.classes.clone(), p.value.positive_class.clone())
        });
        let predictions = self.predictions(path, raw.task, raw.predictions);
        let oof_classes = out_of_fold::classes(classes.as_deref(), data.as_ref());
        let search = raw.search.and_then(|s| {
            let oof = out_of_fold::Context {
                task: raw.task,
                classes: oof_classes.as_deref(),
            };
            self.search(&format!("{path}.search"), raw.metric, data.as_ref(), s, oof)
        });
        let baseline = self.baseline(
            path,
            raw.task,
            raw.metric,
            raw.baseline,
            predictions.as_ref().map(|_| Pairing {
                classes: classes.as_deref(),
                positive: positive.as_deref(),
            }),
            search.as_ref().map(|s| s.cv.folds.len()),
            beats_baseline,
        );
        let holdout = self.holdout(path, raw.metric, data.as_ref(), raw.holdout);
        let claim = self.claim(&format!("{path}.claim"), raw.metric, raw.claim);
        if self.out.len() > before {
            return None;
        }
        Some(Model {
            name: raw.name,
            predictions,
            leakage,
            baseline,
            origin: Origin {
                file: self.file.to_owned(),
                line: place.line,
            },
            task: raw.task,
            metric: raw.metric,
            run_id: raw.run_id,
            commit: raw.commit,
            trained_at,
            seed: raw.seed,
            data: data?,
            search,
            holdout,
            claim: claim?,
        })
    }

    /// A file named in the manifest, relative to the manifest's directory. It must stay inside
    /// the check's root directory: manifests come with merge requests, and an error quoting a
    /// line of a file elsewhere on the CI machine would leak it into the job's log. A file that
    /// does not exist is left for its reader to report.
    fn resolve(&mut self, place: Place, key: &str, name: &str) -> Option<std::path::PathBuf> {
        match self.confined(name) {
            Ok(path) => Some(path),
            Err(Unconfined::Root(reason)) => {
                self.out.push(Diagnostic::at(
                    self.file,
                    place,
                    key,
                    format!(
                        "the check's root directory {} cannot be resolved ({reason}), so {name:?} cannot be confined to it",
                        self.root.display(),
                    ),
                ));
                None
            }
            Err(Unconfined::Outside) => {
                self.out.push(
                    Diagnostic::at(
                        self.file,
                        place,
                        key,
                        format!("{name:?} lies outside the check's root directory"),
                    )
                    .with_help(
                        "keep the files a manifest names under the working directory, or set --root",
                    ),
                );
                None
            }
        }
    }

    /// [`Self::resolve`] without the diagnostic.
    fn confined(&self, name: &str) -> Result<std::path::PathBuf, Unconfined> {
        let path = Path::new(self.file)
            .parent()
            .unwrap_or(Path::new("."))
            .join(name);
        // A root that cannot be resolved confines nothing: refuse rather than allow any path.
        let root = self
            .root
            .canonicalize()
            .map_err(|e| Unconfined::Root(crate::input::io_reason(&e)))?;
        match path.canonicalize() {
            Ok(real) if !real.starts_with(&root) => Err(Unconfined::Outside),
            _ => Ok(path),
        }
    }

    fn leakage(
        &mut self,
        place: Place,
        path: &str,
        (train, test): (Option<String>, Option<String>),
    ) -> Option<crate::evidence::ids::Overlap> {
        match (train, test) {
            (Some(train), Some(test)) => {
                let train = self.resolve(place, &format!("{path}.train_ids_file"), &train)?;
                let test = self.resolve(place, &format!("{path}.test_ids_file"), &test)?;
                let read = self.ids_read(path, train, test);
                match self.read_ids(read) {
                    Ok(o) => Some(o),
                    Err(d) => {
                        self.out.push(d);
                        None
                    }
                }
            }
            (None, None) => None,
            _ => {
                self.problem(
                    place,
                    &format!("{path}.train_ids_file"),
                    "the leakage check needs both train_ids_file and test_ids_file",
                );
                None
            }
        }
    }

    fn predictions(
        &mut self,
        path: &str,
        task: super::Task,
        raw: Option<Spanned<super::raw::RawPredictions>>,
    ) -> Option<super::Predictions> {
        let spanned = raw?;
        let place = Place::of(&spanned.referenced);
        let p = spanned.value;
        if let (Some(classes), Some(positive)) = (&p.classes, &p.positive_class)
            && !classes.contains(positive)
        {
            self.problem(
                place,
                &format!("{path}.predictions.positive_class"),
                format!("{positive:?} is not one of the listed classes"),
            );
            return None;
        }
        let named_by = format!("{path}.predictions.file in {}", self.file);
        let file = self.resolve(place, &format!("{path}.predictions.file"), &p.file)?;
        let set = match self.read_predictions(PredictionsRead {
            file,
            task,
            classes: p.classes.clone(),
            positive: p.positive_class.clone(),
            named_by,
            fingerprint: true,
        }) {
            Ok(set) => set,
            Err(problems) => {
                self.out.extend(problems);
                return None;
            }
        };
        let classes = match &set.columns {
            crate::evidence::Columns::Classification { classes, .. } => classes.len(),
            crate::evidence::Columns::Regression { .. } => 0,
        };
        let f1 = p.f1_average.unwrap_or(if classes <= 2 {
            super::raw::F1Mode::Binary
        } else {
            super::raw::F1Mode::Macro
        });
        Some(super::Predictions { set, f1 })
    }

    /// The baseline: its predictions paired with the model's by id, or its scores on the
    /// model's cross-validation folds.
    #[allow(clippy::too_many_arguments)]
    fn baseline(
        &mut self,
        path: &str,
        task: super::Task,
        metric: Metric,
        raw: Option<Spanned<super::raw::RawBaseline>>,
        predictions: Option<Pairing<'_>>,
        folds: Option<usize>,
        beats_baseline: Option<Place>,
    ) -> Option<super::Baseline> {
        let Some(spanned) = raw else {
            if let Some(claim) = beats_baseline {
                self.problem(
                    claim,
                    &format!("{path}.claim.beats_baseline"),
                    "a claim to beat the baseline needs `baseline`",
                );
            }
            return None;
        };
        let place = Place::of(&spanned.referenced);
        let b = spanned.value;
        let key = format!("{path}.baseline");
        if b.predictions_file.is_none() && b.cv_fold_scores.is_none() {
            self.problem(
                place,
                &key,
                "a baseline needs `predictions_file` or `cv_fold_scores`",
            );
            return None;
        }
        let set = match (&b.predictions_file, predictions) {
            (None, _) => None,
            (Some(_), None) => {
                self.problem(
                    place,
                    &format!("{key}.predictions_file"),
                    "baseline predictions need the model's own predictions (`predictions`) to pair with",
                );
                return None;
            }
            (Some(file), Some(Pairing { classes, positive })) => {
                let named_by = format!("{key}.predictions_file in {}", self.file);
                let resolved = self.resolve(place, &format!("{key}.predictions_file"), file)?;
                match self.read_predictions(PredictionsRead {
                    file: resolved,
                    task,
                    classes: classes.map(<[String]>::to_vec),
                    positive: positive.map(str::to_owned),
                    named_by,
                    fingerprint: false,
                }) {
                    Ok(set) => Some(set),
                    Err(problems) => {
                        self.out.extend(problems);
                        return None;
                    }
                }
            }
        };
        if let Some(scores) = &b.cv_fold_scores {
            if folds != Some(scores.len()) {
                self.problem(
                    place,
                    &format!("{key}.cv_fold_scores"),
                    format!(
                        "expected one score per fold of the model's search ({}), found {}",
                        folds.map_or("no folds".to_owned(), |f| f.to_string()),
                        scores.len()
                    ),
                );
                return None;
            }
            let mut ok = true;
            for (k, &score) in scores.iter().enumerate() {
                ok &= self.score(place, &format!("{key}.cv_fold_scores[{k}]"), metric, score);
            }
            if !ok {
                return None;
            }
        }
        Some(super::Baseline {
            name: b.name,
            set,
            cv_fold_scores: b.cv_fold_scores,
        })
    }

    fn timestamp(&mut self, place: Place, path: &str, text: &str) -> Option<jiff::Timestamp> {
        match text.parse::<jiff::Timestamp>() {
            Ok(t) => Some(t),
            Err(e) => {
                self.out.push(
                    Diagnostic::at(
                        self.file,
                        place,
                        path,
                        format!("expected an RFC 3339 time, found {text:?}: {e}"),
                    )
                    .with_help("write times like 2026-11-30T17:05:00Z"),
                );
                None
            }
        }
    }

    fn data(&mut self, path: &str, spanned: Spanned<RawData>) -> Option<Data> {
        let place = Place::of(&spanned.referenced);
        let raw = spanned.value;
        let before = self.out.len();
        self.row_count(place, &format!("{path}.train_rows"), raw.train_rows);
        self.row_count(place, &format!("{path}.test_rows"), raw.test_rows);
        if raw.test_fingerprint.trim().is_empty() {
            self.problem(
                place,
                &format!("{path}.test_fingerprint"),
                "expected the test split's fingerprint, found an empty string",
            );
        }
        let class_counts = raw.class_counts.map(|RawClassCounts { train, test }| {
            self.class_sum(
                place,
                &format!("{path}.class_counts.train"),
                &train,
                raw.train_rows,
            );
            self.class_sum(
                place,
                &format!("{path}.class_counts.test"),
                &test,
                raw.test_rows,
            );
            ClassCounts { train, test }
        });
        (self.out.len() == before).then_some(Data {
            train_rows: raw.train_rows,
            test_rows: raw.test_rows,
            test_fingerprint: raw.test_fingerprint,
            class_counts,
        })
    }

    /// A split's row count: at least 1, at most [`MAX_ROWS`].
    fn row_count(&mut self, place: Place, path: &str, rows: u64) {
        if rows == 0 {
            self.problem(place, path, "expected at least 1 row, found 0");
        } else if rows > MAX_ROWS {
            self.out.push(
                Diagnostic::at(
                    self.file,
                    place,
                    path,
                    format!("expected at most {MAX_ROWS} rows, found {rows}"),
                )
                .with_help("row counts are used in floating-point statistics, which count exactly only up to 2^53"),
            );
        }
    }

    fn class_sum(&mut self, place: Place, path: &str, counts: &BTreeMap<String, u64>, rows: u64) {
        let sum: u128 = counts.values().map(|&c| u128::from(c)).sum();
        if sum != u128::from(rows) {
            self.problem(
                place,
                path,
                format!("class counts add up to {sum} rows, but the split has {rows}"),
            );
        }
    }

    fn search(
        &mut self,
        path: &str,
        metric: Metric,
        data: Option<&Data>,
        spanned: Spanned<RawSearch>,
        oof: out_of_fold::Context<'_>,
    ) -> Option<Search> {
        let place = Place::of(&spanned.referenced);
        let raw = spanned.value;
        let oof_file = raw.out_of_fold.clone();
        let named_trial = raw
            .selected_trial
            .as_ref()
            .map(|s| (trials::id_text(&s.value), Place::of(&s.referenced)));
        if raw.configurations == Some(0) {
            self.problem(
                place,
                &format!("{path}.configurations"),
                "expected at least 1 configuration, found 0",
            );
        }
        let cv = self.cv(&format!("{path}.cv"), metric, data, raw.cv)?;
        let selected = trials::Selected {
            folds: cv.folds.iter().map(|f| f.score).collect(),
            named: raw.selected_trial.as_ref().map(|s| trials::Named {
                id: trials::id_text(&s.value),
                file: self.file.to_owned(),
                place: Place::of(&s.referenced),
                path: format!("{path}.selected_trial"),
            }),
        };
        if let (Some(s), None, None) = (&raw.selected_trial, &raw.trials, &raw.trials_file) {
            self.problem(
                Place::of(&s.referenced),
                &format!("{path}.selected_trial"),
                "selected_trial names a trial, but the search lists no trials (`trials` or `trials_file`)",
            );
        }
        let scorer = raw.scorer.as_ref().map(|s| super::sklearn::ScorerName {
            name: s.value.clone(),
            file: self.file.to_owned(),
            place: Place::of(&s.referenced),
            path: format!("{path}.scorer"),
        });
        let trials = match (raw.trials, raw.trials_file) {
            (Some(_), Some(_)) => {
                self.problem(
                    place,
                    &format!("{path}.trials_file"),
                    "give trials inline or in a file, not both",
                );
                None
            }
            (Some(inline), None) => {
                if let Some(s) = &scorer {
                    self.problem(
                        s.place,
                        &s.path,
                        "scorer applies to a scikit-learn results file (trials_file), not to inline trials",
                    );
                }
                self.inline_trials(path, metric, selected, inline)
            }
            (None, Some(file)) => {
                let resolved = self.resolve(place, &format!("{path}.trials_file"), &file)?;
                match trials::read_file(
                    &resolved,
                    &format!("{path}.trials_file in {}", self.file),
                    metric,
                    selected,
                    scorer,
                ) {
                    Ok(summary) => Some(summary),
                    Err(problems) => {
                        self.out.extend(problems);
                        None
                    }
                }
            }
            (None, None) => {
                if let Some(s) = &scorer {
                    self.problem(
                        s.place,
                        &s.path,
                        "scorer applies to a scikit-learn results file (trials_file), but the search lists no trials",
                    );
                }
                None
            }
        };
        let configurations = match (raw.configurations, &trials) {
            (Some(stated), Some(t)) if stated != t.trials => {
                self.problem(
                    place,
                    &format!("{path}.configurations"),
                    format!(
                        "{stated} configurations stated, but {} trials are listed",
                        t.trials
                    ),
                );
                None
            }
            (stated, t) => stated.filter(|&c| c > 0).or(t.as_ref().map(|t| t.trials)),
        };
        if let Some(e) = raw.effective_configurations {
            let most = configurations.map_or(f64::INFINITY, |c| c as f64);
            if !(e.is_finite() && e >= 1.0 && e <= most) {
                self.problem(
                    place,
                    &format!("{path}.effective_configurations"),
                    format!("expected a number between 1 and the {most} configurations, found {e}"),
                );
            }
        }
        let out_of_fold = match oof_file {
            Some(name) => {
                let named = out_of_fold::Named {
                    place,
                    path,
                    name: &name,
                    trial: named_trial.as_ref().map(|(id, p)| (id.as_str(), *p)),
                };
                Some(self.out_of_fold(named, metric, oof, &cv, trials.as_ref())?)
            }
            None => None,
        };
        Some(Search {
            method: raw.method,
            configurations,
            effective_configurations: raw.effective_configurations,
            out_of_fold,
            cv,
            trials,
        })
    }

    fn inline_trials(
        &mut self,
        path: &str,
        metric: Metric,
        selected: trials::Selected,
        inline: Vec<Spanned<RawTrial>>,
    ) -> Option<TrialSummary> {
        let mut reader = TrialReader::new(self.file, metric, selected.folds.len()).select(selected);
        for (i, t) in inline.into_iter().enumerate() {
            let place = Place::of(&t.referenced);
            reader.push(
                place,
                &format!("{path}.trials[{i}]"),
                &trials::id_text(&t.value.id),
                &t.value.fold_scores,
            );
        }
        match reader.finish() {
            Ok(summary) => Some(summary),
            Err(problems) => {
                self.out.extend(problems);
                None
            }
        }
    }

    fn cv(
        &mut self,
        path: &str,
        metric: Metric,
        data: Option<&Data>,
        spanned: Spanned<RawCv>,
    ) -> Option<CrossValidation> {
        let place = Place::of(&spanned.referenced);
        let raw = spanned.value;
        let before = self.out.len();
        let repeats = match (raw.scheme, raw.repeats) {
            (CvScheme::RepeatedKFold, Some(0)) => {
                self.problem(
                    place,
                    &format!("{path}.repeats"),
                    "expected at least 1 repeat, found 0",
                );
                1
            }
            (CvScheme::RepeatedKFold, r) => r.unwrap_or(1),
            (_, Some(_)) => {
                self.problem(
                    place,
                    &format!("{path}.repeats"),
                    "repeats apply only to the repeated_k_fold scheme",
                );
                1
            }
            (_, None) => 1,
        };
        let min_folds = if raw.scheme == CvScheme::TimeOrdered {
            1
        } else {
            2
        };
        if raw.scheme == CvScheme::ValidationSplit {
            if raw.folds.len() != 1 {
                self.out.push(
                    Diagnostic::at(
                        self.file,
                        place,
                        format!("{path}.folds"),
                        format!(
                            "a validation split is one entry (its rows and score), found {}",
                            raw.folds.len()
                        ),
                    )
                    .with_help(
                        "several folds are a k-fold scheme; one held-out split is one entry",
                    ),
                );
            }
        } else if raw.folds.len() < min_folds {
            self.problem(
                place,
                &format!("{path}.folds"),
                format!(
                    "expected at least {min_folds} folds for this scheme, found {}",
                    raw.folds.len()
                ),
            );
        }
        let folds: Vec<Fold> = raw
            .folds
            .into_iter()
            .enumerate()
            .filter_map(|(i, f)| self.fold(&format!("{path}.folds[{i}]"), metric, f))
            .collect();
        if self.out.len() > before {
            return None;
        }
        if let Some(data) = data {
            self.fold_total(place, path, raw.scheme, repeats, &folds, data.train_rows);
            self.fold_labels(place, path, &folds, data);
        }
        (self.out.len() == before).then_some(CrossValidation {
            scheme: raw.scheme,
            repeats,
            folds,
        })
    }

    /// A fold's class labels must be classes of the training split: labels that match nothing
    /// (names in `class_counts`, 0/1 in a fold) would otherwise read as a fold with 0 rows of a
    /// class, a statistical failure where the input is wrong.
    fn fold_labels(&mut self, place: Place, path: &str, folds: &[Fold], data: &Data) {
        let Some(counts) = &data.class_counts else {
            return;
        };
        for (i, fold) in folds.iter().enumerate() {
            let Some(rows) = &fold.class_rows else {
                continue;
            };
            let unknown: Vec<&str> = rows
                .keys()
                .filter(|k| !counts.train.contains_key(*k))
                .map(String::as_str)
                .collect();
            if !unknown.is_empty() {
                let known: Vec<&str> = counts.train.keys().map(String::as_str).collect();
                self.out.push(
                    Diagnostic::at(
                        self.file,
                        place,
                        format!("{path}.folds[{i}].class_rows"),
                        format!(
                            "class labels {unknown:?} are not classes of the training split, \
                             which data.class_counts.train names {known:?}"
                        ),
                    )
                    .with_help("write the fold's class rows with the same labels as class_counts"),
                );
            }
        }
    }

    /// Fold sizes must account for the training rows: once per repeat for k-fold schemes, at
    /// most once for time-ordered splits (early rows are never validated).
    fn fold_total(
        &mut self,
        place: Place,
        path: &str,
        scheme: CvScheme,
        repeats: u32,
        folds: &[Fold],
        train_rows: u64,
    ) {
        let total: u128 = folds.iter().map(|f| u128::from(f.rows)).sum();
        let expected = u128::from(train_rows) * u128::from(repeats);
        let path = format!("{path}.folds");
        if total > u128::from(MAX_ROWS) {
            self.out.push(
                Diagnostic::at(
                    self.file,
                    place,
                    path,
                    format!("the folds hold {total} validation rows in all; the limit is {MAX_ROWS}"),
                )
                .with_help("row counts are used in floating-point statistics, which count exactly only up to 2^53"),
            );
        } else if scheme == CvScheme::ValidationSplit {
            if total >= u128::from(train_rows) {
                self.out.push(
                    Diagnostic::at(
                        self.file,
                        place,
                        path,
                        format!(
                            "the validation split holds {total} rows, which leaves none of the {train_rows} training rows to train on"
                        ),
                    )
                    .with_help("train_rows counts the rows of training and validation together; the validation split is part of them"),
                );
            }
        } else if scheme == CvScheme::TimeOrdered {
            if total > u128::from(train_rows) {
                self.problem(
                    place,
                    &path,
                    format!(
                        "time-ordered folds hold {total} validation rows, more than the {train_rows} training rows"
                    ),
                );
            }
        } else if total != expected {
            let per = if repeats > 1 {
                format!("{repeats} repeats × {train_rows} training rows = {expected}")
            } else {
                format!("the {train_rows} training rows")
            };
            self.out.push(
                Diagnostic::at(
                    self.file,
                    place,
                    path,
                    format!("fold sizes add up to {total} rows, expected {per}"),
                )
                .with_help("every training row is validated exactly once per repeat in k-fold cross-validation"),
            );
        }
    }

    fn fold(&mut self, path: &str, metric: Metric, spanned: Spanned<RawFold>) -> Option<Fold> {
        let place = Place::of(&spanned.referenced);
        let raw = spanned.value;
        if raw.rows == 0 {
            self.problem(
                place,
                &format!("{path}.rows"),
                "expected at least 1 row, found 0",
            );
            return None;
        }
        if !self.score(place, &format!("{path}.score"), metric, raw.score) {
            return None;
        }
        if let Some(class_rows) = &raw.class_rows {
            self.class_sum(place, &format!("{path}.class_rows"), class_rows, raw.rows);
        }
        let correct = self.correct_rows(place, path, metric, raw.score, raw.correct, raw.rows)?;
        Some(Fold {
            rows: raw.rows,
            score: raw.score,
            correct,
            class_rows: raw.class_rows,
        })
    }

    /// The correct rows behind a score: `Some(Some(k))` for a proportion metric, `Some(None)` for
    /// other metrics, `None` (with a diagnostic) when the score and count do not fit.
    fn correct_rows(
        &mut self,
        place: Place,
        path: &str,
        metric: Metric,
        score: f64,
        stated: Option<u64>,
        rows: u64,
    ) -> Option<Option<u64>> {
        if metric.is_proportion() {
            return self
                .count(place, &format!("{path}.score"), score, stated, rows)
                .map(Some);
        }
        if stated.is_some() {
            self.problem(
                place,
                &format!("{path}.correct"),
                format!(
                    "a count of correct rows does not apply to {}",
                    metric.name()
                ),
            );
            return None;
        }
        Some(None)
    }

    /// The number of correct rows behind a proportion score, checked against a stated count.
    fn count(
        &mut self,
        place: Place,
        path: &str,
        score: f64,
        stated: Option<u64>,
        rows: u64,
    ) -> Option<u64> {
        if let Some(correct) = stated {
            if correct > rows {
                self.problem(
                    place,
                    path,
                    format!("{correct} correct rows out of {rows} is impossible"),
                );
                return None;
            }
            let implied = correct as f64 / rows as f64;
            if (implied - score).abs() > PROPORTION_ROUNDING {
                self.problem(
                    place,
                    path,
                    format!("score {score} disagrees with {correct} correct out of {rows} rows ({implied:.6})"),
                );
                return None;
            }
            return Some(correct);
        }
        let Ok(count) = crate::stats::count_from_proportion(score, rows, PROPORTION_ROUNDING)
        else {
            self.out.push(
                Diagnostic::at(
                    self.file,
                    place,
                    path,
                    format!("score {score} is not a whole number of correct rows out of {rows}"),
                )
                .with_help("an accuracy on n rows is k/n; check the row count, or give `correct` explicitly"),
            );
            return None;
        };
        Some(count)
    }

    fn holdout(
        &mut self,
        model_path: &str,
        metric: Metric,
        data: Option<&Data>,
        raw: Vec<Spanned<RawEvaluation>>,
    ) -> Vec<Evaluation> {
        let mut evaluations = Vec::with_capacity(raw.len());
        let mut previous: Option<jiff::Timestamp> = None;
        for (i, spanned) in raw.into_iter().enumerate() {
            let path = format!("{model_path}.holdout[{i}]");
            let place = Place::of(&spanned.referenced);
            let e = spanned.value;
            let time = e
                .time
                .as_deref()
                .and_then(|t| self.timestamp(place, &format!("{path}.time"), t));
            if let (Some(now), Some(before)) = (time, previous)
                && now < before
            {
                self.out.push(
                        Diagnostic::at(self.file, place, format!("{path}.time"), format!("{now} is earlier than the previous evaluation at {before}"))
                            .with_help("list holdout evaluations oldest first; the last one is the reported test score"),
                    );
            }
            previous = time.or(previous);
            let Some(data) = data else { continue };
            let rows = e.rows.unwrap_or(data.test_rows);
            if rows == 0 || rows > data.test_rows {
                self.problem(
                    place,
                    &format!("{path}.rows"),
                    format!(
                        "expected between 1 and the {} test rows, found {rows}",
                        data.test_rows
                    ),
                );
                continue;
            }
            if !self.score(place, &format!("{path}.score"), metric, e.score) {
                continue;
            }
            let Some(correct) = self.correct_rows(place, &path, metric, e.score, e.correct, rows)
            else {
                continue;
            };
            evaluations.push(Evaluation {
                time,
                score: e.score,
                rows,
                correct,
                note: e.note,
            });
        }
        evaluations
    }

    fn claim(
        &mut self,
        path: &str,
        metric: Metric,
        spanned: Spanned<super::raw::RawClaim>,
    ) -> Option<Claim> {
        let place = Place::of(&spanned.referenced);
        let raw = spanned.value;
        let mut ok = self.score(place, &format!("{path}.value"), metric, raw.value);
        if let Some(claimed) = raw.metric
            && claimed != metric
        {
            self.out.push(
                Diagnostic::at(
                    self.file,
                    place,
                    format!("{path}.metric"),
                    format!(
                        "the claim is in {} but the model's metric is {}",
                        claimed.name(),
                        metric.name()
                    ),
                )
                .with_help("state the claim in the model's primary metric"),
            );
            ok = false;
        }
        ok.then_some(Claim {
            value: raw.value,
            basis: raw.basis,
            text: raw.text,
            beats_baseline: raw.beats_baseline,
        })
    }
}
