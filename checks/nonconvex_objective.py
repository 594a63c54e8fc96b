"""nonconvex-objective: a minimised objective that is not convex, or a maximised one not concave."""

ID = "nonconvex-objective"
SEVERITY = "error"
SUMMARY = "Minimised objective not convex, or maximised objective not concave."
RATIONALE = """
A convex solver accepts a minimisation only of a convex function (a maximisation only of a concave
one); every local minimum of a convex function is global, which is what makes the answer
trustworthy. An objective the composition rules cannot prove convex is rejected by a
disciplined-convex package at solve time, and handed to a general nonlinear solver it may return a
local optimum that depends on the starting point. The message names the first step of the
derivation where the rules break.
"""
REFERENCE = ("Boyd & Vandenberghe, Convex Optimization (2004), §4.2.1 (convex optimisation problems) "
             "and §3.2.4 (composition rules); Grant, Boyd & Ye (2006), disciplined convex programming.")
BAD = """
import cvxpy as cp
w = cp.Variable(4)
objective = cp.Minimize(cp.sum_squares(w) - cp.norm(w, 1))   # convex minus convex
"""
GOOD = """
import cvxpy as cp
w = cp.Variable(4)
objective = cp.Minimize(cp.sum_squares(w) + 0.1 * cp.norm(w, 1))
"""


def message(analysis, j) -> str:
    from optlint.calculus import Curvature
    from optlint.rulekit import failing_step

    verb = "minimise" if j.want is Curvature.CONVEX else "maximise"
    wrong = j.result.curvature
    if wrong in (Curvature.CONVEX, Curvature.CONCAVE):
        head = f"objective to {verb} is {wrong.value}, not {j.want.value}"
    else:
        head = f"objective to {verb} is not provably {j.want.value}"
    return f"{head}: {failing_step(analysis, j)}"


def check(model, analysis):
    from optlint.rulekit import site_findings

    yield from site_findings(ID, analysis, model.objectives, lambda j: not j.unknown_only, message)
