"""undisciplined-convex: convex (or concave) as required, but not by the rules the DSL enforces."""

ID = "undisciplined-convex"
SEVERITY = "error"
SUMMARY = "Convex as required, but written so that the disciplined-convex package rejects it."
RATIONALE = """
A disciplined-convex package accepts an expression only when its composition rules prove the
curvature from the atoms as written. Some expressions are convex (or concave) but written with
elementary functions the rules cannot combine: sqrt of a sum of squares, log of a sum of exps, a
square divided by a variable, a product that expands to a convex quadratic, and x * x or 1 / x
themselves (the package rejects any product of two variable expressions and any division by
one, although x*x = x^2 and 1/x for x > 0 are convex). optlint proves the
curvature another way (a normal form or the second-order condition) and gives the spelling the
package accepts, so the model keeps its meaning and solves. Only reported for the DSL; other
dialects have no discipline to satisfy, and a proved expression there is simply fine.
"""
REFERENCE = ("Boyd & Vandenberghe, Convex Optimization (2004), §3.1.4 (second-order conditions), "
             "§3.1.5 (norms, log-sum-exp, quadratic-over-linear); Grant, Boyd & Ye (2006), "
             "disciplined convex programming.")
SUPERSEDES = ("nonconvex-objective", "nonconvex-inequality", "nonconvex-penalty")
BAD = """
import cvxpy as cp
x = cp.Variable(2)
objective = cp.Minimize(cp.sqrt(x[0]**2 + x[1]**2 + 1))   # convex, but sqrt(convex) is not DCP
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(2)
objective = cp.Minimize(cp.norm(cp.hstack([x[0], x[1], 1]), 2))
"""


def _hint(analysis, j):
    """(sentence, rewrite evidence or None) for the message."""
    from optlint.evidence import rewrite

    from optlint.printer import show

    hints = []  # rewrite evidence dicts: written, expression, dsl, atom, line
    if j.proof["method"] != "folded-form":
        found = rewrite.find(j.expr, analysis)
        if found is not None:
            # "expression" is the subexpression over the model's own names, as "dsl" is: a reader can
            # evaluate both at the same point and see that the rewrite keeps the value.
            hints.append({"written": analysis.text(found.node), "expression": show(found.node, 400),
                          "dsl": found.dsl, "atom": found.atom, "line": j.item.site.line})
    # products and quotients written with * and / (the package rejects each), unless inside the above
    hints += [r for r in j.proof.get("rewrites", ()) if not any(r["written"] in h["written"] for h in hints)]
    if hints:
        line = j.item.site.line
        parts = [f"`{h['written']}`" + (f" (line {h['line']})" if h["line"] != line else "") + f" as `{h['dsl']}`"
                 for h in hints[:3]]
        more = f" ({len(hints) - 3} more in the evidence)" if len(hints) > 3 else ""
        return "write " + ", ".join(parts[:-1]) + (" and " if len(parts) > 1 else "") + parts[-1] + more, hints[0]
    quadratic = rewrite.quadratic_hint(j.proof)
    if quadratic is not None:
        return f"write the quadratic as {quadratic}", None
    return "rewrite it with atoms whose curvature the package knows (e.g. cp.square, cp.norm)", None


def message(analysis, j, hint: str) -> str:
    from optlint.ir import Objective

    if isinstance(j.item, Objective):
        what = f"objective is {j.want.value}"
    else:
        what = "constraint's feasible set is convex"
    method = j.proof["method"]
    if method == "folded-form":
        return f"{what} (shown by the composition rules on the folded form) but {j.failure[1]}: {hint}"
    how = "a normal form" if method == "normal-form" else "the second-order condition"
    return f"{what} (shown by {how}) but the composition rules reject it as written: {hint}"


def check(model, analysis):
    from optlint.analysis import judgement_evidence
    from optlint.findings import Finding

    if model.dialect != "dsl":
        return
    items = list(model.objectives) + [c for c in model.constraints if c.relation in ("<=", ">=", "<", ">")]
    for item in items:
        judged = analysis.judge(item)
        proved = [j for j in judged if j.undisciplined]
        # Only when every variant holds: a variant that really fails keeps its own finding.
        if not proved or any(not j.ok for j in judged):
            continue
        first = proved[0]
        evidence = judgement_evidence(analysis, first)
        if len(judged) > 1 and any(j.branch for j in proved):
            evidence["failing_branches"] = [list(j.branch) for j in proved]
        hint, rewrite = _hint(analysis, first)
        if rewrite is not None:
            evidence["rewrite"] = rewrite
        yield Finding(rule=ID, site=item.site, message=message(analysis, first, hint), evidence=evidence)
