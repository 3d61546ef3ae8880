//! `search.out_of_fold`: the file resolved and confined like `trials_file`, read by
//! [`crate::evidence::oof`], and the selected configuration found in it.

use super::Validator;
use crate::diag::{Diagnostic, Place};
use crate::evidence::oof::{OofExpect, matching_folds, read_out_of_fold};
use crate::manifest::trials::TrialSummary;
use crate::manifest::{CrossValidation, CvScheme, Data, Metric, OutOfFold, Task};

/// What reading the file needs from the rest of the model.
#[derive(Debug, Clone, Copy)]
pub(super) struct Context<'a> {
    pub task: Task,
    pub classes: Option<&'a [String]>,
}

/// Where and how the manifest names the file.
pub(super) struct Named<'a> {
    pub place: Place,
    /// Key path of the search (`models[0].search`).
    pub path: &'a str,
    pub name: &'a str,
    /// `search.selected_trial`, when given, with its place.
    pub trial: Option<(&'a str, Place)>,
}

/// The classes a label or prediction must be among: the predictions' listed classes, else the
/// training split's class counts; `None` when the manifest names none.
pub(super) fn classes(listed: Option<&[String]>, data: Option<&Data>) -> Option<Vec<String>> {
    listed.map(<[String]>::to_vec).or_else(|| {
        data.and_then(|d| d.class_counts.as_ref())
            .map(|c| c.train.keys().cloned().collect())
    })
}

impl Validator<'_> {
    pub(super) fn out_of_fold(
        &mut self,
        named: Named<'_>,
        metric: Metric,
        context: Context<'_>,
        cv: &CrossValidation,
        trials: Option<&TrialSummary>,
    ) -> Option<OutOfFold> {
        let key = format!("{}.out_of_fold", named.path);
        if cv.scheme == CvScheme::RepeatedKFold && cv.repeats > 1 {
            self.out.push(
                Diagnostic::at(
                    self.file,
                    named.place,
                    key,
                    format!(
                        "out-of-fold predictions of repeated k-fold cross-validation ({} repeats) hold one prediction per row and repeat; this format holds one per row, so it cannot be read for repeated_k_fold",
                        cv.repeats
                    ),
                )
                .with_help("leave out_of_fold out for a repeated k-fold search"),
            );
            return None;
        }
        let resolved = self.resolve(named.place, &key, named.name)?;
        let fold_rows: Vec<u64> = cv.folds.iter().map(|f| f.rows).collect();
        let named_by = format!("{key} in {}", self.file);
        let expect = OofExpect {
            task: context.task,
            metric,
            classes: context.classes,
            fold_rows: Some(&fold_rows),
            named_by: &named_by,
        };
        let table = match read_out_of_fold(&resolved, expect) {
            Ok(table) => table,
            Err(problems) => {
                self.out.extend(problems);
                return None;
            }
        };
        let shown = resolved.display().to_string();
        // The selected configuration's id, where it came from (for the message) and the key
        // path a missing id is reported at.
        let chosen = match (named.trial, trials.and_then(|t| t.selected_id.as_deref())) {
            (Some((id, place)), _) => Some((
                id,
                place,
                "search.selected_trial".to_owned(),
                format!("{}.selected_trial", named.path),
            )),
            (None, Some(id)) => Some((
                id,
                named.place,
                format!(
                    "the selected trial ({})",
                    trials
                        .and_then(|t| t.selected_by)
                        .unwrap_or("from the trials")
                ),
                key,
            )),
            (None, None) => None,
        };
        let selected = match chosen {
            Some((id, place, by, path)) => match table.position(id) {
                Some(i) => Some(i),
                None => {
                    self.out.push(
                        Diagnostic::at(
                            self.file,
                            place,
                            path,
                            format!(
                                "{by} {id:?} is not among the configurations of the out-of-fold file {shown}"
                            ),
                        )
                        .with_help("the out-of-fold file must include the selected configuration"),
                    );
                    return None;
                }
            },
            None if metric == Metric::Accuracy => {
                let correct: Option<Vec<u64>> = cv.folds.iter().map(|f| f.correct).collect();
                correct.and_then(|c| matching_folds(&table, &c))
            }
            None => None,
        };
        Some(OutOfFold {
            file: named.name.to_owned(),
            table,
            selected,
        })
    }
}
