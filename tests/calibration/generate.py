"""Generate the calibration corpus: real scikit-learn searches whose truth is known.

Each case is one hyperparameter search as a team would run it: a binary classification data set
drawn with `sklearn.datasets.make_classification`, a training split of `train_rows` rows, a grid
of `configurations` settings of one model family scored by stratified `folds`-fold
cross-validation (accuracy), the configuration with the best mean CV accuracy selected (the first
one on ties, as `GridSearchCV` does through `rank_test_score`), refitted on the whole training
split and scored on

- a realistic test split of max(50, train_rows / 4) rows (what a manifest would carry), and
- a truth split of 20,000 rows drawn from the same distribution, whose accuracy stands for the
  selected model's true accuracy (binomial standard error at most 0.0036).

The corpus keeps what a selection-optimism gate may read (fold sizes and per-class counts, every
configuration's correct count on every fold, every configuration's out-of-fold correctness per
row, bit-packed) and what it must not (the truth), one JSON object per line in `corpus.jsonl`.

Pinned: Python 3.11, numpy 2.4.6, scipy 1.17.1, scikit-learn 1.9.1. Run:

    python3 -m venv /tmp/vs-venv
    /tmp/vs-venv/bin/pip install numpy==2.4.6 scipy==1.17.1 scikit-learn==1.9.1
    /tmp/vs-venv/bin/python tests/calibration/generate.py            # the whole corpus
    /tmp/vs-venv/bin/python tests/calibration/generate.py --cases 5  # a quick look

The design is a fixed list of cases (`design()`): every training size × every grid size, six
replicates each, cycling through the model families and fold counts, with a data set drawn per
case from a seed. A case is a pure function of its seed, so the corpus can be regenerated in
parts and compared line by line.
"""

from __future__ import annotations

import argparse
import base64
import itertools
import json
import math
import sys
import time
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import sklearn
from sklearn.base import clone
from sklearn.datasets import make_classification
from sklearn.exceptions import ConvergenceWarning
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.svm import SVC
from sklearn.tree import DecisionTreeClassifier

TRAIN_SIZES = (20, 40, 80, 160, 400, 1000)
GRID_SIZES = (1, 5, 25, 100, 400, 900)
REPLICATES = 6
FAMILIES = ("svc", "knn", "logistic", "tree")
FOLD_COUNTS = (3, 5, 10)
TRUTH_ROWS = 20_000


@dataclass(frozen=True)
class Case:
    case_id: str
    seed: int
    train_rows: int
    configurations: int
    family: str
    folds: int


