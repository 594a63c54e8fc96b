"""weight-sign: a curved term whose weight has the wrong sign for the objective's sense."""

ID = "weight-sign"
SEVERITY = "error"
SUMMARY = "A convex or concave term has a weight of the wrong sign for the objective's sense."
SUPERSEDES = ("nonconvex-objective",)
RATIONALE = """
An objective that is a weighted sum of convex (or concave) terms is convex exactly when every
curved term is weighted the right way: under minimisation a convex term needs a nonnegative weight
and a concave one a nonpositive weight (mirrored under maximisation). A regulariser subtracted
instead of added, or a risk term added to a maximised return, is the commonest sign slip in model
code: the model is no longer convex, a convex solver rejects it, and a nonlinear solver rewards
exactly the behaviour the term was meant to penalise. The message names the term, its weight and
the one-sign change that makes the objective convex.
"""
REFERENCE = ("Boyd & Vandenberghe, Convex Optimization (2004), §3.2.1 (nonnegative weighted sums preserve "
             "convexity) and §4.2.1.")
BAD = """
import cvxpy as cp
w = cp.Variable(10)
loss = cp.sum_squares(X @ w - y)
objective = cp.Minimize(loss - 0.1 * cp.norm(w, 1))      # regulariser subtracted
"""
GOOD = """
import cvxpy as cp
w = cp.Variable(10)
loss = cp.sum_squares(X @ w - y)
objective = cp.Minimize(loss + 0.1 * cp.norm(w, 1))
"""


def check(model, analysis):
    from optlint import weights

    for diagnosis in weights.diagnose(model, analysis):
        if diagnosis.wrong:
            yield diagnosis.finding(ID, analysis, "wrong")
