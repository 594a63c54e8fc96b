"""Penalties: recognise the non-convex penalty families by the structure of a term, not by names.

A term of a minimised objective (weight > 0), or of a maximised one (weight < 0), whose body is
one of these shapes — possibly inside sums, means, indexing or reshaping, which keep the family —
is a recognised non-convex penalty:

- capped / truncated loss: min(g, c) with g convex and c constant (min(r^2, c), min(|r|, c));
- minimum of convex functions: min(g1, g2, ...) or the smallest entry of a convex vector;
- log(c + g) with g convex and nonnegative, c > 0 (saturating losses such as log(1 + r^2));
- 1 - exp(-g/c): a negatively weighted exp of a concave nonpositive argument (-r^2/c);
- g / (c + g): a convex nonnegative g over c + g (the r^2/(c + r^2) family);
- |r|^p, p-"norms" and powers g^p with 0 < p < 1 of a nonnegative convex g;
- counts of nonzeros (L0).

Each family is non-convex on its domain; the module that tests this (tests/test_penalties.py)
confirms it numerically for each family, independently of optlint.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy

from optlint.calculus import functions as F
from optlint.calculus import Curvature
from optlint.terms import Term, definite, weighted_terms

_KEEPS_FAMILY = (F.vsum, F.mean, F.index, F.reshape, F.transpose, F.cumsum)


@dataclass(frozen=True)
class Family:
    name: str
    surrogate: str


CAPPED = Family("capped (truncated) loss", "a Huber loss keeps the robustness and is convex")
MIN_OF_CONVEX = Family("minimum of convex functions",
                       "there is no convex surrogate: solve one convex problem per piece, or use a "
                       "mixed-integer formulation")
LOG_ONE_PLUS = Family("saturating log(1 + g) loss (as log(1 + r²))",
                      "a Huber loss (or the plain convex g) is the convex alternative")
ONE_MINUS_EXP = Family("1 − exp(−r²/c)-type loss", "a Huber loss is the convex robust alternative")
RATIO = Family("r²/(c + r²)-type loss", "a Huber loss is the convex robust alternative")
P_LESS_THAN_ONE = Family("|r|^p with 0 < p < 1 (p-\"norm\" below 1)", "an L1 norm is the convex surrogate")
L0 = Family("count of nonzeros (L0)", "an L1 norm is the convex surrogate")


def _unwrap(expr):
    while isinstance(expr, _KEEPS_FAMILY) or (isinstance(expr, F.stack) and len(expr.args) == 1):
        expr = expr.args[0]
    return expr


def classify(analysis, body, weight_sign: int) -> tuple[Family, sympy.Expr] | None:
    """The family of a term's body (already oriented: ``weight_sign`` +1 means it is penalised)."""
    inner = _unwrap(body)
    curv = lambda e: analysis.analyse(e).curvature  # noqa: E731 - a local shorthand
    sign = lambda e: analysis.analyse(e).sign  # noqa: E731
    has_var = analysis.has_variables
    if weight_sign > 0:
        if isinstance(inner, (sympy.Min, F.vmin)):
            args = inner.args
            varying = [a for a in args if has_var(a)]
            if varying and all(curv(a).is_convex for a in varying) and any(not curv(a).is_affine for a in varying):
                if len(varying) < len(args):
                    return CAPPED, inner
                return MIN_OF_CONVEX, inner
        if isinstance(inner, F.log1p) and _convex_nonneg(analysis, inner.args[0]):
            return LOG_ONE_PLUS, inner
        if isinstance(inner, sympy.log):
            arg = inner.args[0]
            const, rest = arg.as_independent(*analysis.facts.variables, as_Add=True)
            if rest != 0 and definite(sign(const)) > 0 and _convex_nonneg(analysis, rest):
                return LOG_ONE_PLUS, inner
        if isinstance(inner, sympy.Mul):
            num = [f for f in inner.args if not (isinstance(f, sympy.Pow) and f.exp == -1)]
            den = [f.base for f in inner.args if isinstance(f, sympy.Pow) and f.exp == -1]
            if len(den) == 1 and num:
                g = sympy.Mul(*num)
                const, rest = den[0].as_independent(*analysis.facts.variables, as_Add=True)
                if _convex_nonneg(analysis, g) and definite(sign(const)) > 0 and _convex_nonneg(analysis, rest):
                    return RATIO, inner
        p_family = _small_power(analysis, inner)
        if p_family is not None:
            return P_LESS_THAN_ONE, inner
        if isinstance(inner, F.nnz):
            return L0, inner
    if weight_sign < 0 and isinstance(inner, sympy.exp):
        arg = inner.args[0]
        if analysis.has_variables(arg) and curv(-arg).is_convex and not curv(arg).is_affine \
                and sign(arg).is_nonpos:
            return ONE_MINUS_EXP, inner
    return None


def _convex_nonneg(analysis, expr) -> bool:
    a = analysis.analyse(expr)
    return analysis.has_variables(expr) and a.curvature is Curvature.CONVEX and a.sign.is_nonneg


def _small_power(analysis, expr):
    if isinstance(expr, sympy.Pow) and expr.exp.is_Number and 0 < expr.exp < 1:
        if _convex_nonneg(analysis, expr.base):
            return expr
    if isinstance(expr, F.power) and expr.args[1].is_Number and 0 < expr.args[1] < 1:
        if _convex_nonneg(analysis, expr.args[0]):
            return expr
    if isinstance(expr, F.pnorm) and expr.args[1].is_Number and 0 < expr.args[1] < 1:
        return expr
    return None


@dataclass
class PenaltyHit:
    judgement: object
    term: Term
    family: Family
    inner: sympy.Expr


def _oriented_terms(analysis, expr, orient: int, variables, depth: int = 0):
    """(term, +1 if it is penalised / -1 if rewarded) for the terms of ``expr`` and, inside sums and
    other family-keeping wrappers, of the sums within them (``sum(1 - exp(-r**2))``)."""
    for t in weighted_terms(expr, variables):
        s = definite(analysis.analyse(t.weight).sign)
        if s == 0:
            continue
        yield t, s * orient
        inner = _unwrap(t.body)
        if isinstance(inner, sympy.Add) and depth < 3:
            yield from _oriented_terms(analysis, inner, s * orient, variables, depth + 1)


def find(model, analysis) -> list[PenaltyHit]:
    return analysis.shared("penalties", lambda: _find(model, analysis))


def _find(model, analysis) -> list[PenaltyHit]:
    hits = []
    variables = analysis.facts.variables
    for obj in model.objectives:
        for j in analysis.judge(obj):
            if j.ok or j.unknown_only:
                continue
            orient = 1 if obj.sense == "minimise" else -1
            found = None
            for t, s in _oriented_terms(analysis, j.expr, orient, variables):
                family = classify(analysis, t.body, s)
                if family is not None:
                    found = PenaltyHit(j, t, family[0], family[1])
                    break
            if found is not None:
                hits.append(found)
                break
    return hits
