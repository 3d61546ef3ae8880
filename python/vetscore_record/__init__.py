"""Record a training run as a vetscore results manifest.

A few calls while the training script runs: the data split (`Run.split`), the search
(`Run.search_sklearn` for a scikit-learn search object, or `Run.trial` and `Run.select` for any
other library or a hand-written loop), every scoring of the test split as it happens
(`Run.test`), and the claim (`Run.claim`); `Run.write` then writes the manifest, trials,
predictions and id files into a folder, after checking the manifest against the JSON Schema that
`vetscore schema manifest` prints (a copy is kept in this package).

No dependency is required. numpy scalars and arrays and pandas series are accepted wherever a
number or a list is; scikit-learn is imported only by `Run.search_sklearn`.
"""

import datetime
import hashlib
import json
import math
import os
import pathlib

from . import _schema

__all__ = ["Run", "fingerprint", "SCORERS", "ManifestError"]

FORMAT_VERSION = 1

#: scikit-learn scorer name -> (vetscore metric, whether scikit-learn stores it negated).
SCORERS = {
    "accuracy": ("accuracy", False),
    "balanced_accuracy": ("balanced_accuracy", False),
    "f1": ("f1", False),
    "f1_macro": ("f1", False),
    "f1_micro": ("f1", False),
    "roc_auc": ("roc_auc", False),
    "r2": ("r2", False),
    "neg_log_loss": ("log_loss", True),
    "neg_root_mean_squared_error": ("rmse", True),
    "neg_mean_absolute_error": ("mae", True),
}

#: scikit-learn splitter class -> vetscore CV scheme.
SCHEMES = {
    "KFold": "k_fold",
    "StratifiedKFold": "stratified_k_fold",
    "GroupKFold": "group_k_fold",
    "StratifiedGroupKFold": "group_k_fold",
    "RepeatedKFold": "repeated_k_fold",
    "RepeatedStratifiedKFold": "repeated_k_fold",
    "TimeSeriesSplit": "time_ordered",
}

#: scikit-learn search class -> vetscore search method.
METHODS = {
    "GridSearchCV": "grid",
    "RandomizedSearchCV": "random",
    "HalvingGridSearchCV": "sequential",
    "HalvingRandomSearchCV": "sequential",
}


class ManifestError(ValueError):
    """The run cannot be written as a valid manifest; `problems` lists why."""

    def __init__(self, problems):
        self.problems = list(problems)
        super().__init__("the manifest is not valid:\n  " + "\n  ".join(self.problems))


def _plain(value):
    """A JSON-ready Python value from numpy/pandas values (lists, scalars, dicts)."""
    if hasattr(value, "tolist"):  # numpy arrays and scalars, pandas series
        value = value.tolist()
    elif hasattr(value, "item") and not isinstance(value, (str, bytes)):
        value = value.item()
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if value is None or isinstance(value, (bool, int, str)):
        return value
    if isinstance(value, float):
        if not math.isfinite(value):
            raise ManifestError([f"a number must be finite, found {value}"])
        return value
    return repr(value)


def _list(values):
    return list(_plain(values)) if values is not None else None


def _label(value):
    """A class label as text, the same way everywhere (counts, folds, predictions)."""
    value = _plain(value)
    if isinstance(value, bool):
        return "true" if value else "false"
    return str(value)


def _counts(labels):
    counts = {}
    for label in _list(labels):
        key = _label(label)
        counts[key] = counts.get(key, 0) + 1
    return dict(sorted(counts.items()))


def fingerprint(ids):
    """The test fingerprint as docs/manifest.md defines it: "sha256:" + the SHA-256 of the ids
    as text, sorted (by code point, which is UTF-8 byte order), joined by newlines."""
    text = "\n".join(sorted(_label(i) for i in _list(ids)))
    return "sha256:" + hashlib.sha256(text.encode("utf-8")).hexdigest()


def _now():
    return datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


