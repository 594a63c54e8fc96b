"""multiplier-sign: a Lagrange multiplier updated downhill, not kept on its sign, or minimised jointly."""

ID = "multiplier-sign"
SEVERITY = "error"
SUPERSEDES = ("nonconvex-objective",)
SUMMARY = "A Lagrange multiplier is updated downhill, not kept >= 0 for an inequality, or minimised with the primal."
RATIONALE = """
With L(x, lam) = f(x) + lam * g(x) minimised over x, the multiplier is found by maximising over lam:
dual ascent steps lam <- lam + step * g(x). A step that subtracts the residual descends, and the
iteration drifts away from the optimum instead of towards it. For an inequality g(x) <= 0 the
multiplier must stay nonnegative (dual feasibility, part of the KKT conditions): after each ascent
step project it, lam <- max(0, lam + step * g(x)); without the projection it goes negative wherever
the constraint is slack and the 'Lagrangian' rewards violating the constraint. Minimising L over x
and lam together (one scipy minimize over the stacked vector, one torch optimizer holding both) is
wrong for the same reason: L is linear in lam, so it has a saddle at the solution, not a minimum,
and descent in lam runs off to minus infinity. The signs flip consistently for the convention
L = f - lam * c with c(x) >= 0. Where the optimality conditions are written out as constraints
(a follower's KKT system in a bilevel model: lam * g(x) == 0 beside g(x) <= 0), a multiplier
declared without a sign lets the system accept maxima and saddles of the inner problem too.
"""
REFERENCE = ("Nocedal & Wright, Numerical Optimization, 2nd ed. (2006), §12.3 (KKT conditions: lambda_i >= 0 for "
             "inequalities); Boyd & Vandenberghe, Convex Optimization (2004), §5.1 and §5.5.3 (from memory).")
BAD = """
import numpy as np
lam = np.zeros(m)
for k in range(200):
    x = solve_primal(lam)                          # argmin_x f(x) + lam @ (A @ x - b)
    lam = lam + step * (A @ x - b)                 # for A @ x <= b: can go negative
assert np.all(A @ x - b <= 1e-6)
"""
GOOD = """
import numpy as np
lam = np.zeros(m)
for k in range(200):
    x = solve_primal(lam)                          # argmin_x f(x) + lam @ (A @ x - b)
    lam = np.maximum(0, lam + step * (A @ x - b))  # projected dual ascent
assert np.all(A @ x - b <= 1e-6)
"""

_SIDE = {1: "nonnegative", -1: "nonpositive"}


def _evidence(use, **extra) -> dict:
    out = {"multiplier": use.name, "lagrangian": use.code, "entry": "+" if use.entry > 0 else "-",
           "residual": use.residual}
    if use.orientation is not None:
        out["constraint"] = {1: f"{use.residual} <= 0", -1: f"{use.residual} >= 0",
                             0: f"{use.residual} == 0"}[use.orientation]
        out["constraint_source"] = use.orientation_source
    out.update(extra)
    return out


def _wrapped(text: str) -> str:
    return text if text.startswith("(") and text.endswith(")") else f"({text})"


def _findings(use):
    from optlint.findings import Finding

    sign = "+" if use.entry > 0 else "-"
    lagr = f"L = f {sign} {use.name} * {_wrapped(use.residual)}"
    required = use.entry * use.orientation if use.orientation in (1, -1) else None
    for step in use.steps:
        extra = {"update": step.code, "in_loop": step.in_loop}
        if step.in_loop:
            extra["instances"] = "one per iteration of the loop"
        if step.direction < 0:
            good = "+" if use.entry > 0 else "-"
            yield Finding(ID, step.site,
                          f"`{use.name}` is updated downhill: with {lagr} minimised over the primal variables, the "
                          f"multiplier must ascend ({use.name} {good}= step * {_wrapped(use.residual)}), but this step "
                          f"descends, so the iteration moves away from the dual optimum",
                          SEVERITY, _evidence(use, **extra, required_direction="ascent"))
            continue
        if required is None:
            continue
        want = _SIDE[required]
        proj = "max(0, ...)" if required > 0 else "min(0, ...)"
        if step.projection is None:
            yield Finding(ID, step.site,
                          f"`{use.name}` multiplies the inequality {use.residual} {'<=' if use.orientation > 0 else '>='} 0 "
                          f"(see {use.orientation_source}) but this ascent step does not keep it {want}: project "
                          f"it, {use.name} = {proj} of the step (np.maximum / clamp(min=0)); otherwise it goes "
                          f"{'negative' if required > 0 else 'positive'} where the constraint is slack",
                          SEVERITY, _evidence(use, **extra, required_sign=want))
        elif step.projection != required:
            yield Finding(ID, step.site,
                          f"`{use.name}` is projected onto the {_SIDE[step.projection]} side, but with {lagr} and "
                          f"the inequality {use.residual} {'<=' if use.orientation > 0 else '>='} 0 (see "
                          f"{use.orientation_source}) it must stay {want}",
                          SEVERITY, _evidence(use, **extra, required_sign=want))
    if required is not None and use.declared in ("nonnegative", "nonpositive") and use.declared != _SIDE[required]:
        yield Finding(ID, use.declared_site,
                      f"`{use.name}` is declared {use.declared}, but as the multiplier of the inequality "
                      f"{use.residual} {'<=' if use.orientation > 0 else '>='} 0 in {lagr} it must be "
                      f"{_SIDE[required]}", SEVERITY, _evidence(use, required_sign=_SIDE[required]))
    for site, code in use.joint:
        yield Finding(ID, site,
                      f"`{use.name}` multiplies the residual {use.residual} in {lagr} and is minimised together with "
                      f"the primal variables here; L is linear in {use.name}, so it has a saddle, not a minimum, and "
                      f"descent drives {use.name} * {_wrapped(use.residual)} to minus infinity. Minimise over the primal only "
                      f"and update {use.name} by (projected) ascent, or give it its own optimizer with maximize=True",
                      SEVERITY, _evidence(use, minimiser=code))


