"""optlint.lift.safe_pow: powers with large exponents, checked against exact arithmetic.

The oracle is Python's own exact integer and fraction arithmetic (and complex floats for a
non-integer exponent of a negative number, principal branch, as Python and sympy both define it).
"""

from __future__ import annotations

import cmath
import time
from fractions import Fraction

import sympy

from optlint.lift import DataSymbol, safe_pow

x, y = sympy.symbols("x y", real=True)


def _value(expr, point):
    """expr at point, with each opaque data power replaced by its exact value."""
    subs = dict(point)
    for s in expr.atoms(DataSymbol):
        base, exp = s.name[1:-1].split(")**(")
        subs[s] = sympy.Pow(sympy.Rational(base), sympy.Rational(exp))
    return expr.xreplace(subs)


def test_a_constant_factor_raised_to_a_huge_exponent_is_not_computed():
    start = time.perf_counter()
    out = safe_pow(2 * x * y, sympy.Integer(10**10))
    assert time.perf_counter() - start < 1.0          # sympy alone: minutes of big-integer work
    constants = out.atoms(DataSymbol)
    assert len(constants) == 1 and next(iter(constants)).is_positive
    assert out.free_symbols - constants == {x, y}


def test_the_split_is_exact_for_integer_exponents():
    # 3**200 is past the exact-number limit, so the split happens, yet small enough to check
    for coeff, exp in ((3, 200), (-3, 201), (-3, 200), (Fraction(1, 3), 300), (-7, -150)):
        c = sympy.Rational(coeff.numerator, coeff.denominator) if isinstance(coeff, Fraction) else sympy.Integer(coeff)
        out = safe_pow(c * x, sympy.Integer(exp))
        assert out.atoms(DataSymbol), (coeff, exp)            # it did split
        for at in (2, -5, Fraction(3, 4)):
            exact = (Fraction(coeff) * Fraction(at)) ** exp
            got = _value(out, {x: sympy.Rational(at.numerator, at.denominator) if isinstance(at, Fraction) else at})
            assert sympy.Rational(exact.numerator, exact.denominator) == sympy.expand(got), (coeff, exp, at)


def test_the_split_keeps_the_principal_branch_for_fractional_exponents():
    exp = sympy.Rational(401, 2)
    for coeff in (-3, 3):
        out = safe_pow(coeff * x, exp)
        assert out.atoms(DataSymbol)
        for at in (2.0, -5.0):
            want = complex(coeff * at) ** (401 / 2)
            got = complex(sympy.N(_value(out, {x: sympy.Float(at)}), 30))
            assert cmath.isclose(got, want, rel_tol=1e-9), (coeff, at, got, want)


def test_small_powers_are_left_to_sympy():
    assert safe_pow(2 * x, sympy.Integer(3)) == 8 * x**3
    assert safe_pow(sympy.Integer(2), sympy.Integer(10)) == 1024
    assert isinstance(safe_pow(sympy.Integer(2), sympy.Integer(10**10)), DataSymbol)
