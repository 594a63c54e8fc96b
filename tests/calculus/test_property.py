"""Property test: random expressions over the whole atom catalogue never get an unsound verdict.

Hypothesis draws expressions (depth up to 5) from a grammar of every atom, sympy arithmetic and
elementary functions, undefined functions, signed symbols (positive, nonnegative, nonpositive,
negative, unknown sign) as variables and as data, and constants of both signs. For every verdict
other than UNKNOWN the independent numeric oracle (calculus_oracle, numpy only) searches for a
violation of the convexity/concavity inequality or of domain convexity; zero violations is the only
passing result. The run also asserts that a real share of verdicts is not UNKNOWN and that both
convex and concave verdicts occur, so it cannot pass vacuously
(at least 25% certified; measured 32-43%).

500 examples by default; the long run is a separate command:
    OPTLINT_PROPERTY_EXAMPLES=5000 python -m pytest tests/calculus/test_property.py -q
"""

from __future__ import annotations

import os
import zlib
from collections import Counter

import numpy as np
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from calculus_oracle import Shapes, check
from optlint.calculus import Curvature, Facts, analyse
from optlint.calculus import functions as F

EXAMPLES = int(os.environ.get("OPTLINT_PROPERTY_EXAMPLES", "500"))

SCALAR_VARS = [sp.Symbol("x"), sp.Symbol("xp", positive=True), sp.Symbol("xn", nonnegative=True),
               sp.Symbol("xq", nonpositive=True), sp.Symbol("xm", negative=True)]
VECTOR_VARS = [sp.Symbol("v"), sp.Symbol("vp", positive=True), sp.Symbol("vq", nonpositive=True)]
MATRIX_VARS = [sp.Symbol("M1"), sp.Symbol("M2")]
DATA = [sp.Symbol("kp", positive=True), sp.Symbol("km", negative=True), sp.Symbol("ku"),
        sp.Symbol("kn", nonnegative=True)]
NUMBERS = [sp.Integer(2), sp.Integer(3), sp.Rational(1, 2), sp.Float(0.7), sp.Integer(-1),
           sp.Integer(-2), sp.Rational(-1, 3), sp.Float(-1.5)]
EXPONENTS = [sp.Integer(2), sp.Integer(3), sp.Integer(4), sp.Rational(1, 2), sp.Rational(1, 3),
             sp.Float(1.5), sp.Rational(5, 2), sp.Integer(-1), sp.Integer(-2), sp.Rational(-1, 2)]
A_POS, A_MIX, P_LIT, P_IND, S_LIT = sp.symbols("A_pos A_mix P_lit P_ind S_lit")
Q_PSD, R_NSD = sp.symbols("Q_psd R_nsd")
_rng = np.random.default_rng(3)
_B = _rng.normal(size=(3, 3))
FACTS = Facts(
    variables=frozenset(SCALAR_VARS + VECTOR_VARS + MATRIX_VARS),
    psd=frozenset({Q_PSD}), nsd=frozenset({R_NSD}),
    matrices={A_POS: np.abs(_B) + 0.1, A_MIX: _B, P_LIT: _B @ _B.T + 0.1 * np.eye(3),
              P_IND: np.diag([1.0, -1.0, 2.0]), S_LIT: (_B + _B.T) / 2},
)
SHAPES = Shapes(vectors=frozenset(VECTOR_VARS), matrices=frozenset(MATRIX_VARS + [Q_PSD, R_NSD]))
penalty = sp.Function("mylib.penalty")


def _constant(draw):
    return draw(st.sampled_from(NUMBERS + DATA))


x, xp, xn = SCALAR_VARS[:3]
v = VECTOR_VARS[0]
# Small convex/concave pieces whose sign is unknown (x^2 - 1 dips below zero between two roots):
# under a monotone atom with a restricted domain they are the classic way to get a domain that is
# not convex, so the grammar offers them as ready-made leaves.
SCALAR_PIECES = [x**2 - 1, sp.Abs(x) - 2, sp.exp(x) - 2, 1 - x**2, sp.log(xp) + 1, F.sum_squares(v) - 1,
                 xp - 1, 1 - xn, sp.sqrt(xp) - 1, F.pnorm(v, 2) - 2]
VECTOR_PIECES = [v**2 - 1, 1 - v**2, sp.exp(v) - 2, sp.Abs(v) - 1]


def _leaf(draw, shape):
    roll = draw(st.integers(0, 5))
    if shape == "v":
        return draw(st.sampled_from(VECTOR_PIECES if roll < 2 else VECTOR_VARS))
    if roll == 0:
        return _constant(draw)
    return draw(st.sampled_from(SCALAR_PIECES if roll < 3 else SCALAR_VARS))


