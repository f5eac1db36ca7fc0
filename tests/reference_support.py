"""Independent reference computations shared by the reference tests (never the code under test)."""

from __future__ import annotations

from scipy.optimize import brentq


def restricted_difference_reference(x1, n1, x2, n2, d):
    """Restricted MLE under p1 - p2 = d from the score equation of the constrained likelihood
    (scipy.optimize.brentq; the likelihood is concave in p2, so the derivative changes sign once)."""

    def g(p2):
        p1 = p2 + d
        return (
            (x1 / p1 if x1 else 0.0)
            - ((n1 - x1) / (1 - p1) if n1 > x1 else 0.0)
            + (x2 / p2 if x2 else 0.0)
            - ((n2 - x2) / (1 - p2) if n2 > x2 else 0.0)
        )

    lo, hi = max(0.0, -d), min(1.0, 1.0 - d)
    a, b = (lo * (1 + 1e-14) if lo > 0 else 1e-300), hi - 1e-15
    if g(a) <= 0:
        return a + d, a
    if g(b) >= 0:
        return b + d, b
    p2 = brentq(g, a, b, xtol=1e-300, rtol=1e-15, maxiter=500)
    return p2 + d, p2
