"""nonaffine-equality: an equality constraint whose sides differ by a non-affine expression."""

ID = "nonaffine-equality"
SEVERITY = "error"
SUMMARY = "Equality constraint that is not affine."
RATIONALE = """
In a convex problem every equality constraint is affine: the set {x : h(x) = 0} of a non-affine h
is in general not convex (a sphere, a curve), even when h itself is convex. A solver for convex
problems rejects it; a nonlinear solver treats it as a curved manifold with local solutions. If the
intent is h(x) <= 0 with h convex, write the inequality; if the equality is physics (dynamics,
balances that really are nonlinear), the model is non-convex by design and should say so.
"""
REFERENCE = "Boyd & Vandenberghe, Convex Optimization (2004), §4.2.1 (equality constraints must be affine)."
BAD = """
import cvxpy as cp
x = cp.Variable(3)
constraints = [cp.norm(x, 2) == 1]          # a sphere: not a convex set
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(3)
constraints = [cp.norm(x, 2) <= 1, cp.sum(x) == 1]
"""


def message(analysis, j) -> str:
    from optlint.rulekit import failing_step

    return f"equality constraint is not affine ({j.result.curvature.value}): {failing_step(analysis, j)}"


def check(model, analysis):
    from optlint.rulekit import site_findings

    items = [c for c in model.constraints if c.relation == "=="]
    yield from site_findings(ID, analysis, items, lambda j: not j.unknown_only, message)
