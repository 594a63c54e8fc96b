"""Extended-value subtleties and facts: where a naive rule would be unsound, the calculus says UNKNOWN.

Each UNKNOWN case is paired with the independent numeric oracle refuting the verdict a naive rule
would give (usually "convex"): the domain {g >= 0} of g = x^2 - 1 is two half-lines, so a function
that lives on x >= 0 composed with it has a domain that is not convex (B&V 2004 §3.1.2 and §3.2.4,
extended-value monotonicity, from memory). Sign knowledge restores the verdict.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp

from calculus_oracle import Shapes, check
from optlint.calculus import Curvature, Facts, analyse
from optlint.calculus import functions as F

x, v = sp.symbols("x v")
xp = sp.Symbol("xp", positive=True)
P, N_, A, B = sp.symbols("P N A B")
FACTS = Facts(variables=frozenset({x, v, xp}), psd=frozenset({P}), nsd=frozenset({N_}),
              matrices={A: np.array([[2.0, 1.0, 0.0], [1.0, 2.0, 0.0], [0.0, 0.0, 1.0]]),
                        B: np.diag([1.0, -1.0, 1.0])})
SHAPES = Shapes(vectors=frozenset({v}))
g = x**2 - 1

NAIVE = [
    (g**sp.Rational(3, 2), "convex", "x^1.5 lives on x >= 0; {x^2 >= 1} is not convex"),
    (F.power(g, 3), "convex", "the DSL's power(., 3) lives on x >= 0"),
    (F.xexp(g), "convex", "xexp lives on x >= 0"),
    (1 / g, "convex", "1/g needs g of known sign"),
    (g**-2, "convex", "g^-2 needs g of known sign"),
    (sp.sqrt(g), "concave", "sqrt of a convex function"),
    (F.huber(g, 1), "convex", "huber is monotone only on a known-sign argument"),
    (F.sum_squares(v**2 - 1), "convex", "sum_squares is monotone only on a known-sign argument"),
    (sp.Abs(g), "convex", "abs is monotone only on a known-sign argument"),
    (g**3, "convex", "odd powers need an argument of known sign"),
]


@pytest.mark.parametrize("expr, naive, why", NAIVE, ids=[w for *_, w in NAIVE])
def test_naive_rule_would_be_unsound(expr, naive, why):
    assert analyse(expr, FACTS).curvature is Curvature.UNKNOWN, why
    outcome = check(expr, FACTS, SHAPES, naive, np.random.default_rng(5), trials=2, points=200)
    assert outcome.violation is not None, f"oracle should refute the naive '{naive}' ({why})"


SIGNED = [
    ((xp**2 + 1)**sp.Rational(3, 2), Curvature.CONVEX, "B&V 2004 §3.2.4: g^p, g convex nonnegative"),
    (F.xexp(xp**2), Curvature.CONVEX, "from memory: xexp nondecreasing on x >= 0"),
    (F.power(xp, 3), Curvature.CONVEX, "B&V 2004 §3.1.5: x^3 convex on x >= 0"),
    ((-xp)**3, Curvature.CONCAVE, "from memory: x^3 concave on x <= 0"),
    (1 / (1 + sp.sqrt(xp)), Curvature.CONVEX, "B&V 2004 §3.2.4: 1/g, g concave positive"),
    ((-xp - 1)**-1, Curvature.CONCAVE, "from memory: 1/x concave on x < 0"),
    ((-xp - 1)**-2, Curvature.CONVEX, "from memory: x^-2 convex on x < 0"),
    (F.power(x - 1, 1.5), Curvature.CONVEX, "B&V 2004 §3.1.5: power of an affine argument, domain x >= 1"),
    (sp.Abs(xp**2), Curvature.CONVEX, "B&V 2004 §3.2.4: abs nondecreasing on a nonnegative argument"),
    (F.quad_form(v, A), Curvature.CONVEX, "B&V 2004 §3.1.4: literal PSD matrix (eigenvalues 1, 1, 3)"),
    (F.quad_form(v, B), Curvature.UNKNOWN, "B&V 2004 §3.1.4: literal indefinite matrix"),
    (F.quad_form(v, N_), Curvature.CONCAVE, "B&V 2004 §3.1.4: NSD matrix"),
    (F.matmul(A, v**2), Curvature.CONVEX, "B&V 2004 §3.2.1: nonnegative weights (literal)"),
    (F.matmul(B, v**2), Curvature.UNKNOWN, "B&V 2004 §3.2.1: weights of mixed sign"),
    (2**x, Curvature.CONVEX, "B&V 2004 §3.1.5: e^{ax} with a = log 2"),
    (F.pnorm(v, 2) ** 2, Curvature.CONVEX, "B&V 2004 §3.2.4: square of a nonnegative convex function"),
]


@pytest.mark.parametrize("expr, expected, source", SIGNED, ids=[s for *_, s in SIGNED])
def test_sign_knowledge_restores_verdicts(expr, expected, source):
    assert analyse(expr, FACTS).curvature is expected, source
    if expected is not Curvature.UNKNOWN:
        outcome = check(expr, FACTS, SHAPES, expected.value, np.random.default_rng(9), trials=2, points=150)
        assert outcome.violation is None, (source, outcome.violation)
        assert outcome.pairs >= 10, "too few points inside the domain to test anything"


def test_constants_are_constant_whatever_they_contain():
    c, d = sp.symbols("c d")
    for expr in (sp.sin(c) * sp.Function("lib.f")(d), sp.Piecewise((c, d > 0), (1, True)), sp.floor(c)):
        assert analyse(expr, FACTS).curvature is Curvature.CONSTANT
    assert analyse(sp.I * c, FACTS).curvature is Curvature.UNKNOWN
    complex_weight = analyse(sp.exp(sp.I * c), FACTS)
    assert complex_weight.curvature is Curvature.UNKNOWN and complex_weight.sign.value == "unknown"
    assert analyse(x + sp.oo, FACTS).curvature is Curvature.UNKNOWN
    assert analyse(F.pnorm(v, sp.oo), FACTS).curvature is Curvature.CONVEX  # p = oo is a parameter


def test_signs_of_atom_values():
    cases = {sp.exp(x): "positive", F.pnorm(v, 2): "nonnegative", -sp.exp(x): "negative",
             sp.sqrt(xp): "positive", F.log1p(xp): "positive", F.pos(x): "nonnegative",
             sp.Max(x, xp): "positive", sp.Min(-xp, x): "negative", x**2 + 1: "positive"}
    for expr, sign in cases.items():
        assert analyse(expr, FACTS).sign.value == sign, expr
