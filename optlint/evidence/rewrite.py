"""Normal forms: convex expressions written without the atom that makes them disciplined.

Role: ``find(expr, analysis)`` looks for a subexpression that equals a known atom applied to
arguments the composition rules accept, and returns a ``Rewrite``: the subexpression, the
equivalent expression in optlint's atoms (``replacement``) and the DSL spelling (``dsl``).
- sqrt(k·(a_1² + ... + s_1 + ... + c)) = sqrt(k)·norm(hstack(a_1, ..., s_1', ..., sqrt(c)), 2)
  with k, c >= 0 constants and s_j = sum_squares(r_j) (then r_j enters the stack);
- log(exp(a_1) + ... + exp(a_k)) = log_sum_exp(hstack(a_1, ..., a_k)); log(sum(exp(v))) = log_sum_exp(v);
- a²/y = quad_over_lin(a, y) (y > 0 is its domain), 1/y = inv_pos(y), a·a = square(a);
- a quadratic with constant Hessian over one vector: quad_form(v, P) plus its affine part.
``proves(expr, analysis)`` replaces the first two forms, and a²/y where y > 0 on the whole domain, by
their atoms and is a proof when the rules prove the result (norms, log-sum-exp and
quadratic-over-linear of affine maps, B&V 2004 §3.1.5 and §3.2.2, from memory);
the identities hold entry by entry, so the proof does not depend on shapes.
The hints for the other forms are advice only: the proof comes from optlint.evidence.second_order.
``written_rewrite`` spells a product or quotient the DSL code wrote (x * x, 1 / x, 3 * x * x) that
sympy folded into a power the rules accept: square, inv_pos or power.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import sympy

from optlint.calculus import Curvature, Sign
from optlint.calculus import functions as F
from optlint.printer import show
from optlint.lift import preorder

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
    found = []  # (c, a) for c·a², a affine; (c, None) for a constant c >= 0
    # Variable terms first, constants last: the order a modeller writes a stacked vector in.
    for term in sorted(sympy.Add.make_args(inner), key=lambda e: not analysis.has_variables(e)):
        c, sq = _split(analysis, term)
        if not _nonneg(analysis, c):
            return None
        if sq is sympy.S.One:
            found.append((c, None))
            continue
        if isinstance(sq, sympy.Pow) and sq.exp == 2 and _affine(analysis, sq.base):
            a = sq.base
        elif isinstance(sq, F.sum_squares) and _affine(analysis, sq.args[0]):
            a = sq.args[0]
        else:
            pair = _square_pair(analysis, sq)  # (2a)·a, as sympy leaves 2·(a)·(a) once 2 is distributed
            if pair is None:
                return None
            ratio, a = pair
            c = c * ratio
        found.append((c, a))
    if len(found) == 1 and found[0][1] is not None:  # one square: its weight joins k
        k, found = k * found[0][0], [(sympy.S.One, found[0][1])]
    pieces, texts = [], []
    for c, a in found:
        if a is None:
            pieces.append(sympy.sqrt(c))
            texts.append(show(sympy.sqrt(c)))
            continue
        scaled = a if c == 1 else sympy.sqrt(c) * a
        pieces.append(scaled)
        texts.append(analysis.text(a) if c == 1 else show(scaled))
    return k, pieces, texts


def _square_pair(analysis, product):
    """(r, a) when ``product`` is (r·a)·a with a affine and r > 0 a number, else None."""
    if not isinstance(product, sympy.Mul):
        return None
    factors = [f for f in product.args if analysis.has_variables(f)]
    if len(factors) != 2 or len(product.args) != 2 or not _affine(analysis, factors[1]):
        return None
    ratio = sympy.cancel(factors[0] / factors[1])
    if not (ratio.is_Number and ratio > 0):
        return None
    return (ratio, factors[1]) if ratio >= 1 else (1 / ratio, factors[0])  # the weight outside, >= 1


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
    if found is None:
        return None
    k, scale = k * found[0], "" if k * found[0] == 1 else f"{show(k * found[0])} * "
    pieces, texts = found[1], found[2]
    if len(pieces) == 1:
        a, text = pieces[0], texts[0]
    else:
        a, text = F.stack(*pieces), f"cp.hstack([{', '.join(texts)}])"
    return Rewrite(node, k * F.quad_over_lin(a, y), f"{scale}cp.quad_over_lin({text}, {analysis.text(y)})",
                   "quad_over_lin")


def _positive_quad_over_lin(analysis, node) -> Rewrite | None:
    """k·(a_1² + ...)/y with y > 0 on the whole domain: there it equals k·quad_over_lin, entry by entry
    (B&V 2004 §3.1.5, quadratic-over-linear, from memory); without y > 0 it is no identity."""
    form = _division(analysis, node)
    if form is None or form.atom != "quad_over_lin":
        return None
    (atom,) = form.replacement.atoms(F.quad_over_lin)
    return form if analysis.analyse(atom.args[1]).sign is Sign.POSITIVE else None


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
    for node in preorder(expr):
        if not isinstance(node, sympy.Basic) or not analysis.has_variables(node):
            continue
        for form in _FORMS:
            found = form(analysis, node)
            if found is not None:
                return found
    return None


def written_rewrite(analysis, op) -> Rewrite | None:
    """The DSL spelling of a written product or quotient (``ir.WrittenOp``) whose folded value is
    k·b^p with b affine: k·square(b) for p = 2, k·inv_pos(b) for p = -1 (b > 0, its domain),
    k·power(b, p) otherwise (the rules proved the folded value, so b's sign is what p needs and
    the identity holds on the domain); or a quotient k·a²/y with y > 0: k·quad_over_lin(a, y)."""
    k, core = _split(analysis, op.value)
    if op.kind == "division" and not isinstance(core, sympy.Pow):
        return _positive_quad_over_lin(analysis, op.value)  # (a - b)**2 / y
    if not (isinstance(core, sympy.Pow) and core.exp.is_Number and _affine(analysis, core.base)):
        return None
    base, p = core.base, core.exp
    text = _bare(op.left_code if base == op.left else op.right_code if base == op.right else show(base))
    if p == 2:
        dsl, atom, replacement = f"cp.square({text})", "square", F.power(base, 2)
    elif p == -1 and analysis.analyse(base).sign is Sign.POSITIVE:
        dsl, atom, replacement = f"cp.inv_pos({text})", "inv_pos", F.inv_pos(base)
    elif p == -1:
        return None  # 1/b with b < 0 is -inv_pos(-b); rare enough to leave to the general hint
    else:
        dsl, atom, replacement = f"cp.power({text}, {show(p)})", "power", F.power(base, p)
    scale = "" if k == 1 else "-" if k == -1 else f"{show(k)} * "
    return Rewrite(op.value, k * replacement, scale + dsl, atom)


def _bare(text: str) -> str:
    """``(x - 1)`` -> ``x - 1`` when the outer parentheses enclose the whole text (an argument needs none)."""
    if not (text.startswith("(") and text.endswith(")")):
        return text
    depth = 0
    for k, ch in enumerate(text):
        depth += ch == "("
        depth -= ch == ")"
        if depth == 0 and k < len(text) - 1:
            return text
    return text[1:-1].strip()


def rejected_as_written(analysis, tree, ops) -> tuple[tuple[Any, str], dict[str, Any]]:
    """(failure, proof) for a part the rules prove only as sympy folded it: the failing step is the
    first written operation's node in the derivation, the proof is the rules' own derivation."""
    op = ops[0]
    node = next((n for n in _preorder(tree) if n.expr == op.value), tree)
    what = ("a product of two non-constant expressions" if op.kind == "product"
            else "a division by a non-constant expression")
    reason = f"the package rejects {what} as written (`{op.code}`)"
    proof: dict[str, Any] = {
        "method": "folded-form",
        "reference": "composition rules (Grant, Boyd & Ye 2006) on the folded form; x·x = x² and 1/x = x^-1 are identities",
        "written": [o.code for o in ops],
    }
    rewrites = written_rewrites(analysis, ops)
    if rewrites:
        proof["rewrites"] = rewrites
    return (node, reason), proof


def written_rewrites(analysis, ops) -> list[dict[str, Any]]:
    """The rewrite evidence of each written operation that has a spelling (``written_rewrite``)."""
    out = []
    for op in ops:
        found = written_rewrite(analysis, op)
        if found is not None:
            out.append({"written": op.code, "expression": op.code, "dsl": found.dsl, "atom": found.atom,
                        "line": op.site.line})
    return out


def _preorder(tree):
    stack = [tree]
    while stack:
        node = stack.pop()
        yield node
        stack.extend(reversed(node.children))


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

    Every norm, log-sum-exp or positive quadratic-over-linear form (outermost first) is replaced by its atom, and the rules must
    prove the result. The replacement has, entry by entry, the curvature and sign the rules derive
    for it, and the rules use only those facts of a child (they are sound for any shapes), so
    their derivation holds for the expression as written.
    """
    if want is not Curvature.CONVEX:
        return None
    found: list[Rewrite] = []
    skip: set = set()
    for node in preorder(expr):
        if node in skip or not isinstance(node, sympy.Basic) or not analysis.has_variables(node):
            continue
        form = _norm(analysis, node) or _lse(analysis, node) or _positive_quad_over_lin(analysis, node)
        if form is not None:
            found.append(form)
            skip.update(preorder(node))
        if len(found) > 16:
            return None
    if not found:
        return None
    rewritten = expr.xreplace({f.node: f.replacement for f in found})
    if not analysis.analyse(rewritten).curvature.is_convex:
        return None
    return {
        "method": "normal-form",
        "reference": ("B&V 2004 §3.1.5 (norms, log-sum-exp, quadratic-over-linear) and §3.2.2 (affine "
                      "composition), from memory"),
        "identities": [f"{show(f.node)} = {show(f.replacement)}" for f in found],
        "dsl": [f.dsl for f in found],
        "rewritten": show(rewritten, 400),
    }
