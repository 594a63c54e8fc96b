"""weight-sign-unknown: a curved term whose weight has a sign nothing in the code establishes."""

ID = "weight-sign-unknown"
SEVERITY = "warning"
SUMMARY = "The sign of a weight on a convex or concave term is unknown, and it decides convexity."
SUPERSEDES = ("nonconvex-objective",)
RATIONALE = """
When a weight multiplies a convex or concave term, its sign decides whether the objective is
convex. A weight that arrives as a function argument, a parameter declared without a sign or an
attribute set elsewhere could be negative, and then the model silently stops being convex. Declare
the sign where the weight is made (a nonnegative parameter), guard it (assert gamma >= 0), or record
the assumption in the project's configuration, so the proof goes through.
"""
REFERENCE = ("Boyd & Vandenberghe, Convex Optimization (2004), §3.2.1 (only nonnegative weighted sums "
             "preserve convexity).")
BAD = """
import cvxpy as cp
def fit(X, y, lam):
    w = cp.Variable(X.shape[1])
    return cp.Problem(cp.Minimize(cp.sum_squares(X @ w - y) + lam * cp.norm(w, 1)))
"""
GOOD = """
import cvxpy as cp
def fit(X, y, lam):
    if lam < 0:
        raise ValueError("lam must be nonnegative")
    w = cp.Variable(X.shape[1])
    return cp.Problem(cp.Minimize(cp.sum_squares(X @ w - y) + lam * cp.norm(w, 1)))
"""


def check(model, analysis):
    from optlint import weights

    for diagnosis in weights.diagnose(model, analysis):
        if diagnosis.unknown:
            yield diagnosis.finding(ID, analysis, "unknown")
