"""unknown-curvature: a function with no known curvature decides whether the model is convex."""

ID = "unknown-curvature"
SEVERITY = "note"
SUMMARY = "A function optlint cannot classify is applied to decision variables."
RATIONALE = """
optlint proves curvature from a catalogue of functions whose curvature is known. A call to a
function outside it (a helper from another module, a library function it has no facts for)
applied to decision variables leaves the verdict open: the model may be fine, but nothing was
proved. Naming the function tells the reviewer what to check by hand, or what to inline.
"""
REFERENCE = ("Grant, Boyd & Ye (2006), disciplined convex programming: curvature is known only for "
             "expressions built from atoms of known curvature and monotonicity.")
BAD = """
import cvxpy as cp
from .smoothing import soft_cost      # defined elsewhere: curvature unknown here
x = cp.Variable(5)
objective = cp.Minimize(soft_cost(x))
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(5)
objective = cp.Minimize(cp.sum(cp.huber(x, 1.0)))
"""


def message(analysis, j) -> str:
    from optlint.calculus.analysis import operator_text, unknown_label

    names = j.result.unknown_functions
    if not any(operator_text(n) for n in names):
        listed = ", ".join(f"`{n}`" for n in names)
        plural = "functions" if len(names) > 1 else "function"
        return (f"curvature unknown: {plural} {listed} applied to decision variables "
                f"has no known curvature, so convexity of `{j.item.code}` is not established")
    listed = "; ".join(unknown_label(n) for n in names)
    return (f"curvature unknown: {listed} (applied to decision variables), "
            f"so convexity of `{j.item.code}` is not established")


def check(model, analysis):
    from optlint.rulekit import site_findings

    items = list(model.objectives) + list(model.constraints)
    yield from site_findings(ID, analysis, items, lambda j: j.unknown_only, message)
