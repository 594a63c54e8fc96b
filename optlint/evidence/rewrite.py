"""Normal forms: convex expressions written without the atom that makes them disciplined.

Role: ``find(expr, analysis)`` looks for a subexpression that equals a known atom applied to
arguments the composition rules accept, and returns a ``Rewrite``: the subexpression, the
equivalent expression in optlint's atoms (``replacement``) and the DSL spelling (``dsl``).
- sqrt(k·(a_1² + ... + s_1 + ... + c)) = sqrt(k)·norm(hstack(a_1, ..., s_1', ..., sqrt(c)), 2)
  with k, c >= 0 constants and s_j = sum_squares(r_j) (then r_j enters the stack);
- log(exp(a_1) + ... + exp(a_k)) = log_sum_exp(hstack(a_1, ..., a_k)); log(sum(exp(v))) = log_sum_exp(v);
- a²/y = quad_over_lin(a, y) (y > 0 is its domain), 1/y = inv_pos(y), a·a = square(a);
- a quadratic with constant Hessian over one vector: quad_form(v, P) plus its affine part.
``proves(expr, analysis)`` replaces the first two forms by their atoms and is a proof when the rules
prove the result (norms and log-sum-exp of affine maps, B&V 2004 §3.1.5 and §3.2.2, from memory);
the identities hold entry by entry, so the proof does not depend on shapes.
The hints for the other forms are advice only: the proof comes from optlint.evidence.second_order.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import sympy

from optlint.calculus import Curvature, Sign
from optlint.calculus import functions as F
from optlint.printer import show

_HALF = sympy.Rational(1, 2)


@dataclass
class Rewrite:
    node: Any            # the subexpression as written
    replacement: Any     # the same function in optlint's atoms
    dsl: str             # how to write it in the DSL
    atom: str            # the atom the DSL needs (for messages and tests)


def _nonneg(analysis, c) -> bool:
    return analysis.analyse(c).sign in (Sign.POSITIVE, Sign.NONNEGATIVE, Sign.ZERO)


def _affine(analysis, e) -> bool:
    return analysis.analyse(e).curvature.is_affine


def _split(analysis, term):
    """term = k * rest with k a constant (no variables)."""
    if isinstance(term, sympy.Mul):
        const = [a for a in term.args if not analysis.has_variables(a)]
        rest = [a for a in term.args if analysis.has_variables(a)]
        return sympy.Mul(*const), sympy.Mul(*rest)
    return (term, sympy.S.One) if not analysis.has_variables(term) else (sympy.S.One, term)


def _squares(analysis, base):
    """(k, pieces, dsl pieces) with base = k·(sum of squares of pieces), k >= 0, pieces affine; or None."""
    k, inner = _split(analysis, base)
    if not _nonneg(analysis, k) or inner is sympy.S.One:
        return None
    pieces, texts = [], []
    # Variable terms first, constants last: the order a modeller writes a stacked vector in.
    for term in sorted(sympy.Add.make_args(inner), key=lambda e: not analysis.has_variables(e)):
        c, sq = _split(analysis, term)
        if sq is sympy.S.One:
            if not _nonneg(analysis, c):
                return None
            pieces.append(sympy.sqrt(c))
            texts.append(show(sympy.sqrt(c)))
            continue
        if not _nonneg(analysis, c):
            return None
        if isinstance(sq, sympy.Pow) and sq.exp == 2 and _affine(analysis, sq.base):
            a = sq.base
        elif isinstance(sq, F.sum_squares) and _affine(analysis, sq.args[0]):
            a = sq.args[0]
        else:
            return None
        scaled = a if c == 1 else sympy.sqrt(c) * a
        pieces.append(scaled)
        texts.append(analysis.text(sq.base if isinstance(sq, sympy.Pow) else sq.args[0])
                     if c == 1 else show(scaled))
    return k, pieces, texts


def _norm(analysis, node) -> Rewrite | None:
    if not (isinstance(node, sympy.Pow) and node.exp == _HALF and analysis.has_variables(node)):
        return None
    found = _squares(analysis, node.base)
    if found is None:
        return None
    k, pieces, texts = found
    scale = sympy.sqrt(k)
    if len(pieces) == 1:
        replacement, dsl = F.pnorm(pieces[0], 2), f"cp.norm({texts[0]}, 2)"
    else:
        replacement = F.pnorm(F.stack(*pieces), 2)
        dsl = f"cp.norm(cp.hstack([{', '.join(texts)}]), 2)"
    if scale != 1:
        dsl = f"{show(scale)} * {dsl}"
    return Rewrite(node, scale * replacement, dsl, "norm")


def _lse(analysis, node) -> Rewrite | None:
    if node.func is not sympy.log or not analysis.has_variables(node):
        return None
    arg = node.args[0]
    if isinstance(arg, F.vsum) and arg.args[0].func is sympy.exp and _affine(analysis, arg.args[0].args[0]):
        v = arg.args[0].args[0]
        return Rewrite(node, F.log_sum_exp(v), f"cp.log_sum_exp({analysis.text(v)})", "log_sum_exp")
    pieces = []
    for term in sympy.Add.make_args(arg):
        if term.func is sympy.exp and _affine(analysis, term.args[0]):
            pieces.append(term.args[0])
        elif not analysis.has_variables(term) and analysis.analyse(term).sign is Sign.POSITIVE:
            pieces.append(sympy.log(term))  # c = exp(log c)
        else:
            return None
    if len(pieces) < 2:
        return None
    dsl = f"cp.log_sum_exp(cp.hstack([{', '.join(show(p) for p in pieces)}]))"
    return Rewrite(node, F.log_sum_exp(F.stack(*pieces)), dsl, "log_sum_exp")


def _division(analysis, node) -> Rewrite | None:
    if not isinstance(node, sympy.Mul):
        return None
    inverse = [a for a in node.args if isinstance(a, sympy.Pow) and a.exp == -1 and analysis.has_variables(a)]
    if len(inverse) != 1:
        return None
    y = inverse[0].base
    rest = sympy.Mul(*[a for a in node.args if a is not inverse[0]])
    k, num = _split(analysis, rest)
    if not (_nonneg(analysis, k) and _affine(analysis, y)):
        return None
    scale = "" if k == 1 else f"{show(k)} * "
    if num is sympy.S.One:
        return Rewrite(node, k * F.inv_pos(y), f"{scale}cp.inv_pos({analysis.text(y)})", "inv_pos")
    found = _squares(analysis, num)
    if found is None or found[0] != 1:
        return None
    pieces, texts = found[1], found[2]
    if len(pieces) == 1:
        a, text = pieces[0], texts[0]
    else:
        a, text = F.stack(*pieces), f"cp.hstack([{', '.join(texts)}])"
    return Rewrite(node, k * F.quad_over_lin(a, y), f"{scale}cp.quad_over_lin({text}, {analysis.text(y)})",
                   "quad_over_lin")


def _inverse(analysis, node) -> Rewrite | None:
    if (isinstance(node, sympy.Pow) and node.exp == -1 and analysis.has_variables(node.base)
            and _affine(analysis, node.base)):
        return Rewrite(node, F.inv_pos(node.base), f"cp.inv_pos({analysis.text(node.base)})", "inv_pos")
    return None


def _square(analysis, node) -> Rewrite | None:
    if not isinstance(node, sympy.Mul):
        return None
    factors = [a for a in node.args if analysis.has_variables(a)]
    if len(factors) != 2 or not _affine(analysis, factors[1]):
        return None
    ratio = sympy.cancel(factors[0] / factors[1])  # a·(r·a) = r·a² when one factor is r times the other
    if not (ratio.is_Number and ratio > 0):
        return None
    k = sympy.Mul(*[a for a in node.args if not analysis.has_variables(a)]) * ratio
    scale = "" if k == 1 else f"{show(k)} * "
    return Rewrite(node, k * F.power(factors[1], 2), f"{scale}cp.square({analysis.text(factors[1])})", "square")


_FORMS = (_norm, _lse, _division, _inverse, _square)


def find(expr, analysis) -> Rewrite | None:
    """The first subexpression (outermost first) with a known disciplined spelling, or None."""
    for node in sympy.preorder_traversal(expr):
        if not isinstance(node, sympy.Basic) or not analysis.has_variables(node):
            continue
        for form in _FORMS:
            found = form(analysis, node)
            if found is not None:
                return found
    return None


def quadratic_hint(proof: dict[str, Any]) -> str | None:
    """For a second-order proof with a constant Hessian: the quadratic form's matrix, in the DSL."""
    form = proof.get("quadratic_form")
    if not form:
        return None
    names = [proof["variable_map"][v] for v in proof["variables"]]
    if len(names) == 1:
        scale = "" if form[0][0] == 1 else f"{form[0][0]:g} * "
        return f"{scale}cp.square({names[0]}) plus the affine terms"
    rows = ", ".join("[" + ", ".join(f"{x:g}" for x in row) + "]" for row in form)
    return f"cp.quad_form(cp.hstack([{', '.join(names)}]), np.array([{rows}])) plus the affine terms"