class Run:
    """One model of one training run, recorded as it happens."""

    def __init__(self, name, task, metric, *, run_id=None, commit=None, seed=None, metadata=None):
        if task not in ("binary", "multiclass", "regression"):
            raise ManifestError([f"task must be binary, multiclass or regression, found {task!r}"])
        self.model = {"name": name, "task": task, "metric": metric}
        for key, value in (("run_id", run_id), ("commit", commit), ("seed", seed)):
            if value is not None:
                self.model[key] = _plain(value)
        if metadata:
            self.model["metadata"] = _plain(metadata)
        self.holdout = []
        self._trials = []
        self._search = None
        self._cv = None
        self._claim = None
        self._ids = None
        self._predictions = None
        self._oof = []

    # -- data -------------------------------------------------------------------------------

    def split(self, train_ids, test_ids, *, train_labels=None, test_labels=None,
              validation_ids=None, validation_labels=None):
        """The data split: row ids of the training and test splits (and of a validation split
        carved from the training rows, for a train/validation/test loop). Labels give the class
        counts."""
        train = [_label(i) for i in _list(train_ids)]
        validation = [_label(i) for i in _list(validation_ids)] if validation_ids is not None else []
        test = [_label(i) for i in _list(test_ids)]
        data = {
            "train_rows": len(train) + len(validation),
            "test_rows": len(test),
            "test_fingerprint": fingerprint(test),
        }
        if train_labels is not None and test_labels is not None and self.model["task"] != "regression":
            train_counts = _counts(list(_list(train_labels)) + (_list(validation_labels) or []))
            data["class_counts"] = {"train": train_counts, "test": _counts(test_labels)}
        self.model["data"] = data
        self._ids = (train + validation, test)
        if validation_ids is not None:
            fold = {"rows": len(validation)}
            if validation_labels is not None and self.model["task"] != "regression":
                fold["class_rows"] = _counts(validation_labels)
            self._cv = {"scheme": "validation_split", "folds": [fold]}
        return self

    # -- search -----------------------------------------------------------------------------

    def folds(self, rows, *, scheme="k_fold", class_rows=None, repeats=None):
        """The folds of a search run with another library: rows per validation fold (and per-class
        rows per fold), in fold order."""
        folds = [{"rows": int(_plain(r))} for r in _list(rows)]
        for fold, counts in zip(folds, class_rows or []):
            fold["class_rows"] = {_label(k): int(_plain(v)) for k, v in dict(counts).items()}
        self._cv = {"scheme": scheme, "folds": folds}
        if repeats is not None:
            self._cv["repeats"] = int(repeats)
        return self

    def trial(self, id, scores, params=None):
        """One configuration and its score on each fold (a single number for a validation
        split). With early stopping, every checkpoint scored on the validation split is a trial."""
        scores = _plain(scores)
        scores = [float(s) for s in (scores if isinstance(scores, list) else [scores])]
        entry = {"id": _label(id), "fold_scores": scores}
        if params:
            entry["params"] = _plain(params)
        self._trials.append(entry)
        return self

    def select(self, id, *, method="manual", configurations=None):
        """The configuration that was chosen; its trial's scores become the folds' scores."""
        if self._cv is None:
            raise ManifestError(["select() needs the folds first: split(validation_ids=...) or folds(...)"])
        chosen = [t for t in self._trials if t["id"] == _label(id)]
        if not chosen:
            raise ManifestError([f"no trial {id!r} was recorded"])
        scores = chosen[0]["fold_scores"]
        if len(scores) != len(self._cv["folds"]):
            raise ManifestError([f"trial {id!r} has {len(scores)} scores for {len(self._cv['folds'])} folds"])
        for fold, score in zip(self._cv["folds"], scores):
            fold["score"] = score
            if self.model["metric"] == "accuracy":
                fold["correct"] = round(score * fold["rows"])
        self._search = {"method": method, "selected_trial": _label(id)}
        if configurations is not None:
            self._search["configurations"] = int(configurations)
        return self

    def search_sklearn(self, search, X, y, groups=None, *, cv=None, scheme=None):
        """A fitted scikit-learn search (GridSearchCV, RandomizedSearchCV, ...) with the data it
        was fitted on: fold sizes and per-class counts come from its splitter (`cv`, default the
        search's own), which must split the same way every time."""
        from sklearn.base import is_classifier
        from sklearn.model_selection import check_cv

        splitter = check_cv(cv if cv is not None else search.cv, y, classifier=is_classifier(search.estimator))
        tests = [list(_list(t)) for _, t in splitter.split(X, y, groups)]
        if tests != [list(_list(t)) for _, t in splitter.split(X, y, groups)]:
            raise ManifestError([
                f"{type(splitter).__name__} splits differently each time (shuffle without a fixed "
                "random_state?), so the folds the search used cannot be recovered; fix random_state"
            ])
        results = search.cv_results_
        if len(tests) != search.n_splits_:
            raise ManifestError([f"the splitter gives {len(tests)} folds, the search used {search.n_splits_}"])
        key, name = _scorer_of(search, self.model["metric"])
        metric, negated = SCORERS[name]
        sign = -1.0 if negated else 1.0
        labels = _list(y)
        classify = self.model["task"] != "regression"
        for i, params in enumerate(results["params"]):
            scores = [sign * float(_plain(results[f"split{k}_test_{key}"][i])) for k in range(len(tests))]
            self.trial(i, scores, params=params)
        kind = type(splitter).__name__
        chosen = scheme or SCHEMES.get(kind)
        if chosen is None:
            raise ManifestError([f"{kind} has no vetscore scheme; pass scheme=..."])
        class_rows = [_counts([labels[j] for j in t]) for t in tests] if classify else None
        repeats = getattr(splitter, "n_repeats", None) if chosen == "repeated_k_fold" else None
        self.folds([len(t) for t in tests], scheme=chosen, class_rows=class_rows, repeats=repeats)
        self.select(search.best_index_, method=METHODS.get(type(search).__name__, "manual"),
                    configurations=len(results["params"]))
        return self

    def out_of_fold(self, configuration, ids, folds, y_true, y_pred=None, scores=None):
        """Out-of-fold predictions of one configuration (all its rows, or one fold's): training
        row ids, the fold each row was validated in, the true labels (values), and the predicted
        classes (values) and/or, for a binary task, the positive class's scores."""
        ids, folds, truth = _list(ids), _list(folds), _list(y_true)
        pred = _list(y_pred) if y_pred is not None else None
        score = _list(scores) if scores is not None else None
        lengths = {len(ids), len(folds), len(truth)} | {len(v) for v in (pred, score) if v is not None}
        if len(lengths) != 1:
            raise ManifestError([f"out_of_fold(): ids, folds, labels and predictions differ in length {sorted(lengths)}"])
        if pred is None and score is None:
            raise ManifestError(["out_of_fold(): give y_pred and/or scores"])
        if self._oof and ((pred is None) != (self._oof[0][4] is None) or (score is None) != (self._oof[0][5] is None)):
            raise ManifestError(["out_of_fold(): every call must give the same columns (y_pred, scores)"])
        regression = self.model["task"] == "regression"
        text = (lambda v: repr(float(v))) if regression else _label
        for j in range(len(ids)):
            self._oof.append((
                _label(configuration), _label(ids[j]), int(folds[j]), text(truth[j]),
                text(pred[j]) if pred is not None else None,
                repr(float(score[j])) if score is not None else None,
            ))
        return self

    def out_of_fold_sklearn(self, search, X, y, groups=None, *, top=50, ids=None, cv=None):
        """Recomputes the out-of-fold predictions of a fitted scikit-learn search's best `top`
        configurations (by rank_test_score, and always the selected one) on the search's own
        splitter (or `cv`): for each, on each split, clone(estimator).set_params(**params) is
        fitted on the training part and predicts the held-out part, as cross_val_predict does.
        `ids` are the rows' ids (default: the training ids given to split(), else positions)."""
        import numpy as np
        from sklearn.base import clone, is_classifier
        from sklearn.model_selection import check_cv

        classify = is_classifier(search.estimator)
        splitter = check_cv(cv if cv is not None else search.cv, y, classifier=classify)
        if getattr(splitter, "n_repeats", 1) not in (None, 1):
            raise ManifestError(["out-of-fold predictions of a repeated k-fold search cannot be recorded (one prediction per row)"])
        splits = list(splitter.split(X, y, groups))
        n = len(_list(y))
        if ids is None:
            ids = self._ids[0] if self._ids is not None and len(self._ids[0]) == n else list(range(n))
        ids = _list(ids)
        results = search.cv_results_
        ranks = _list(results[f"rank_test_{_scorer_of(search, self.model['metric'])[0]}"])
        order = sorted(range(len(ranks)), key=lambda i: (ranks[i], i))[:max(1, int(top))]
        if search.best_index_ not in order:
            order.append(int(search.best_index_))
        X, y_arr = np.asarray(X), np.asarray(y)
        binary = self.model["task"] == "binary"
        folds = np.empty(n, dtype=int)
        for k, (_, test) in enumerate(splits):
            folds[test] = k
        for i in order:
            pred = np.empty(n, dtype=object) if classify else np.empty(n)
            score = np.empty(n) if binary else None
            for train, test in splits:
                model = clone(search.estimator).set_params(**results["params"][i]).fit(X[train], y_arr[train])
                pred[test] = model.predict(X[test])
                if binary:
                    if hasattr(model, "predict_proba"):
                        # Column 1 is classes_[1], the positive class of a binary classifier.
                        score[test] = model.predict_proba(X[test])[:, 1]
                    else:
                        score[test] = model.decision_function(X[test])
            self.out_of_fold(i, ids, folds, y_arr, y_pred=list(pred), scores=score)
        return self

    # -- test split -------------------------------------------------------------------------

    def test(self, y_true=None, y_pred=None, *, ids=None, score=None, positive_scores=None,
             rows=None, correct=None, note=None, time=None):
        """One scoring of the test split, recorded when it happens. With `y_true` and `y_pred`
        the score is computed (accuracy, rmse, mae, r2; other metrics need `score`) and, with
        `ids`, the predictions are kept for the predictions file. `positive_scores` (binary) is
        the positive class's score per row: a probability, or a decision-function value (which
        serves ROC AUC; log loss needs probabilities)."""
        entry = {"time": time or _now()}
        metric = self.model["metric"]
        if y_true is not None and y_pred is not None:
            truth, pred = _list(y_true), _list(y_pred)
            if len(truth) != len(pred):
                raise ManifestError([f"{len(truth)} labels but {len(pred)} predictions"])
            rows = len(truth)
            if metric == "accuracy":
                correct = sum(1 for t, p in zip(truth, pred) if _label(t) == _label(p))
                score = correct / rows
            elif metric in ("rmse", "mae", "r2") and score is None:
                score = _regression_score(metric, truth, pred)
            if ids is not None:
                self._predictions = (_list(ids), truth, pred, _list(positive_scores))
        if score is None:
            raise ManifestError([f"test(): give score=, or y_true and y_pred for {metric}"])
        entry["score"] = float(_plain(score))
        if correct is not None:
            entry["correct"] = int(_plain(correct))
        if rows is not None:
            entry["rows"] = int(rows)
        if note:
            entry["note"] = note
        self.holdout.append(entry)
        return entry["score"]

    def claim(self, value, basis="test", text=None, beats_baseline=False):
        """The score stated for the model, and what it rests on (`test` or `cv`)."""
        self._claim = {"value": float(_plain(value)), "basis": basis}
        if text:
            self._claim["text"] = text
        if beats_baseline:
            self._claim["beats_baseline"] = True
        return self

    # -- output -----------------------------------------------------------------------------

    def manifest(self, files=None):
        """The manifest as a dict (files: names of the trials, predictions and id files)."""
        files = files or {}
        model = dict(self.model)
        if self._search is not None:
            search = dict(self._search, cv=self._cv)
            if "trials" in files:
                search["trials_file"] = files["trials"]
            if "out_of_fold" in files:
                search["out_of_fold"] = files["out_of_fold"]
            model["search"] = search
        if "train_ids" in files:
            model["data"] = dict(model["data"], train_ids_file=files["train_ids"],
                                 test_ids_file=files["test_ids"])
        model["holdout"] = list(self.holdout)
        if "predictions" in files:
            model["predictions"] = {"file": files["predictions"]}
        if self._claim is not None:
            model["claim"] = self._claim
        return {"format_version": FORMAT_VERSION, "models": [model]}

    def write(self, folder):
        """Writes manifest.json (and trials.jsonl, predictions.csv, train_ids.txt, test_ids.txt)
        into `folder`; returns the manifest's path. Refuses a manifest the schema rejects."""
        folder = pathlib.Path(folder)
        files = {}
        if self._trials:
            files["trials"] = "trials.jsonl"
        if self._ids is not None:
            files["train_ids"], files["test_ids"] = "train_ids.txt", "test_ids.txt"
        if self._predictions is not None:
            files["predictions"] = "predictions.csv"
        if self._oof:
            files["out_of_fold"] = "out_of_fold.csv"
        doc = self.manifest(files)
        problems = _schema.errors(doc)
        selected = (self._search or {}).get("selected_trial")
        if self._oof and selected is not None and selected not in {r[0] for r in self._oof}:
            problems.append(f"the selected configuration {selected!r} has no out-of-fold predictions")
        if "data" not in self.model:
            problems.insert(0, "split() was not called: the manifest needs the data split")
        if self._claim is None:
            problems.insert(0, "claim() was not called")
        if problems:
            raise ManifestError(problems)
        folder.mkdir(parents=True, exist_ok=True)
        if "trials" in files:
            with open(folder / files["trials"], "w", encoding="utf-8") as out:
                for t in self._trials:
                    out.write(json.dumps(t, allow_nan=False) + "\n")
        if "train_ids" in files:
            for key, ids in zip(("train_ids", "test_ids"), self._ids):
                (folder / files[key]).write_text("".join(f"{i}\n" for i in ids), encoding="utf-8")
        if "predictions" in files:
            self._write_predictions(folder / files["predictions"])
        if "out_of_fold" in files:
            self._write_out_of_fold(folder / files["out_of_fold"])
        path = folder / "manifest.json"
        path.write_text(json.dumps(doc, indent=2, allow_nan=False) + "\n", encoding="utf-8")
        return path

    def _write_out_of_fold(self, path):
        import csv

        first = self._oof[0]
        keep = [k for k in range(6) if k < 4 or first[k] is not None]
        names = ["configuration", "row", "fold", "label", "prediction", "score"]
        with open(path, "w", encoding="utf-8", newline="") as out:
            writer = csv.writer(out, lineterminator="\n")
            writer.writerow([names[k] for k in keep])
            for record in self._oof:
                writer.writerow([record[k] for k in keep])

    def _write_predictions(self, path):
        import csv

        ids, truth, pred, scores = self._predictions
        regression = self.model["task"] == "regression"
        header = ["id", "target" if regression else "label", "prediction"]
        if scores is not None:
            header.append("score")
        with open(path, "w", encoding="utf-8", newline="") as out:
            writer = csv.writer(out, lineterminator="\n")
            writer.writerow(header)
            for row in range(len(ids)):
                cells = [_label(ids[row])]
                if regression:
                    cells += [repr(float(truth[row])), repr(float(pred[row]))]
                else:
                    cells += [_label(truth[row]), _label(pred[row])]
                if scores is not None:
                    cells.append(repr(float(scores[row])))
                writer.writerow(cells)


