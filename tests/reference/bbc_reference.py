"""Reference implementation of BBC-CV and of the effective number of configurations, in numpy.

Pinned: numpy==2.4.6 (Python 3.11), e.g.
    python3 -m venv /tmp/bbc-venv && /tmp/bbc-venv/bin/pip install numpy==2.4.6

Two uses:
    python tests/reference/bbc_reference.py generate   # writes tests/reference/bbc_values.json
    python tests/reference/bbc_reference.py bench FILE CONFIGS ROWS RESAMPLES
        FILE holds CONFIGS x ROWS bytes (0/1 correctness, configuration by configuration); prints
        JSON with the BBC-CV estimate, its spread and the wall time of the bootstrap.

BBC-CV: Tsamardinos, Greasidou & Borboudakis (2018), Machine Learning 107:1895-1922. In each
bootstrap resample of the rows, select the configuration with the best in-bag performance and
score it on the out-of-bag rows; the estimate is the mean of those scores. Written independently
of the Rust code, as a user would write it with numpy: per resample one bincount of the drawn rows
and one matrix-vector product for the in-bag totals of all configurations.

Effective number of configurations from the eigenvalues of the correlation matrix
(numpy.linalg.eigvalsh of numpy.corrcoef): Li & Ji (2005), Heredity 95:221-227, and Galwey (2009),
Genetic Epidemiology 33:559-568.
"""
import json
import sys
import time

import numpy as np


def bbc_cv(values, resamples, seed, higher_is_better=True):
    """values: configurations x rows (correctness 0/1 or per-row values). Returns (estimate, sd)."""
    configs, rows = values.shape
    rng = np.random.default_rng(seed)
    weights = values.astype(np.float64)
    scores = []
    for _ in range(resamples):
        counts = np.bincount(rng.integers(0, rows, size=rows), minlength=rows)
        in_bag = weights @ counts
        best = int(np.argmax(in_bag) if higher_is_better else np.argmin(in_bag))
        out = counts == 0
        if out.any():
            scores.append(weights[best, out].mean())
    scores = np.asarray(scores)
    return float(scores.mean()), float(scores.std(ddof=1)), len(scores)


def li_ji(eigenvalues):
    x = np.abs(eigenvalues)
    return float(np.sum((x >= 1).astype(float) + (x - np.floor(x))))


def galwey(eigenvalues):
    lam = np.clip(eigenvalues, 0, None)
    return float(np.sum(np.sqrt(lam)) ** 2 / np.sum(lam))


def effective(values):
    eig = np.linalg.eigvalsh(np.corrcoef(values))
    # Round-off eigenvalues of a rank-deficient matrix (about 1e-15) would add their square roots
    # (3e-8 each) to Galwey's sum; numpy.linalg.matrix_rank's tolerance sets them to zero.
    eig = np.where(np.abs(eig) <= eig.max() * len(eig) * np.finfo(float).eps, 0.0, eig)
    return {"li_ji": li_ji(eig), "galwey": galwey(eig)}


def latent_correctness(rng, configs, rows, skill, spread, shared):
    """0/1 correctness: row difficulty shared across configurations (weight `shared`)."""
    difficulty = rng.normal(size=rows)
    own = rng.normal(size=(configs, rows))
    signal = np.sqrt(shared) * difficulty + np.sqrt(1 - shared) * own
    skills = skill + spread * rng.normal(size=(configs, 1))
    # Correct when the latent signal is below the configuration's normal quantile of its skill.
    threshold = np.quantile(rng.normal(size=200_000), np.clip(skills, 0.01, 0.99).ravel())
    return (signal < threshold[:, None]).astype(np.uint8)


def bits(matrix):
    return ["".join(map(str, row)) for row in matrix.astype(int)]


def generate():
    rng = np.random.default_rng(20180507)
    out = {"numpy": np.__version__, "effective": [], "bbc": []}

    base = latent_correctness(rng, 8, 200, 0.75, 0.03, 0.5)
    out["effective"].append({"name": "correlated_correctness", "rows": 200,
                             "correctness": bits(base), **effective(base)})
    # Duplicates of configurations 0 and 3 and two constant configurations: the documented rule
    # counts duplicates once and all constants as one, so the expected value is the base's + 1.
    with_dups = np.vstack([base, base[0], base[3], np.ones(200, np.uint8), np.zeros(200, np.uint8)])
    expected = effective(base)
    out["effective"].append({"name": "duplicates_and_constants", "rows": 200,
                             "correctness": bits(with_dups),
                             "li_ji": expected["li_ji"] + 1, "galwey": expected["galwey"] + 1})
    wide = latent_correctness(rng, 60, 25, 0.7, 0.05, 0.3)
    # Drop constants and duplicates so numpy's corrcoef is defined and the rule does not apply.
    keep = []
    for i, row in enumerate(wide):
        if row.min() != row.max() and not any((wide[j] == row).all() for j in keep):
            keep.append(i)
    wide = wide[keep]
    out["effective"].append({"name": "more_configurations_than_rows", "rows": 25,
                             "correctness": bits(wide), **effective(wide)})
    losses = np.round(rng.gamma(2.0, 0.3, size=(10, 150)) + 0.5 * rng.gamma(2.0, 0.3, size=150), 6)
    out["effective"].append({"name": "losses", "rows": 150, "values": losses.ravel().tolist(),
                             **effective(losses)})

    resamples = 20_000
    one = latent_correctness(rng, 1, 200, 0.7, 0.0, 0.0)
    grid = latent_correctness(rng, 30, 400, 0.72, 0.02, 0.6)
    for name, matrix in [("one_configuration", one), ("thirty_configurations", grid)]:
        est, sd, used = bbc_cv(matrix, resamples, 1)
        out["bbc"].append({"name": name, "rows": matrix.shape[1], "correctness": bits(matrix),
                           "higher_is_better": True, "resamples": used, "estimate": est,
                           "spread": sd})
    loss = np.round(rng.gamma(2.0, 0.25, size=(12, 300)) + 0.6 * rng.gamma(2.0, 0.25, size=300), 6)
    est, sd, used = bbc_cv(loss, resamples, 2, higher_is_better=False)
    out["bbc"].append({"name": "per_row_losses", "rows": 300, "values": loss.ravel().tolist(),
                       "higher_is_better": False, "resamples": used, "estimate": est,
                       "spread": sd})
    path = "tests/reference/bbc_values.json"
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(f"wrote {path}")


def bench(path, configs, rows, resamples):
    matrix = np.fromfile(path, dtype=np.uint8).reshape(configs, rows)
    start = time.perf_counter()
    est, sd, used = bbc_cv(matrix, resamples, 7)
    seconds = time.perf_counter() - start
    print(json.dumps({"estimate": est, "spread": sd, "resamples": used, "seconds": seconds}))


if __name__ == "__main__":
    if sys.argv[1] == "generate":
        generate()
    else:
        bench(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]), int(sys.argv[5]))