def proves(expr, analysis, want: Curvature) -> dict[str, Any] | None:
    """A normal-form proof that ``expr`` has the wanted curvature, or None.

    Every norm or log-sum-exp form (outermost first) is replaced by its atom, and the rules must
    prove the result. The replacement has, entry by entry, the curvature and sign the rules derive
    for it, and the rules use only those facts of a child (they are sound for any shapes), so
    their derivation holds for the expression as written.
    """
    if want is not Curvature.CONVEX:
        return None
    found: list[Rewrite] = []
    skip: set = set()
    for node in sympy.preorder_traversal(expr):
        if node in skip or not isinstance(node, sympy.Basic) or not analysis.has_variables(node):
            continue
        form = _norm(analysis, node) or _lse(analysis, node)
        if form is not None:
            found.append(form)
            skip.update(sympy.preorder_traversal(node))
        if len(found) > 16:
            return None
    if not found:
        return None
    rewritten = expr.xreplace({f.node: f.replacement for f in found})
    if not analysis.analyse(rewritten).curvature.is_convex:
        return None
    return {
        "method": "normal-form",
        "reference": "B&V 2004 §3.1.5 (norms, log-sum-exp) and §3.2.2 (affine composition), from memory",
        "identities": [f"{show(f.node)} = {show(f.replacement)}" for f in found],
        "dsl": [f.dsl for f in found],
        "rewritten": show(rewritten, 400),
    }
