"""Tests of vetscore_record. Expected values come from the documented definitions (the
fingerprint snippet of docs/manifest.md), from scikit-learn's own cv_results_, or from the
jsonschema package (4.26.0) validating against the same schema."""
import hashlib
import json

import pytest

import vetscore_record as vr
from vetscore_record import _schema


def small_run():
    run = vr.Run("m", task="binary", metric="accuracy", seed=1)
    run.split(["a", "b", "c", "d"], ["e", "f"], train_labels=[0, 1, 0, 1], test_labels=[0, 1])
    run.folds([2, 2], class_rows=[{0: 1, 1: 1}, {0: 1, 1: 1}])
    run.trial("x", [0.5, 1.0]).trial("y", [1.0, 0.5], params={"depth": 2})
    run.select("x", method="grid")
    run.test([0, 1], [0, 0], ids=["e", "f"])
    run.claim(0.5)
    return run


def test_fingerprint_is_the_documented_snippet():
    ids = [10, 2, "b", "a"]
    documented = "sha256:" + hashlib.sha256("\n".join(sorted(str(i) for i in ids)).encode()).hexdigest()
    assert vr.fingerprint(ids) == documented


def test_plain_lists_give_the_selected_folds_and_counts(tmp_path):
    path = small_run().write(tmp_path)
    model = json.loads(path.read_text())["models"][0]
    folds = model["search"]["cv"]["folds"]
    assert [f["score"] for f in folds] == [0.5, 1.0]
    assert [f["correct"] for f in folds] == [1, 2]
    assert model["search"]["selected_trial"] == "x"
    assert model["holdout"][0]["correct"] == 1 and model["holdout"][0]["rows"] == 2
    assert model["data"]["class_counts"]["train"] == {"0": 2, "1": 2}
    lines = (tmp_path / "trials.jsonl").read_text().splitlines()
    assert [json.loads(l)["id"] for l in lines] == ["x", "y"]
    assert (tmp_path / "predictions.csv").read_text() == "id,label,prediction\ne,0,0\nf,1,0\n"


def test_the_validator_agrees_with_jsonschema():
    jsonschema = pytest.importorskip("jsonschema")
    schema = _schema.load_schema()
    good = small_run().manifest()
    bad_key = json.loads(json.dumps(good))
    bad_key["models"][0]["claim"]["valeu"] = 1
    bad_type = json.loads(json.dumps(good))
    bad_type["models"][0]["data"]["train_rows"] = "four"
    missing = json.loads(json.dumps(good))
    del missing["models"][0]["claim"]
    bad_scheme = json.loads(json.dumps(good))
    bad_scheme["models"][0]["search"]["cv"]["scheme"] = "holdout"
    for doc, valid in ((good, True), (bad_key, False), (bad_type, False), (missing, False), (bad_scheme, False)):
        theirs = jsonschema.Draft202012Validator(schema).is_valid(doc)
        assert theirs == valid
        assert (not _schema.errors(doc, schema)) == valid


def test_numpy_values_are_accepted(tmp_path):
    np = pytest.importorskip("numpy")
    run = vr.Run("n", task="binary", metric="accuracy")
    run.split(np.arange(8), np.arange(8, 10), train_labels=np.array([0, 1] * 4), test_labels=np.array([0, 1]))
    run.split(np.arange(6), np.arange(8, 10), validation_ids=np.arange(6, 8),
              train_labels=np.array([0, 1] * 3), test_labels=np.array([0, 1]), validation_labels=np.array([0, 1]))
    run.trial(np.int64(3), np.float64(0.5))
    run.select(3)
    run.test(np.array([0, 1]), np.array([1, 1]), ids=np.arange(8, 10))
    run.claim(np.float32(0.5))
    model = json.loads(run.write(tmp_path).read_text())["models"][0]
    assert model["search"]["cv"] == {"scheme": "validation_split", "folds": [
        {"rows": 2, "class_rows": {"0": 1, "1": 1}, "score": 0.5, "correct": 1}]}
    assert model["data"]["train_rows"] == 8


def test_an_invalid_manifest_is_not_written(tmp_path):
    run = vr.Run("m", task="binary", metric="accuracy")
    run.split(["a"], ["b"])
    with pytest.raises(vr.ManifestError, match="claim"):
        run.write(tmp_path)
    assert not (tmp_path / "manifest.json").exists()


def _search(scoring, refit=True, shuffle_seed=0, probabilities=False):
    sklearn = pytest.importorskip("sklearn")
    from sklearn.datasets import load_iris
    from sklearn.model_selection import GridSearchCV, StratifiedKFold
    from sklearn.svm import SVC

    X, y = load_iris(return_X_y=True)
    cv = StratifiedKFold(3, shuffle=True, random_state=shuffle_seed)
    return GridSearchCV(SVC(probability=probabilities, random_state=0), {"C": [0.1, 1.0, 10.0]}, cv=cv, scoring=scoring, refit=refit).fit(X, y), X, y


