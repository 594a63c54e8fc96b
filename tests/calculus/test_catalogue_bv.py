"""Pinned curvature verdicts against Boyd & Vandenberghe, Convex Optimization (2004).

Each case names the subsection of B&V 2004 that states the fact; all section numbers are recalled,
i.e. "section from memory". UNKNOWN cases are expressions the composition rules cannot certify (some
are in fact convex, e.g. sqrt(x^2 + 1); the rules, like B&V §3.2.4's, only give sufficient
conditions). Every non-UNKNOWN verdict is also checked by the independent numeric oracle, and the
oracle itself is checked to catch known non-convex functions, so these tests can fail both ways.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp

from calculus_oracle import Shapes, check
from optlint.calculus import Curvature, Facts, analyse
from optlint.calculus import functions as F
from optlint.calculus.catalogue import FAMILIES, TABLE

x, y, z = sp.symbols("x y z")
u = sp.Symbol("u", positive=True)       # decision variable constrained positive
w = sp.Symbol("w", nonnegative=True)
v, v2 = sp.symbols("v v2")              # vector variables
wv = sp.Symbol("wv", nonnegative=True)  # nonnegative vector variable
X = sp.Symbol("X")                      # symmetric matrix variable
a = sp.Symbol("a", positive=True)       # data
b = sp.Symbol("b", negative=True)
c = sp.Symbol("c")
A, P, q = sp.symbols("A P q")           # data: literal matrix, PSD matrix, vector

LITERAL_A = np.array([[1.0, -2.0, 0.5], [0.0, 1.0, 3.0], [2.0, 1.0, -1.0]])
FACTS = Facts(variables=frozenset({x, y, z, u, w, v, v2, wv, X}), psd=frozenset({P}),
              matrices={A: LITERAL_A})
SHAPES = Shapes(vectors=frozenset({v, v2, wv, q}), matrices=frozenset({X}))

CV, CC, AF, UN = Curvature.CONVEX, Curvature.CONCAVE, Curvature.AFFINE, Curvature.UNKNOWN

CASES = [
    # §3.1.5 examples of convex and concave functions on R
    (sp.exp(2 * x), CV, "B&V 2004 §3.1.5: e^{ax} is convex on R"),
    (sp.exp(-3 * x), CV, "B&V 2004 §3.1.5: e^{ax} is convex on R (any a)"),
    (u**1.5, CV, "B&V 2004 §3.1.5: x^a convex on R++ for a >= 1"),
    (u**-0.5, CV, "B&V 2004 §3.1.5: x^a convex on R++ for a <= 0"),
    (1 / u, CV, "B&V 2004 §3.1.5: x^a convex on R++ for a <= 0 (a = -1)"),
    (u**-2, CV, "B&V 2004 §3.1.5: x^a convex on R++ for a <= 0 (a = -2)"),
    (u**sp.Rational(3, 10), CC, "B&V 2004 §3.1.5: x^a concave on R++ for 0 <= a <= 1"),
    (sp.sqrt(u), CC, "B&V 2004 §3.1.5: x^a concave for 0 <= a <= 1 (a = 1/2)"),
    (sp.Abs(x)**3, CV, "B&V 2004 §3.1.5: |x|^p convex on R for p >= 1"),
    (x**4, CV, "B&V 2004 §3.1.5: |x|^p convex on R for p >= 1 (even p)"),
    (sp.log(u), CC, "B&V 2004 §3.1.5: log x concave on R++"),
    (-F.entr(w), CV, "B&V 2004 §3.1.5: negative entropy x log x convex on R+"),
    (F.entr(w), CC, "B&V 2004 §3.1.5: entropy -x log x concave on R+"),
    # §3.1.5 examples on R^n
    (F.pnorm(v, 2), CV, "B&V 2004 §3.1.5: every norm is convex (Euclidean)"),
    (F.pnorm(v, 1), CV, "B&V 2004 §3.1.5: every norm is convex (l1)"),
    (F.pnorm(v, sp.oo), CV, "B&V 2004 §3.1.5: every norm is convex (l-infinity)"),
    (F.pnorm(v, sp.Rational(1, 2)), UN, "B&V 2004 §3.1.5: norms need p >= 1; p = 1/2 is not a norm"),
    (F.vmax(v), CV, "B&V 2004 §3.1.5: max function max_i x_i is convex"),
    (F.quad_over_lin(x, u), CV, "B&V 2004 §3.1.5: quadratic-over-linear x^2/y convex for y > 0"),
    (F.log_sum_exp(v), CV, "B&V 2004 §3.1.5: log-sum-exp is convex"),
    (F.geo_mean(wv), CC, "B&V 2004 §3.1.5: geometric mean concave on R^n_+"),
    (F.log_det(X), CC, "B&V 2004 §3.1.5: log det X concave on S^n_++"),
    (F.sum_squares(v), CV, "B&V 2004 §3.1.5: squared Euclidean norm is convex"),
    (F.quad_form(v, P), CV, "B&V 2004 §3.1.4: x'Px convex when P is PSD (second-order condition)"),
    (x * y, UN, "B&V 2004 §3.1.4: the bilinear form xy has an indefinite Hessian"),
    # §3.2.1 nonnegative weighted sums
    (2 * sp.exp(x) + 3 * x**2, CV, "B&V 2004 §3.2.1: nonnegative weighted sum of convex functions"),
    (a * F.pnorm(v, 2) + F.sum_squares(v), CV, "B&V 2004 §3.2.1: positive data weight keeps convexity"),
    (sp.log(u) / 2 + sp.sqrt(u), CC, "B&V 2004 §3.2.1: nonnegative weighted sum of concave functions"),
    (-2 * sp.exp(x), CC, "B&V 2004 §3.2.1 with §3.1.1: f convex iff -f concave"),
    (b * sp.exp(x) + sp.log(u), CC, "B&V 2004 §3.2.1: negative data weight turns convex into concave"),
    (c * sp.exp(x), UN, "B&V 2004 §3.2.1: the weights must be nonnegative; sign of c unknown"),
    (sp.exp(x) - sp.exp(y), UN, "B&V 2004 §3.2.1: a difference of convex functions is not covered"),
    # §3.2.2 composition with an affine mapping
    (F.pnorm(F.matmul(A, v) - q, 2), CV, "B&V 2004 §3.2.2: norm of an affine map ||Ax - b||"),
    (sp.exp(3 * x - 2 * y + 1), CV, "B&V 2004 §3.2.2: f(Ax + b) with f convex"),
    (sp.log(x + 2 * y + 5), CC, "B&V 2004 §3.2.2: log of an affine function"),
    ((x - y)**2, CV, "B&V 2004 §3.2.2: square of an affine function"),
    (-sp.log(1 - x - y), CV, "B&V 2004 §3.2.2: -log of an affine function (log barrier term)"),
    (F.vsum(F.matmul(A, v)) + c, AF, "B&V 2004 §3.2.2: affine maps of affine functions are affine"),
    # §3.2.3 pointwise maximum
    (sp.Max(x, 2 * y, 1 - x), CV, "B&V 2004 §3.2.3: piecewise-linear max of affine functions"),
    (sp.Max(sp.exp(x), x**2), CV, "B&V 2004 §3.2.3: pointwise maximum of convex functions"),
    (sp.Min(sp.log(u), sp.sqrt(u)), CC, "B&V 2004 §3.2.3: pointwise minimum of concave functions"),
    (F.sum_largest(v, 2), CV, "B&V 2004 §3.2.3: sum of the r largest components"),
    (F.lambda_max(X), CV, "B&V 2004 §3.2.3: maximum eigenvalue of a symmetric matrix"),
    (F.pos(x - 1), CV, "B&V 2004 §3.2.3: max(x - 1, 0), a max of affine functions"),
    (sp.Max(sp.exp(x), -sp.exp(y)), UN, "B&V 2004 §3.2.3: max of a convex and a concave function"),
    # §3.2.4 composition, scalar examples
    (sp.exp(x**2 + y**2), CV, "B&V 2004 §3.2.4: exp g(x) is convex if g is convex"),
    (sp.log(1 - x**2), CC, "B&V 2004 §3.2.4: log g(x) is concave if g is concave and positive"),
    (1 / (sp.sqrt(u) + 1), CV, "B&V 2004 §3.2.4: 1/g(x) is convex if g is concave and positive"),
    (F.inv_pos(1 - x**2), CV, "B&V 2004 §3.2.4: 1/g(x) convex for concave positive g (domain g > 0)"),
    ((x**2 + 1)**sp.Rational(3, 2), CV, "B&V 2004 §3.2.4: g(x)^p convex for p >= 1, g convex nonnegative"),
    (F.pnorm(v, 2)**2, CV, "B&V 2004 §3.2.4: g(x)^p convex for p >= 1, g convex nonnegative (p = 2)"),
    (-sp.log(-(x**2 + y**2 - 1)), CV, "B&V 2004 §3.2.4: -log(-g(x)) convex on {g < 0} if g convex"),
    (F.log_sum_exp(F.stack(x**2, sp.exp(y), F.pnorm(v, 1))), CV,
     "B&V 2004 §3.2.4: log sum exp of convex functions g_i is convex"),
    (sp.sqrt(F.geo_mean(wv)), CC, "B&V 2004 §3.2.4: concave nondecreasing of concave is concave"),
    (sp.exp(-x**2), UN, "B&V 2004 §3.2.4: exp of a concave function is not covered (Gaussian bump)"),
    (sp.sqrt(x**2 + 1), UN, "B&V 2004 §3.2.4: concave nondecreasing of convex is not covered"),
    ((x**2 - 1)**2, UN, "B&V 2004 §3.2.4: square is monotone only on a known-sign argument"),
    (x**3, UN, "B&V 2004 §3.1.5: x^3 is neither convex nor concave on R"),
    (sp.sin(x), UN, "from memory: sin is neither convex nor concave on R"),
    # §3.2.6 perspective
    (F.quad_over_lin(v, u), CV, "B&V 2004 §3.2.6: perspective of the squared norm, x'x / t"),
    (F.rel_entr(w, u), CV, "B&V 2004 §3.2.6: perspective of -log gives relative entropy"),
    (F.kl_div(w, u), CV, "B&V 2004 §3.2.6: relative entropy plus an affine term"),
    (u * sp.exp(x / u), UN, "B&V 2004 §3.2.6: the perspective of exp is convex, but as a product the "
                            "rules cannot see it"),
    # §3.1.7 / §3.2.3 matrix functions
    (F.matrix_frac(v, X), CV, "B&V 2004 §3.1.7: matrix fractional function x'Y^{-1}x, jointly convex"),
    (F.lambda_min(X) + F.trace(X), CC, "B&V 2004 §3.2.3: minimum eigenvalue is concave; trace is linear"),
]


@pytest.mark.parametrize("expr, expected, source", CASES, ids=[src for _, _, src in CASES])
def test_pinned_verdict(expr, expected, source):
    result = analyse(expr, FACTS)
    assert result.curvature is expected, (source, result.tree.reason)


@pytest.mark.parametrize("expr, expected, source", [case for case in CASES if case[1] is not UN],
                         ids=[src for _, e, src in CASES if e is not UN])
def test_oracle_agrees(expr, expected, source):
    """Independent numpy check of every certified case (numeric convexity inequality)."""
    outcome = check(expr, FACTS, SHAPES, expected.value, np.random.default_rng(7), trials=3, points=60)
    assert outcome.violation is None, (source, outcome.violation)
    assert outcome.pairs >= 15, "too few points inside the domain to test anything"


NONCONVEX = [
    (x**3, "convex", "B&V 2004 §3.1.5: x^3 is not convex on R"),
    (sp.exp(-x**2), "convex", "from memory: the Gaussian bump is not convex"),
    ((x**2 - 1)**2, "convex", "from memory: the double well has two minima"),
    (sp.sqrt(F.sum_squares(v)) - F.pnorm(v, 1), "concave", "from memory: ||x||_2 - ||x||_1 is neither"),
    (x * y, "convex", "B&V 2004 §3.1.4: xy has an indefinite Hessian"),
    (F.entr(x**2), "concave", "from memory: entropy of a square is not concave"),
]


@pytest.mark.parametrize("expr, claim, source", NONCONVEX, ids=[s for *_, s in NONCONVEX])
def test_oracle_catches_false_claims(expr, claim, source):
    """The oracle must be able to fail: it refutes wrong claims about known non-convex functions."""
    outcome = check(expr, FACTS, SHAPES, claim, np.random.default_rng(11), trials=4, points=80)
    assert outcome.violation is not None, source


def test_at_least_forty_pinned_cases():
    assert len(CASES) >= 40
    assert {CV, CC, AF, UN} <= {e for _, e, _ in CASES}


def test_every_family_shares_one_sign_rule_and_cites_a_source():
    for family, entries in FAMILIES.items():
        assert len({e.sign for e in entries}) == 1, family
    for entry in TABLE:
        assert "B&V 2004 §" in entry.source or "from memory" in entry.source, entry.name
        assert "§" not in entry.source or "from memory" in entry.source, entry.name


def test_every_vocabulary_class_has_a_catalogue_entry():
    for cls in F.ALL_ATOMS:
        nargs = max(1, int(cls.nargs.inf))  # stack takes any number: min() of an infinite set never returns
        args = [sp.Symbol(f"a{i}") for i in range(nargs)]
        result = analyse(cls(*args), Facts(variables=frozenset(args[:1])))
        assert result.tree.rule not in ("unsupported-function", "internal-error"), cls.__name__