def design() -> list[Case]:
    cases = []
    index = 0
    for n, grid, rep in itertools.product(TRAIN_SIZES, GRID_SIZES, range(REPLICATES)):
        family = FAMILIES[index % len(FAMILIES)]
        folds = FOLD_COUNTS[(index // len(FAMILIES)) % len(FOLD_COUNTS)]
        # Stratified k-fold needs at least `folds` rows of each class; the smallest sizes use
        # at most 5 folds (a 20-row split in 10 folds of 2 is not a search anyone runs).
        if n < 40:
            folds = min(folds, 5)
        cases.append(Case(f"c{index:03d}", 1000 + index, n, grid, family, folds))
        index += 1
    return cases


def axis(count: int, low: float, high: float) -> list[float]:
    """`count` log-spaced values from 10^low to 10^high (the middle one when count is 1)."""
    if count == 1:
        return [10 ** ((low + high) / 2)]
    return [float(v) for v in np.logspace(low, high, count)]


def split_grid(configurations: int) -> tuple[int, int]:
    """Two axis lengths whose product is `configurations` (as square as possible)."""
    a = int(math.isqrt(configurations))
    while configurations % a:
        a -= 1
    return a, configurations // a


def grid(family: str, configurations: int, train_fold_rows: int) -> list:
    """The `configurations` estimators of one family's grid, in grid order."""
    a, b = split_grid(configurations)
    if family == "svc":
        return [
            make_pipeline(StandardScaler(), SVC(C=c, gamma=g))
            for c, g in itertools.product(axis(a, -2, 3), axis(b, -4, 1))
        ]
    if family == "logistic":
        # C × (penalty, class weight) settings; liblinear fits both penalties.
        # l1_ratio 0 is the L2 penalty, 1 the L1 penalty (scikit-learn 1.8 deprecated `penalty`).
        settings = [(0.0, None), (1.0, None), (0.0, "balanced"), (1.0, "balanced")]
        kinds = min(len(settings), b) if configurations > 1 else 1
        cs = axis(configurations // kinds, -3, 3)
        out = []
        for (l1_ratio, weight), c in itertools.product(settings[:kinds], cs):
            out.append(
                make_pipeline(
                    StandardScaler(),
                    LogisticRegression(C=c, l1_ratio=l1_ratio, class_weight=weight, solver="liblinear"),
                )
            )
        while len(out) < configurations:  # remainder of an uneven split: more C values
            out.append(
                make_pipeline(StandardScaler(), LogisticRegression(C=1.0 + len(out), solver="liblinear"))
            )
        return out[:configurations]
    if family == "knn":
        # Neighbours × Minkowski p, half of the p values with distance weights; the neighbour
        # axis is as long as the training fold allows (at most 60 values).
        a = max(d for d in range(1, min(configurations, train_fold_rows, 60) + 1) if configurations % d == 0)
        b = configurations // a
        neighbours = np.linspace(1, train_fold_rows, a).round().astype(int)
        ps = np.linspace(1.0, 4.0, b) if b > 1 else [2.0]
        return [
            make_pipeline(
                StandardScaler(),
                KNeighborsClassifier(
                    n_neighbors=int(k), p=float(p), weights="distance" if i % 2 else "uniform"
                ),
            )
            for (i, p), k in itertools.product(enumerate(ps), neighbours)
        ]
    if family == "tree":
        depths = [None] + list(range(1, 40))
        leaves = [1, 2, 3, 4, 5, 6, 8, 10, 12, 15, 20, 25, 30, 40, 50]
        criteria = ["gini", "entropy", "log_loss"]
        combos = list(itertools.product(criteria, leaves, depths))
        # Spread the grid over the whole space rather than the first rows of it.
        step = max(1, len(combos) // configurations)
        picked = combos[::step][:configurations]
        return [
            DecisionTreeClassifier(criterion=c, min_samples_leaf=leaf, max_depth=d, random_state=0)
            for c, leaf, d in picked
        ]
    raise ValueError(family)


def data(case: Case) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(case.seed)
    test_rows = max(50, case.train_rows // 4)
    total = case.train_rows + test_rows + TRUTH_ROWS
    informative = int(rng.choice([2, 4, 8]))
    redundant = 2
    x, y = make_classification(
        n_samples=total,
        n_features=informative + redundant + int(rng.choice([1, 4, 10])),
        n_informative=informative,
        n_redundant=redundant,
        n_clusters_per_class=int(rng.choice([1, 2])),
        class_sep=float(rng.choice([0.5, 0.8, 1.2])),
        flip_y=float(rng.choice([0.0, 0.05, 0.15])),
        weights=[float(rng.choice([0.5, 0.65, 0.8]))],
        random_state=case.seed,
    )
    return x, y


def run_case(case: Case) -> dict:
    x, y = data(case)
    n = case.train_rows
    test_rows = max(50, n // 4)
    x_train, y_train = x[:n], y[:n]
    x_test, y_test = x[n : n + test_rows], y[n : n + test_rows]
    x_truth, y_truth = x[n + test_rows :], y[n + test_rows :]

    splitter = StratifiedKFold(n_splits=case.folds, shuffle=True, random_state=case.seed)
    folds = list(splitter.split(x_train, y_train))
    fold_of_row = np.empty(n, dtype=np.int64)
    for k, (_, val) in enumerate(folds):
        fold_of_row[val] = k
    smallest_train = min(len(tr) for tr, _ in folds)
    estimators = grid(case.family, case.configurations, smallest_train)
    assert len(estimators) == case.configurations, (case, len(estimators))

    correct = np.zeros((case.configurations, n), dtype=bool)
    for k, (tr, val) in enumerate(folds):
        for j, est in enumerate(estimators):
            model = clone(est).fit(x_train[tr], y_train[tr])
            correct[j, val] = model.predict(x_train[val]) == y_train[val]

    fold_correct = np.stack(
        [correct[:, fold_of_row == k].sum(axis=1) for k in range(case.folds)], axis=1
    )
    fold_rows = np.bincount(fold_of_row, minlength=case.folds)
    fold_means = fold_correct / fold_rows  # scikit-learn's splitK_test_score
    mean_scores = fold_means.mean(axis=1)  # its mean_test_score
    selected = int(np.flatnonzero(mean_scores == mean_scores.max())[0])

    final = clone(estimators[selected]).fit(x_train, y_train)
    test_correct = int((final.predict(x_test) == y_test).sum())
    truth = float((final.predict(x_truth) == y_truth).mean())

    packed = np.packbits(correct, axis=1, bitorder="little")
    return {
        "case": case.case_id,
        "seed": case.seed,
        "family": case.family,
        "train_rows": n,
        "configurations": case.configurations,
        "folds": case.folds,
        "fold_rows": fold_rows.tolist(),
        "fold_class_rows": [
            np.bincount(y_train[fold_of_row == k], minlength=2).tolist() for k in range(case.folds)
        ],
        "fold_of_row": fold_of_row.tolist(),
        "label": y_train.astype(int).tolist(),
        "fold_correct": fold_correct.tolist(),
        "selected": selected,
        "cv_mean": float(mean_scores[selected]),
        "oof_correct_bits": [base64.b64encode(row.tobytes()).decode() for row in packed],
        "test": {"rows": test_rows, "correct": test_correct},
        "truth": {"rows": TRUTH_ROWS, "accuracy": truth},
    }


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).with_name("corpus.jsonl"))
    parser.add_argument("--cases", type=int, default=None, help="only the first N cases")
    parser.add_argument("--only", default=None, help="comma-separated case ids")
    args = parser.parse_args()
    warnings.filterwarnings("ignore", category=ConvergenceWarning)
    # A 20-row split with a rare class has fewer rows of it than folds; scikit-learn warns and
    # splits anyway, as it would in a real search.
    warnings.filterwarnings("ignore", message="The least populated class")

    cases = design()
    if args.only:
        wanted = set(args.only.split(","))
        cases = [c for c in cases if c.case_id in wanted]
    if args.cases is not None:
        cases = cases[: args.cases]
    header = {
        "corpus": "vetscore selection-optimism calibration",
        "generator": "tests/calibration/generate.py",
        "versions": {
            "python": sys.version.split()[0],
            "numpy": np.__version__,
            "scikit-learn": sklearn.__version__,
        },
        "cases": len(cases),
        "truth_rows": TRUTH_ROWS,
    }
    with args.out.open("w") as out:
        out.write(json.dumps(header) + "\n")
        for case in cases:
            started = time.monotonic()
            record = run_case(case)
            out.write(json.dumps(record, separators=(",", ":")) + "\n")
            out.flush()
            print(
                f"{case.case_id} n={case.train_rows} N={case.configurations} K={case.folds} "
                f"{case.family}: cv {record['cv_mean']:.3f} truth {record['truth']['accuracy']:.3f} "
                f"({time.monotonic() - started:.1f} s)",
                file=sys.stderr,
            )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
