"""model-skipped: a model that optlint deliberately does not judge (other curvature rules apply)."""

ID = "model-skipped"
SEVERITY = "note"
SUMMARY = "Problem solved in geometric-programming or quasiconvex mode is not checked."
RATIONALE = """
A problem solved as a geometric program is judged by log-log curvature, and one solved as a
quasiconvex program by quasiconvexity rules; judged by the convex rules, correct models of either
kind look wrong. optlint does not check them and says so, so that silence is not mistaken for a
clean bill of health.
"""
REFERENCE = ("Agrawal, Diamond & Boyd (2019), disciplined geometric programming; Boyd & Vandenberghe, "
             "Convex Optimization (2004), §4.5 (geometric programming) and §3.4 (quasiconvex functions).")
BAD = """
import cvxpy as cp
h = cp.Variable(pos=True)
prob = cp.Problem(cp.Minimize(1 / h), [h <= 3])
prob.solve(gp=True)        # noted: not judged by the convex rules
"""
GOOD = """
import cvxpy as cp
h = cp.Variable(pos=True)
prob = cp.Problem(cp.Minimize(cp.inv_pos(h)), [h <= 3])
prob.solve()
"""


def check(model, analysis):
    from optlint.findings import Finding

    for notice in model.notices:
        if notice.rule == ID:
            yield Finding(rule=ID, site=notice.site, message=notice.message, evidence=dict(notice.evidence))
