"""degenerate-constraint: a constraint with no strictly feasible point (Slater's condition fails)."""

ID = "degenerate-constraint"
SEVERITY = "error"
SUMMARY = "Constraint with no strictly feasible point (e.g. norm(x - a) <= 0), or infeasible on its face."
RATIONALE = """
A nonnegative expression constrained to be <= 0 (a norm, a sum of squares, a square, an absolute
value) can only be met with equality: the constraint has no strictly feasible point, Slater's
condition fails, and the multipliers of the problem may not exist or grow without bound, which
shows as solver failures or wild dual values. Written as an equality with its affine equivalent
(x == a) it is well posed; if a small violation is acceptable, write the tolerance (<= eps)
explicitly. A fixed penalty weight used instead of a constraint corresponds to an implicit
tolerance. A nonnegative expression <= a negative constant is infeasible outright.
"""
REFERENCE = "Boyd & Vandenberghe, Convex Optimization (2004), §5.2.3 (Slater's constraint qualification)."
BAD = """
import cvxpy as cp
x = cp.Variable(3)
constraints = [cp.norm(x - target, 2) <= 0]
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(3)
constraints = [x == target]                    # or cp.norm(x - target, 2) <= 1e-3
"""

def _affine_equivalent(analysis, g) -> str | None:
    import sympy

    from optlint.calculus import functions as F
    from optlint.printer import show

    """For g = h(u) with h a norm, square, sum of squares or |.| of an affine u: the text of u == 0."""
    inner = g
    if isinstance(inner, sympy.Mul) and len(inner.args) == 2 and inner.args[0].is_Number and inner.args[0] > 0:
        inner = inner.args[1]
    u = None
    if isinstance(inner, (F.pnorm, F.sum_squares)):
        u = inner.args[0]
    elif isinstance(inner, sympy.Abs):
        u = inner.args[0]
    elif isinstance(inner, sympy.Pow) and inner.exp.is_Number and inner.exp > 0 and inner.exp % 2 == 0:
        u = inner.base
    if u is None or not analysis.analyse(u).curvature.is_affine:
        return None
    const, rest = u.as_independent(*analysis.facts.variables, as_Add=True)
    return f"{show(rest)} == {show(-const)}"


def check(model, analysis):
    from optlint.calculus import Sign
    from optlint.findings import Finding
    from optlint.printer import show

    for con in model.constraints:
        if con.relation not in ("<=", "<", ">=", ">", "=="):
            continue
        for left, right, _ in con.variants:
            g = left - right if con.relation in ("<=", "<", "==") else right - left
            if not analysis.has_variables(g):
                continue
            result = analysis.analyse(g)
            if result.curvature.is_affine or not result.sign.is_nonneg:
                continue
            const, body = g.as_independent(*analysis.facts.variables, as_Add=True)
            fix = _affine_equivalent(analysis, body) if const == 0 else None
            if result.sign is Sign.POSITIVE or (const != 0 and analysis.analyse(const).sign is Sign.POSITIVE):
                message = (f"constraint is infeasible on its face: `{con.code}` asks a nonnegative expression "
                           f"to be below a negative bound")
                kind = "infeasible"
            else:
                what = "equality" if con.relation == "==" else "constraint"
                message = (f"{what} `{con.code}` has no strictly feasible point (a nonnegative expression held "
                           f"at or below zero), so Slater's condition fails and multipliers may not exist; ")
                message += (f"write the affine equivalent `{fix}`" if fix else "write its affine equivalent")
                message += (" or an explicit tolerance (<= eps); a fixed penalty weight instead of the "
                            "constraint amounts to an implicit tolerance")
                kind = "no-strict-point"
            yield Finding(rule=ID, site=con.site, message=message,
                          evidence={"kind": kind, "expression": show(g, 400), "sign": result.sign.value,
                                    **({"affine_equivalent": fix} if fix else {})})
            break
