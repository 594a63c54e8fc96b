"""nonconvex-penalty: a recognised non-convex penalty family inside a minimised objective."""

ID = "nonconvex-penalty"
SEVERITY = "error"
SUMMARY = "A non-convex penalty family (capped loss, log(1+r²), |r|^p with p<1, L0, min of convex) is minimised."
SUPERSEDES = ("nonconvex-objective",)
RATIONALE = """
Robust and sparsity-seeking penalties are often chosen for good statistical reasons and are often
non-convex: a capped quadratic, log(1 + r²), 1 − exp(−r²/c), r²/(c + r²), |r|^p with p < 1, the
count of nonzeros, the minimum of several convex costs. Minimising one of them is not a convex
problem: a convex solver rejects it, and a local solver returns an answer that depends on its
starting point. Where a convex surrogate exists (Huber for the capped and redescending losses, L1
for p < 1 and L0) the message names it; if the non-convexity is intended, say so in the model's
documentation and use a solver and starting strategy meant for it.
"""
REFERENCE = ("Boyd & Vandenberghe, Convex Optimization (2004), §3.2.3 (the pointwise minimum of convex "
             "functions is not convex in general) and §6.1.2 (robust penalty functions, Huber).")
BAD = """
import cvxpy as cp
r = A @ x - b
objective = cp.Minimize(cp.sum(cp.minimum(cp.square(r), 4.0)))    # capped quadratic
"""
GOOD = """
import cvxpy as cp
r = A @ x - b
objective = cp.Minimize(cp.sum(cp.huber(r, 2.0)))
"""


def check(model, analysis):
    from optlint import penalties
    from optlint.analysis import judgement_evidence
    from optlint.findings import Finding

    for hit in penalties.find(model, analysis):
        j = hit.judgement
        where = "minimised" if j.item.sense == "minimise" else "maximised (with a negative weight)"
        message = (f"non-convex penalty in a {where} objective: {hit.family.name} "
                   f"`{analysis.text(hit.inner)}`; {hit.family.surrogate}. If the non-convexity is "
                   f"intended, a local solver's answer depends on its starting point")
        evidence = judgement_evidence(analysis, j)
        evidence["family"] = hit.family.name
        evidence["term"] = analysis.text(hit.inner)
        yield Finding(rule=ID, site=j.item.site, message=message, evidence=evidence)