def _canonical(expr):
    """Index symbols are fresh per loop run (i#1, i#2): one placeholder per index name."""
    import sympy

    from optlint.lift import DataSymbol

    subs = {s: sympy.Symbol(s.name.split("#")[0]) for s in expr.free_symbols
            if isinstance(s, DataSymbol) and "#" in s.name}
    return expr.xreplace(subs) if subs else expr


def _root(factor, variables):
    """The declared variable a factor is (``lam`` or ``index(lam, i)``), else None."""
    from optlint.calculus import functions as F

    if factor in variables:
        return factor
    if isinstance(factor, F.index) and factor.args[0] in variables:
        return factor.args[0]
    return None


def _kkt_findings(model, analysis):
    """Complementarity written as constraints: lam * g(x) == 0 beside g(x) <= 0 (a KKT system, e.g.
    a follower's optimality conditions in a bilevel model) with lam declared without a sign and not
    constrained to one: the system then also admits points where lam has the wrong sign (maxima and
    saddles of the follower, not its optima)."""
    import sympy

    from optlint.findings import Finding
    from optlint.printer import show

    variables = model.variables
    if not variables:
        return
    inequalities, signed = [], set()
    for con in model.constraints:
        if con.relation not in ("<=", "<", ">=", ">"):
            continue
        for left, right, _ in con.variants:
            g = _canonical(left - right if con.relation in ("<=", "<") else right - left)  # g <= 0
            inequalities.append((g, con))
            coeff, rest = g.as_coeff_Mul()
            root = _root(rest, variables)
            if root is not None and coeff.is_Number and coeff != 0:
                signed.add(root)  # lam >= 0 (or <= 0) written as a constraint
    for con in model.constraints:
        if con.relation != "==":
            continue
        for left, right, _ in con.variants:
            e = _canonical(left - right)
            if not isinstance(e, sympy.Mul):
                continue
            for factor in e.args:
                root = _root(factor, variables)
                if root is None:
                    continue
                residual = sympy.Mul(*[a for a in e.args if a is not factor])
                if not (residual.free_symbols & variables) or root in residual.free_symbols:
                    continue
                match = next((c for g, c in inequalities
                              if sympy.expand(g - residual) == 0 or sympy.expand(g + residual) == 0), None)
                decl = model.declarations.get(root)
                if match is None or root in signed or (decl is not None and decl.sign != "unknown"):
                    continue
                name = decl.name if decl is not None else str(root)
                yield Finding(ID, con.site,
                              f"`{name}` is the multiplier of the inequality at line {match.site.line} in this "
                              f"complementarity condition, but it is declared without a sign and nothing constrains "
                              f"one: add {name} >= 0 (nonnegative; with the stationarity written as grad f + "
                              f"sum {name}_i grad g_i = 0 for g_i <= 0), otherwise the KKT system also admits "
                              f"points where it has the wrong sign (maxima and saddles, not minima)",
                              SEVERITY, {"multiplier": name, "complementarity": show(e),
                                         "inequality_line": match.site.line, "required_sign": "nonnegative",
                                         "in_loop": bool(getattr(con, "in_loop", False))})
                break


def check(model, analysis):
    seen = set()
    for f in _kkt_findings(model, analysis):
        key = (f.site.line, f.site.column)
        if key not in seen:
            seen.add(key)
            yield f
    for use in model.multipliers:
        for f in _findings(use):
            key = (f.site.line, f.site.column)
            if key not in seen:
                seen.add(key)
                yield f
