"""strict-inequality: ``<`` or ``>`` in a model constraint."""

from optlint.findings import Finding

ID = "strict-inequality"
SEVERITY = "warning"
SUMMARY = "Strict inequality (< or >) in a model constraint."
RATIONALE = """
Solvers work with closed feasible sets: a strict inequality has no minimiser on its boundary, so
modelling packages either reject it or silently treat it as non-strict. Code that reads `x > 0`
suggests a guarantee the solution does not give (it may be exactly 0). Write `>=` and, if a strict
margin matters, a small explicit bound (x >= eps) chosen for the units of the model.
"""
REFERENCE = ("Boyd & Vandenberghe, Convex Optimization (2004), §4.1.1 (problems are stated with "
             "non-strict inequalities; the optimal value is an infimum).")
BAD = """
import cvxpy as cp
rate = cp.Variable(3)
constraints = [rate > 0]
"""
GOOD = """
import cvxpy as cp
rate = cp.Variable(3)
constraints = [rate >= 1e-3]     # explicit margin in the model's units
"""


def check(model, analysis):
    for con in model.constraints:
        if con.relation not in ("<", ">") or not any(analysis.has_variables(l - r) for l, r, _ in con.variants):
            continue
        wide = "<=" if con.relation == "<" else ">="
        yield Finding(
            rule=ID, site=con.site,
            message=(f"strict inequality `{con.relation}` in a constraint: solvers treat it as `{wide}`; "
                     f"write `{wide}` (with an explicit margin if one is meant)"),
            evidence={"relation": con.relation, "suggested": wide},
        )
