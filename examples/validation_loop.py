"""A hand-written train/validation/test loop in numpy (logistic regression by gradient descent,
three learning rates, early stopping over 40 epochs) on load_breast_cancer, recorded with
vetscore_record: every checkpoint scored on the validation split is a trial.
Writes examples/out/validation_loop/."""
import sys

import numpy as np
from sklearn.datasets import load_breast_cancer

import vetscore_record as vr

X, y = load_breast_cancer(return_X_y=True)
X = (X - X.mean(axis=0)) / X.std(axis=0)
order = np.random.default_rng(0).permutation(len(y))
tr, va, te = order[:340], order[340:455], order[455:]


def accuracy(w, rows):
    return float(np.mean(((X[rows] @ w[:-1] + w[-1]) > 0) == y[rows]))


run = vr.Run("cancer-logistic", task="binary", metric="accuracy", seed=0)
run.split(tr, te, train_labels=y[tr], test_labels=y[te], validation_ids=va, validation_labels=y[va])
best = (-1.0, None, None)
for lr in (0.001, 0.01, 0.1):
    w = np.zeros(X.shape[1] + 1)
    for epoch in range(40):
        p = 1 / (1 + np.exp(-(X[tr] @ w[:-1] + w[-1])))
        w -= lr * np.append(X[tr].T @ (p - y[tr]), np.sum(p - y[tr])) / len(tr)
        score = accuracy(w, va)
        run.trial(f"lr={lr}/epoch={epoch}", score, params={"lr": lr, "epoch": epoch})
        best = max(best, (score, f"lr={lr}/epoch={epoch}", w.copy()), key=lambda b: b[0])
run.select(best[1], method="grid")
test_score = run.test(y[te], ((X[te] @ best[2][:-1] + best[2][-1]) > 0).astype(int), ids=te, note="final")
run.claim(best[0], basis="cv", text="Validation accuracy of the chosen checkpoint.")
print(run.write(sys.argv[1] if len(sys.argv) > 1 else "out/validation_loop"))
