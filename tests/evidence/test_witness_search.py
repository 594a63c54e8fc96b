"""The witness search on shapes of expression it used to miss (invented cases, not fixtures).

Each case is non-convex (or not affine) for a reason stated beside it, and each witness found is
re-evaluated by the independent string-form evaluator (tests/evidence/strform.py) against the
definition of convexity (B&V 2004 §3.1.1, from memory): f(t·a + (1−t)·b) > t·f(a) + (1−t)·f(b)
refutes convexity; for a constraint's set, f(a) <= 0, f(b) <= 0 and f(mid) > 0 refute convexity of
{f <= 0}. Where data were given values, the model expression itself is evaluated by sympy's own
substitution at those values, so the evidence is an honest instance.
"""

from __future__ import annotations

import math

import sympy as sp

from evidence.strform import evaluate
from optlint.calculus import Facts
from optlint.calculus import functions as F
from optlint.evidence.witness import find
from optlint.ir import Declaration, Model
from optlint.lift import data

X, Y = sp.Dummy("x", real=True), sp.Dummy("y", real=True)
M = sp.Dummy("grid", real=True)   # a 4 x 40 matrix variable
V = sp.Dummy("v", real=True)      # a vector of length 3
IX = sp.Function("ix")


def _setup():
    m = Model(path="case.py", dialect="dsl")
    for s, shape in ((X, ()), (Y, ()), (M, (4, 40)), (V, (3,))):
        m.declarations[s] = Declaration(name=s.name, role="variable", symbol=s, site=None, shape=shape)
    return m, Facts(variables=m.variables)


def _recomputes(w) -> None:
    env = lambda p: dict(zip(w["variables"], p))  # noqa: E731
    t = w["t"]
    mid = [t * x + (1 - t) * y for x, y in zip(w["a"], w["b"])]
    fa, fb, ft = (evaluate(w["expression"], env(p)) for p in (w["a"], w["b"], mid))
    for mine, theirs in ((fa, w["f_a"]), (fb, w["f_b"]), (ft, w["f_t"])):
        assert math.isclose(mine, theirs, rel_tol=1e-9, abs_tol=1e-12)
    chord = t * fa + (1 - t) * fb
    tol = 1e-9 * (1 + abs(fa) + abs(fb))
    if w["kind"] == "set":
        assert fa <= 0 and fb <= 0 and ft > 0
    elif w["kind"] == "not-affine":
        assert abs(ft - chord) > tol
    else:
        assert ft > chord + tol


def _witness(expr, kind="function", elementwise=False):
    model, facts = _setup()
    w = find(expr, model, facts, kind, "the case", *((elementwise,) if elementwise else ()))
    assert w is not None, expr
    _recomputes(w)
    return w


def test_cusp_beside_a_steep_quadratic():
    # |x - 4|^0.3 is concave on each side of x = 4 (B&V 2004 §3.1.5, powers with 0 < p < 1, from
    # memory); 18x^2 hides it except within about 1e-2 of the cusp, so only fine steps see it.
    _witness(18 * X**2 + sp.Rational(1, 100) * F.power(sp.Abs(X - 4), sp.Float(0.3)))


def test_capped_loss_far_from_the_origin():
    # min(6, |x + y - 95.5|) is flat beyond the cap and a V inside it: not convex near |r| = 6,
    # which is about 95 away from the origin, out of reach of points near it.
    _witness(sp.Min(6, sp.Abs(X + Y - sp.Float(95.5))))


def test_data_values_that_divide_by_zero_are_skipped_and_reported():
    # -s x^2 / (n - 1): non-convex when s / (n - 1) > 0; the first data trial (n = 1 or s = 1 with
    # n = 2 ...) may make the denominator vanish, which must not end the search.
    n, s = data("rows", real=True), data("spread", real=True)
    expr = -s * X**2 / (n - 1)
    w = _witness(expr)
    assert set(w["data"]) == {"rows", "spread"}
    values = {n: w["data"]["rows"], s: w["data"]["spread"]}
    for point, f in ((w["a"], w["f_a"]), (w["b"], w["f_b"])):
        direct = float(expr.subs(values).subs({X: point[0]}))
        assert math.isclose(direct, f, rel_tol=1e-9, abs_tol=1e-12)


def test_integer_data_take_whole_values():
    # len(...) is a nonnegative integer (a fact of Python). x^2 (m - 1) is non-convex only for
    # m < 1, i.e. m = 0: a witness may claim m = 0, never m = 0.5.
    m = data("len(rows)", integer=True, nonnegative=True)
    model, facts = _setup()
    w = find(X**2 * (m - 1), model, facts, "function", "the case")
    assert w is None or w["data"]["len(rows)"] == 0
    w = _witness(X**2 * (m - 2))  # non-convex for m in {0, 1}
    assert w["data"]["len(rows)"] in (0, 1)


def test_large_matrix_variable_only_indexed_entries_vary():
    # grid[0, 0] * grid[1, 0] == 0 is not affine (a product of two variables); the other 158
    # entries of the 4 x 40 variable are fixed, which restricts f to an affine set.
    expr = F.index(M, IX(0, 0)) * F.index(M, IX(1, 0))
    w = _witness(expr, "not-affine", elementwise=True)
    assert len(w["variables"]) == 2
    assert any("fixed" in note for note in w["notes"])


def test_vector_equality_entry_by_entry():
    # (v0 - v1, v2^2) == 0: the first entry is affine, the second is not.
    expr = F.stack(F.index(V, 0) - F.index(V, 1), F.index(V, 2) ** 2)
    w = _witness(expr, "not-affine", elementwise=True)
    assert w["tested"].startswith("entry 1")


def test_vector_inequality_set_uses_the_largest_entry():
    # x^2 >= 1 entrywise, written as 1 - x^2 <= 0: the set {|x| >= 1} is not convex.
    expr = F.stack(1 - X**2, -X - 10)
    w = _witness(expr, "set", elementwise=True)
    assert w["expression"].startswith("Max(")


def test_entry_of_data_of_unknown_shape_is_data():
    # weights[k] * x^2 with weights of unknown sign and shape: non-convex for a negative entry.
    k = data("k#1", integer=True)
    weights = data("weights", real=True)
    w = _witness(F.index(weights, k) * X**2)
    (name,) = w["data"]
    assert name.startswith("weights[") and w["data"][name] < 0


def test_key_of_unknown_kind_is_a_position_only():
    # a loop over a set of names (not range) gives a key that is not an integer: v[p] * x is a
    # product of two variables (not convex) whichever entry p picks
    p = data("p#1", real=True)
    w = _witness(F.index(V, p) * X)
    assert any("first element of what it ranges over" in note for note in w["notes"])
    # used as a number as well, the key would need one value for both roles: no instance is made
    model, facts = _setup()
    assert find(-p * F.index(V, p) ** 2, model, facts, "function", "the case") is None
    k = data("k#1", integer=True)  # an integer (range) index: the same value, 0, in both roles
    w = _witness(-(k + 1) * F.index(V, k) ** 2)
    assert w["expression"] == "-x_0**2"