def _regression_score(metric, truth, pred):
    errors = [float(t) - float(p) for t, p in zip(truth, pred)]
    n = len(errors)
    if metric == "rmse":
        return math.sqrt(sum(e * e for e in errors) / n)
    if metric == "mae":
        return sum(abs(e) for e in errors) / n
    mean = sum(float(t) for t in truth) / n
    total = sum((float(t) - mean) ** 2 for t in truth)
    return 1.0 - sum(e * e for e in errors) / total


def _scorer_of(search, metric):
    """(column key in cv_results_, scikit-learn scorer name) of the metric the search chose by."""
    from sklearn.base import is_classifier

    scoring = search.scoring
    if scoring is None:
        key, name = "score", "accuracy" if is_classifier(search.estimator) else "r2"
    elif isinstance(scoring, str):
        key, name = "score", scoring
    elif isinstance(scoring, (list, tuple, set, dict)):
        if not isinstance(search.refit, str):
            raise ManifestError(["a search with several scorers needs refit=<scorer name> to say which one chose"])
        key = search.refit
        name = scoring[key] if isinstance(scoring, dict) else key
        if not isinstance(name, str):
            raise ManifestError([f"scorer {key!r} is not a scikit-learn scorer name"])
    else:
        raise ManifestError(["a callable scorer has no known metric; record the search with trial() and select()"])
    if name not in SCORERS:
        raise ManifestError([f"scorer {name!r} has no vetscore metric; use one of {', '.join(SCORERS)}"])
    if SCORERS[name][0] != metric:
        raise ManifestError([f"the search chose by {name!r} ({SCORERS[name][0]}), but the run's metric is {metric}"])
    return key, name
