"""Pathological expressions: the analysis returns quickly, never raises, never overflows the stack.

Each case must come back within 2 s (wall clock) with a verdict or UNKNOWN, and with
``budget_exceeded`` set exactly when the budget was the cause. Deep and wide trees are built
iteratively with evaluate=False so that neither sympy nor the test hits Python's recursion limit.
"""

from __future__ import annotations

import time

import sympy as sp

from optlint.calculus import Budget, Curvature, Facts, analyse
from optlint.calculus import functions as F

x, y = sp.symbols("x y")
FACTS = Facts(variables=frozenset({x, y}))


def _timed(expr, budget=None):
    start = time.monotonic()
    result = analyse(expr, FACTS, budget)
    elapsed = time.monotonic() - start
    assert elapsed < 2.0, elapsed
    return result


def _nest(fn, depth, start):
    expr = start
    for _ in range(depth):
        expr = fn(expr)
    return expr


def test_deep_exp_tower_hits_the_depth_budget():
    expr = _nest(lambda e: sp.exp(e, evaluate=False), 500, x)
    result = _timed(expr)
    assert result.curvature is Curvature.UNKNOWN and result.budget_exceeded
    assert result.tree.rule == "budget" and "deep" in result.tree.reason


def test_deep_exp_tower_within_a_larger_budget_is_convex():
    # exp is convex nondecreasing, so any tower of exps over x is convex (B&V 2004 §3.2.4, from memory).
    expr = _nest(lambda e: sp.exp(e, evaluate=False), 500, x)
    result = _timed(expr, Budget(max_depth=1000))
    assert result.curvature is Curvature.CONVEX and not result.budget_exceeded


def test_deep_left_nested_sum():
    expr = _nest(lambda e: sp.Add(e, 1, evaluate=False), 500, x)
    assert _timed(expr).budget_exceeded
    deep = _timed(expr, Budget(max_depth=600))
    assert deep.curvature is Curvature.AFFINE and not deep.budget_exceeded


def test_very_deep_nesting_with_huge_depth_budget_does_not_recurse():
    # 5,000 levels would overflow any recursive walk (Python's default limit is 1,000 frames).
    expr = _nest(lambda e: sp.Add(e, 1, evaluate=False), 5000, x)
    result = _timed(expr, Budget(max_depth=10**6, max_nodes=10**6, max_seconds=1.5))
    assert result.curvature in (Curvature.AFFINE, Curvature.UNKNOWN)
    assert result.budget_exceeded == (result.curvature is Curvature.UNKNOWN)


def test_two_thousand_term_sum_is_analysed():
    symbols = sp.symbols("s0:2000")
    facts = Facts(variables=frozenset(symbols))
    expr = sp.Add(*[s**2 for s in symbols], evaluate=False)
    start = time.monotonic()
    result = analyse(expr, facts)
    assert time.monotonic() - start < 2.0
    assert result.curvature is Curvature.UNKNOWN and result.budget_exceeded  # 6,001 nodes > 4,000
    result = analyse(expr, facts, Budget(max_nodes=10_000))
    assert result.curvature is Curvature.CONVEX and not result.budget_exceeded


def test_two_thousand_plain_terms_fit_the_default_budget():
    symbols = sp.symbols("t0:2000")
    result = analyse(sp.Add(*symbols), Facts(variables=frozenset(symbols)))
    assert result.curvature is Curvature.AFFINE and not result.budget_exceeded


def test_nested_powers_with_huge_exponents():
    # x^(10^40) is an even power, so convex and nonnegative; each further even power sees a
    # nonnegative convex argument, where it is nondecreasing, so the tower stays convex
    # (B&V 2004 §3.2.4, from memory).
    expr = x
    for _ in range(30):
        expr = sp.Pow(expr, 10**40, evaluate=False)
    assert _timed(expr).curvature is Curvature.CONVEX
    odd = sp.Pow(sp.Pow(x, 10**40 + 1, evaluate=False), sp.Rational(1, 10**40 + 1), evaluate=False)
    assert _timed(odd).curvature is Curvature.UNKNOWN


def test_huge_numbers_are_not_evaluated():
    huge = sp.Pow(10, sp.Pow(10, 10, evaluate=False), evaluate=False)  # 10**10**10
    for expr in (huge * x, x + huge, sp.exp(huge) + x**2, sp.Pow(x, huge, evaluate=False),
                 sp.Add(huge, -huge, x, evaluate=False), huge - huge * x):
        result = _timed(expr)
        assert not result.budget_exceeded
    assert _timed(huge * x**2).curvature is Curvature.CONVEX  # positive weight
    assert _timed(huge - huge * x).curvature is Curvature.AFFINE
    assert _timed(sp.Pow(x, huge, evaluate=False)).curvature is Curvature.UNKNOWN  # parity unknown


def test_large_integer_exponent_parity_is_exact():
    assert _timed(x**(10**30)).curvature is Curvature.CONVEX
    assert _timed(x**(10**30 + 1)).curvature is Curvature.UNKNOWN
    assert _timed(x**sp.Float("1e400")).curvature is Curvature.CONVEX  # huge binary floats are even


def test_time_budget_is_enforced():
    expr = _nest(lambda e: sp.Add(e, x**2, evaluate=False), 3000, x)
    result = _timed(expr, Budget(max_nodes=10**6, max_depth=10**6, max_seconds=0.0))
    assert result.budget_exceeded and "longer" in result.tree.reason


def test_shared_subexpressions_are_memoised():
    # A DAG whose tree has 2^60 nodes but only ~120 distinct subexpressions.
    expr = x
    for _ in range(60):
        expr = sp.Add(expr, sp.Mul(2, expr, evaluate=False), evaluate=False)
    result = _timed(expr)
    assert result.curvature is Curvature.AFFINE and not result.budget_exceeded


def test_odd_nodes_never_raise():
    M = sp.MatrixSymbol("M", 2, 2)
    odd = [sp.I * x, x + sp.zoo, sp.nan * x, sp.oo + x, x < 1, sp.Tuple(x, y), sp.Integral(x, x),
           sp.Piecewise((x, x > 0), (-x, True)), sp.floor(x), M, F.stack(*([x] * 64)),
           sp.Function("f")(), sp.Derivative(sp.Function("g")(x), x), F.pnorm(x, y)]
    for expr in odd:
        result = _timed(expr)
        assert result.tree.rule != "internal-error", expr
        assert result.curvature in Curvature


def test_atoms_are_not_evaluated_by_mpmath_namesakes():
    # sympy's evalf looks functions up in mpmath by name; mpmath.diff is numerical differentiation
    # and mpmath.power(-8, 1/3) is complex, neither of which is the DSL's atom.
    assert sp.N(F.diff(sp.Integer(3))).func is F.diff
    assert sp.N(F.power(-8, sp.Rational(1, 3))).func is F.power
    assert _timed(sp.exp(F.power(0, -1))).curvature is Curvature.CONSTANT