def test_a_scikit_learn_search_gives_folds_from_its_splitter():
    search, X, y = _search(None)
    run = vr.Run("iris", task="multiclass", metric="accuracy")
    run.search_sklearn(search, X, y)
    doc = run.manifest()["models"][0]["search"]
    assert doc["cv"]["scheme"] == "stratified_k_fold" and doc["method"] == "grid"
    assert doc["selected_trial"] == str(search.best_index_)
    for k, (_, test) in enumerate(search.cv.split(X, y)):
        fold = doc["cv"]["folds"][k]
        assert fold["rows"] == len(test)
        assert fold["score"] == search.cv_results_[f"split{k}_test_score"][search.best_index_]
        assert sum(fold["class_rows"].values()) == len(test)


def test_negated_losses_and_several_scorers():
    search, X, y = _search(["accuracy", "neg_log_loss"], refit="neg_log_loss", probabilities=True)
    run = vr.Run("iris", task="multiclass", metric="log_loss")
    run.search_sklearn(search, X, y)
    best = search.best_index_
    assert run._trials[best]["fold_scores"][0] == -search.cv_results_["split0_test_neg_log_loss"][best]


def test_unmappable_scorers_and_unrepeatable_splits_are_refused():
    search, X, y = _search("neg_mean_squared_error")
    with pytest.raises(vr.ManifestError, match="no vetscore metric"):
        vr.Run("i", task="multiclass", metric="accuracy").search_sklearn(search, X, y)
    search, X, y = _search(None, shuffle_seed=None)
    with pytest.raises(vr.ManifestError, match="splits differently"):
        vr.Run("i", task="multiclass", metric="accuracy").search_sklearn(search, X, y)


def test_out_of_fold_predictions_of_a_search_pass_the_check(tmp_path):
    """The out-of-fold file of the top configurations: each one's accuracy equals
    sklearn.metrics.accuracy_score on cross_val_predict with the search's folds (scikit-learn
    1.9.1), its per-fold accuracy equals cv_results_, and `vetscore check` reads it."""
    import csv
    import os
    import pathlib
    import subprocess

    pytest.importorskip("sklearn")
    from sklearn.base import clone
    from sklearn.datasets import load_breast_cancer
    from sklearn.metrics import accuracy_score
    from sklearn.model_selection import GridSearchCV, StratifiedKFold, cross_val_predict
    from sklearn.neighbors import KNeighborsClassifier

    X, y = load_breast_cancer(return_X_y=True)
    X, y = X[:150], y[:150]
    cv = StratifiedKFold(3, shuffle=True, random_state=0)
    search = GridSearchCV(KNeighborsClassifier(), {"n_neighbors": [1, 3, 5, 7, 9]}, cv=cv).fit(X, y)
    run = vr.Run("leaf", task="binary", metric="accuracy")
    ids = [f"r{i}" for i in range(len(y))]
    run.split(ids, ["t0", "t1"], train_labels=y, test_labels=[0, 1])
    run.search_sklearn(search, X, y)
    run.out_of_fold_sklearn(search, X, y, top=3)
    run.claim(float(search.best_score_), basis="cv")
    path = run.write(tmp_path)
    rows = list(csv.DictReader(open(tmp_path / "out_of_fold.csv", encoding="utf-8")))
    configs = sorted({r["configuration"] for r in rows}, key=int)
    assert str(search.best_index_) in configs and len(configs) == 3
    for c in configs:
        mine = [r for r in rows if r["configuration"] == c]
        params = search.cv_results_["params"][int(c)]
        want = accuracy_score(y, cross_val_predict(clone(search.estimator).set_params(**params), X, y, cv=cv))
        assert sum(r["label"] == r["prediction"] for r in mine) / len(y) == want
        for k in range(3):
            fold = [r for r in mine if r["fold"] == str(k)]
            got = sum(r["label"] == r["prediction"] for r in fold) / len(fold)
            assert got == pytest.approx(search.cv_results_[f"split{k}_test_score"][int(c)], abs=1e-12)
    binary = os.environ.get("VETSCORE") or str(pathlib.Path(__file__).resolve().parents[2] / "target/debug/vetscore")
    if not os.path.exists(binary):
        pytest.skip(f"no vetscore binary at {binary} (set VETSCORE)")
    done = subprocess.run([binary, "check", "--root", str(tmp_path), str(path)], capture_output=True, text=True)
    # A CV claim with no test scoring is not supported (exit 1); an unreadable file would be 2.
    assert done.returncode == 1, done.stderr
