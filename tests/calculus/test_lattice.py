"""The sign and curvature lattices against plain arithmetic and the definitions.

Sign tables are checked by brute force with numpy: numbers drawn from every sign class are added,
multiplied, maxed and minned, and the result's class must lie in the Sign the table gives (facts of
the trade: real arithmetic). Curvature joins are checked against the definitions of B&V 2004 §3.1.1
(from memory): affine = convex and concave, a sum is convex only if no term is known to break it.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
import sympy as sp

from optlint.calculus import Curvature, Sign

SAMPLES = {
    Sign.POSITIVE: [0.5, 3.0, 1e-3],
    Sign.NEGATIVE: [-0.5, -3.0, -1e-3],
    Sign.ZERO: [0.0],
}
SAMPLES[Sign.NONNEGATIVE] = SAMPLES[Sign.POSITIVE] + SAMPLES[Sign.ZERO]
SAMPLES[Sign.NONPOSITIVE] = SAMPLES[Sign.NEGATIVE] + SAMPLES[Sign.ZERO]
SAMPLES[Sign.UNKNOWN] = SAMPLES[Sign.POSITIVE] + SAMPLES[Sign.NEGATIVE] + SAMPLES[Sign.ZERO]


def _holds(sign: Sign, value: float) -> bool:
    return {Sign.POSITIVE: value > 0, Sign.NEGATIVE: value < 0, Sign.ZERO: value == 0,
            Sign.NONNEGATIVE: value >= 0, Sign.NONPOSITIVE: value <= 0, Sign.UNKNOWN: True}[sign]


@pytest.mark.parametrize("name, numeric", [("add", np.add), ("multiply", np.multiply),
                                           ("maximum", np.maximum), ("minimum", np.minimum)])
def test_sign_tables_are_sound(name, numeric):
    for left, right in itertools.product(Sign, Sign):
        table = getattr(left, name)(right)
        for a, b in itertools.product(SAMPLES[left], SAMPLES[right]):
            assert _holds(table, float(numeric(a, b))), (name, left, right, a, b, table)


def test_sign_tables_are_tight_where_arithmetic_is():
    assert Sign.POSITIVE.add(Sign.NONNEGATIVE) is Sign.POSITIVE
    assert Sign.NEGATIVE.multiply(Sign.NEGATIVE) is Sign.POSITIVE
    assert Sign.NONPOSITIVE.multiply(Sign.NEGATIVE) is Sign.NONNEGATIVE
    assert Sign.ZERO.multiply(Sign.UNKNOWN) is Sign.ZERO
    assert Sign.POSITIVE.add(Sign.NEGATIVE) is Sign.UNKNOWN
    assert Sign.NEGATIVE.maximum(Sign.ZERO) is Sign.ZERO
    assert Sign.NONPOSITIVE.negate() is Sign.NONNEGATIVE
    assert Sign.POSITIVE.is_nonneg and Sign.ZERO.is_nonneg and Sign.ZERO.is_nonpos
    assert not Sign.UNKNOWN.is_nonneg and not Sign.UNKNOWN.is_nonpos


def test_sign_from_sympy_assumptions_and_arrays():
    assert Sign.from_sympy(sp.Symbol("a", positive=True)) is Sign.POSITIVE
    assert Sign.from_sympy(sp.Symbol("a", nonnegative=True)) is Sign.NONNEGATIVE
    assert Sign.from_sympy(sp.Symbol("a", nonpositive=True)) is Sign.NONPOSITIVE
    assert Sign.from_sympy(sp.Symbol("a", negative=True)) is Sign.NEGATIVE
    assert Sign.from_sympy(sp.Symbol("a", real=True)) is Sign.UNKNOWN
    assert Sign.from_sympy(sp.Integer(0)) is Sign.ZERO
    assert Sign.from_array(np.array([[1.0, 2.0], [0.5, 3.0]])) is Sign.POSITIVE
    assert Sign.from_array(np.array([0.0, 2.0])) is Sign.NONNEGATIVE
    assert Sign.from_array(np.array([-1.0, 2.0])) is Sign.UNKNOWN
    assert Sign.from_array(np.array([np.nan, 2.0])) is Sign.UNKNOWN
    assert Sign.from_array(np.array([1j, 2.0])) is Sign.UNKNOWN


C, A, V, K, U = Curvature.CONSTANT, Curvature.AFFINE, Curvature.CONVEX, Curvature.CONCAVE, Curvature.UNKNOWN


def test_curvature_lattice_order_and_join():
    assert C <= A <= V <= U and A <= K <= U
    assert not V <= K and not K <= V
    assert V.join(K) is U and A.join(V) is V and C.join(K) is K and C.join(A) is A
    for a, b in itertools.product(Curvature, Curvature):
        j = a.join(b)
        assert a <= j and b <= j and j is b.join(a)
        # the join is convex only when both are (a sum keeps only shared guarantees)
        assert j.is_convex == (a.is_convex and b.is_convex)
        assert j.is_concave == (a.is_concave and b.is_concave)


def test_curvature_negate_and_predicates():
    assert V.negate() is K and K.negate() is V and A.negate() is A and C.negate() is C and U.negate() is U
    assert [c.is_affine for c in (C, A, V, K, U)] == [True, True, False, False, False]
    assert {str(c) for c in Curvature} == {"constant", "affine", "convex", "concave", "unknown"}
