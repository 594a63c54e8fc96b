"""nonconvex-inequality: an inequality (or cone / semidefinite constraint) whose set is not convex."""

ID = "nonconvex-inequality"
SEVERITY = "error"
SUMMARY = "Inequality whose feasible set is not convex (convex >= ..., concave <= ...)."
RATIONALE = """
A constraint f(x) <= g(x) describes a convex set when f - g is convex: a convex function on the
small side and a concave one on the big side. With a convex function on the big side (norm(x) >= 1)
the feasible set is the outside of a ball, which has holes; a convex solver rejects it and a
nonlinear solver may get stuck on either side. Semidefinite and cone constraints need affine
arguments. If the constraint is a physical requirement that really is non-convex, keep it and
document it; often the intent was the other direction or a different function.
"""
REFERENCE = ("Boyd & Vandenberghe, Convex Optimization (2004), §3.1.6 (sublevel sets of convex functions "
             "are convex), §4.2.1 and §4.6.2 (semidefinite constraints).")
BAD = """
import cvxpy as cp
x = cp.Variable(2)
constraints = [cp.norm(x - [1, 2], 2) >= 0.5]   # keep-out zone: not convex
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(2)
constraints = [cp.norm(x - [1, 2], 2) <= 0.5]
"""


def message(analysis, j) -> str:
    from optlint.calculus import Curvature
    from optlint.rulekit import failing_step

    con = j.item
    if con.relation in ("psd", "cone"):
        what = "semidefinite constraint" if con.relation == "psd" else "cone constraint"
        return f"{what} needs affine arguments; here: {failing_step(analysis, j)}"
    left, right = j.sides
    lc, rc = analysis.side_curvature(left), analysis.side_curvature(right)
    small, big = (left, right) if con.relation in ("<=", "<") else (right, left)
    sc, bc = (lc, rc) if con.relation in ("<=", "<") else (rc, lc)
    if bc is Curvature.CONVEX and not bc.is_affine:
        side = f"the greater side `{analysis.text(big)}` is convex where a concave expression is needed"
    elif sc is Curvature.CONCAVE and not sc.is_affine:
        side = f"the lesser side `{analysis.text(small)}` is concave where a convex expression is needed"
    else:
        side = failing_step(analysis, j)
    return f"feasible set is not provably convex: {side}"


def check(model, analysis):
    from optlint.rulekit import site_findings

    items = [c for c in model.constraints if c.relation in ("<=", ">=", "<", ">", "psd", "cone")]
    yield from site_findings(ID, analysis, items, lambda j: not j.unknown_only, message)
