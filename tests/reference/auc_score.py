"""The score-type interval for a ROC AUC that vetscore widens DeLong's interval to (shared by
tests/reference/evidence_scenarios.py and tests/reference/edge_scenarios.py)."""

from scipy import optimize, stats


def score_auc_interval(auc, m, n, z=stats.norm.isf(0.025)):
    """Score-type interval for the AUC: the theta with (auc - theta)^2 = z^2 V(theta), V the
    Hanley & McNeil (1982) variance written as a function of theta, with m - 1 and n - 1
    replaced by N* - 1, N* = (m + n)/2 (Newcombe 2006). Solved by scipy.optimize.brentq."""
    ns = (m + n) / 2.0

    def v(t):
        return t * (1 - t) / (m * n) * (1 + (ns - 1) * ((1 - t) / (2 - t) + t / (1 + t)))

    def g(t):
        return (auc - t) ** 2 - z * z * v(t)

    # g < 0 strictly inside the interval; at AUC = 0 or 1, V vanishes at the estimate too, so the
    # bracket starts just inside it.
    inside_lo = auc if auc < 1 else auc - 1e-12
    inside_hi = auc if auc > 0 else auc + 1e-12
    lo = optimize.brentq(g, 0.0, inside_lo, xtol=1e-15, rtol=1e-15) if g(0.0) > 0 else 0.0
    hi = optimize.brentq(g, inside_hi, 1.0, xtol=1e-15, rtol=1e-15) if g(1.0) > 0 else 1.0
    return float(lo), float(hi)