_UNARY = [
    sp.exp, sp.log, sp.Abs, sp.sqrt, F.entr, F.logistic, F.inv_pos, F.pos, F.neg, F.log1p, F.xexp,
    lambda e: F.huber(e, 1), lambda e: -e,
]
# Always (or nearly always) UNKNOWN on variables; drawn less often so that verdicts stay frequent.
_RARE = [sp.sin, penalty, F.nnz, lambda e: e * e.subs(x, xp)]
_BINARY = [
    lambda a, b: a + b, lambda a, b: a - b, lambda a, b: a * b, sp.Max, sp.Min, F.rel_entr, F.kl_div,
    lambda a, b: a + b,
]
_REDUCE = [
    F.vsum, F.mean, F.sum_squares, F.log_sum_exp, F.geo_mean, F.harmonic_mean, F.vmax, F.vmin, F.tv,
    lambda e: F.index(e, 1), lambda e: F.sum_largest(e, 2), lambda e: F.sum_smallest(e, 2),
    lambda e: F.vsum(F.diff(e)), lambda e: F.vsum(F.cumsum(e)),
]
_MATRIX = [F.lambda_max, F.lambda_min, F.log_det, F.sigma_max, F.norm_nuc, F.trace]


def _matrix_expr(draw):
    m1, m2 = MATRIX_VARS
    return draw(st.sampled_from([m1, m1 + m2, 2 * m1 - m2, m1 + S_LIT, -m1, m1**2, sp.exp(m2)]))


def _safe(fn, *args):
    """sympy refuses some constructions (Max of a complex constant); keep the first argument then."""
    try:
        return fn(*args)
    except (ValueError, TypeError):
        return args[0]


@st.composite
def expressions(draw, depth=5, shape="s"):
    if depth == 0 or draw(st.integers(0, 7)) == 0:
        return _leaf(draw, shape)
    # Shifts and powers are weighted up: g(x) + c under a monotone atom is where the extended-value
    # subtleties (domains that are not convex) live.
    kind = draw(st.sampled_from(["unary"] * 3 + ["pow"] * 2 + ["shift"] * 2 + ["binary"] * 2
                                + ["power", "scale", "rare"]
                                + (["reduce", "reduce", "norm", "quad", "matrix"] if shape == "s" else
                                   ["stack", "matmul"])))
    sub = lambda s=shape: draw(expressions(depth - 1, s))  # noqa: E731
    if kind == "unary":
        return _safe(draw(st.sampled_from(_UNARY)), sub())
    if kind == "rare":
        return _safe(draw(st.sampled_from(_RARE)), sub())
    if kind == "pow":
        return sub() ** draw(st.sampled_from(EXPONENTS))
    if kind == "power":
        return F.power(sub(), draw(st.sampled_from(EXPONENTS + [sp.Integer(0), sp.Integer(1)])))
    if kind == "binary":
        other = sub("s") if draw(st.booleans()) else sub()
        return _safe(draw(st.sampled_from(_BINARY)), sub(), other)
    if kind == "shift":
        return sub() + _constant(draw)
    if kind == "scale":
        return _constant(draw) * sub()
    if kind == "reduce":
        return draw(st.sampled_from(_REDUCE))(sub("v"))
    if kind == "norm":
        p = draw(st.sampled_from([sp.Integer(1), sp.Integer(2), sp.Integer(3), sp.oo, sp.Integer(2),
                                  sp.Rational(1, 2)]))
        return F.pnorm(sub("v"), p)
    if kind == "quad":
        if draw(st.booleans()):
            return F.quad_form(sub("v"), draw(st.sampled_from([Q_PSD, R_NSD, P_LIT, P_IND])))
        return F.quad_over_lin(sub("v"), sub("s"))
    if kind == "matrix":
        return draw(st.sampled_from(_MATRIX))(_matrix_expr(draw))
    if kind == "stack":
        return F.stack(sub("s"), sub("s"), sub("s"))
    return F.matmul(draw(st.sampled_from([A_POS, A_MIX])), sub("v"))


def test_no_unsound_verdict():
    stats: Counter = Counter()

    # Fixed examples in CI (a run never depends on luck); the long on-demand run explores freely.
    @settings(max_examples=EXAMPLES, deadline=None, database=None,
              derandomize="OPTLINT_PROPERTY_EXAMPLES" not in os.environ,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                     HealthCheck.filter_too_much])
    @given(expressions())
    def one(expr):
        result = analyse(expr, FACTS)
        assert result.tree.rule != "internal-error", result.tree.reason
        stats[result.curvature] += 1
        if result.curvature is Curvature.UNKNOWN:
            return
        # Seeded by the expression so that hypothesis can replay a failure exactly.
        rng = np.random.default_rng(zlib.crc32(sp.srepr(expr).encode()))
        outcome = check(expr, FACTS, SHAPES, result.curvature.value, rng, trials=3, points=16)
        assert outcome.violation is None, f"{expr}: {result.curvature.value} but {outcome.violation}"
        stats["tested"] += outcome.pairs > 0

    one()
    total = sum(stats[c] for c in Curvature)
    certified = total - stats[Curvature.UNKNOWN]
    print(f"\nverdicts over {total} examples: " + ", ".join(f"{c.value}={stats[c]}" for c in Curvature)
          + f"; certified and checked at >= 1 pair: {stats['tested']}")
    # Measured shares run at 32-43% (500 examples) and 32% (5,000); 25% leaves room for chance.
    assert certified >= 0.25 * total, stats
    assert stats[Curvature.CONVEX] > 0 and stats[Curvature.CONCAVE] > 0, stats
    assert stats["tested"] >= 0.5 * certified, stats
