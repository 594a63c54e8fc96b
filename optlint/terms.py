"""Terms: an objective read as a weighted sum  c1*h1 + c2*h2 + ...  of data weights and model terms.

The weight of a term is its factor that involves no decision variable (numbers, parameters, data);
the body is the rest. Sign and curvature questions about weights and bodies go through the
analysis, so the same facts (declared signs, literal matrices) apply as everywhere else.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy

from optlint.calculus import Curvature, Sign


@dataclass
class Term:
    weight: sympy.Expr   # constant factor (1 when none)
    body: sympy.Expr     # the part that involves decision variables
    term: sympy.Expr     # weight * body, as it stands in the sum


def weighted_terms(expr, variables: frozenset) -> list[Term]:
    """The terms of ``expr`` that involve decision variables, each split into weight and body."""
    out = []
    for term in sympy.Add.make_args(expr):
        if not (term.free_symbols & variables):
            continue
        factors = sympy.Mul.make_args(term)
        weight = [f for f in factors if not (f.free_symbols & variables)]
        body = [f for f in factors if f.free_symbols & variables]
        out.append(Term(sympy.Mul(*weight), sympy.Mul(*body), term))
    return out


def definite(sign: Sign) -> int:
    """+1 for a weight known > 0 (or >= 0 and not zero), -1 for known < 0, 0 when not known."""
    if sign in (Sign.POSITIVE, Sign.NONNEGATIVE):
        return 1
    if sign in (Sign.NEGATIVE, Sign.NONPOSITIVE):
        return -1
    return 0


def curved(curvature: Curvature) -> bool:
    """Convex or concave but not affine: the terms whose weight sign decides the curvature."""
    return curvature in (Curvature.CONVEX, Curvature.CONCAVE)
