"""Proofs beyond the composition rules: the second-order condition and normal forms.

Each case is an expression the rules cannot decide (asserted: their verdict is not the wanted
curvature) and that the escalation proves. The reason is cited beside each case (B&V 2004, from
memory), and each is checked independently with numpy: a hand-written numpy version of the same
function is sampled at random points of its domain and must satisfy the convexity inequality
f(t·a + (1−t)·b) <= t·f(a) + (1−t)·f(b) (B&V 2004 §3.1.1, from memory).
Through check_file: a scipy-style file (no discipline: no finding at all) and the DSL (the
finding becomes undisciplined-convex).
"""

from __future__ import annotations

import textwrap

import numpy as np
import pytest
import sympy as sp

from optlint.analysis import ModelAnalysis
from optlint.calculus import Curvature, Facts, analyse
from optlint.engine import check_file
from optlint.evidence.second_order import prove_convex
from optlint.ir import Declaration, Model

X, Y, Z = sp.Dummy("x", real=True), sp.Dummy("y", real=True), sp.Dummy("z", real=True)
P, Q = sp.Dummy("p", positive=True), sp.Dummy("q", positive=True)
N = sp.Dummy("n", nonnegative=True)
D = sp.Symbol("gamma", real=True)  # data of unknown value


def _model(dialect="scipy"):
    m = Model(path="case.py", dialect=dialect)
    for s in (X, Y, Z, P, Q, N):
        m.declarations[s] = Declaration(name=s.name, role="variable", symbol=s, site=None, shape=())
    return m


MODEL = _model()
FACTS = Facts(variables=MODEL.variables)

# (expression, variables, numpy reference taking an array of points (k, n), reason)
CASES = [
    (X * (X + 1), [X], lambda v: v[:, 0] * (v[:, 0] + 1),
     "expands to x^2 + x: constant Hessian 2 > 0 (B&V 2004 §3.1.4)"),
    (X**2 - 2 * X * Y + Y**2, [X, Y], lambda v: (v[:, 0] - v[:, 1]) ** 2,
     "(x - y)^2 expanded: Hessian [[2,-2],[-2,2]] PSD, eigenvalues 0 and 4 (B&V 2004 §3.1.4)"),
    (X**2 + X * Y + Y**2, [X, Y], lambda v: v[:, 0] ** 2 + v[:, 0] * v[:, 1] + v[:, 1] ** 2,
     "Hessian [[2,1],[1,2]], eigenvalues 1 and 3 (B&V 2004 §3.1.4)"),
    (2 * X**2 + 2 * X * Y + Y**2 + 2 * Z**2 - 2 * Y * Z, [X, Y, Z],
     lambda v: (v[:, 0] + v[:, 1] - v[:, 2]) ** 2 + v[:, 0] ** 2 + v[:, 2] ** 2,
     "singular PSD Hessian (determinant 0), decided exactly (B&V 2004 §3.1.4)"),
    (sp.sqrt(X**2 + 1), [X], lambda v: np.sqrt(v[:, 0] ** 2 + 1),
     "f'' = (x^2+1)^(-3/2) > 0 (B&V 2004 §3.1.4)"),
    (X**2 * (X**2 + 1), [X], lambda v: v[:, 0] ** 4 + v[:, 0] ** 2,
     "x^4 + x^2 as a product: f'' = 12x^2 + 2 > 0 (B&V 2004 §3.1.4)"),
    (sp.exp(X) * (1 + sp.exp(-2 * X)), [X], lambda v: np.exp(v[:, 0]) + np.exp(-v[:, 0]),
     "exp(x) + exp(-x) as a product: f'' = f > 0 (B&V 2004 §3.1.5, exponential)"),
    (sp.log(sp.exp(X) + sp.exp(Y)), [X, Y], lambda v: np.logaddexp(v[:, 0], v[:, 1]),
     "log-sum-exp written with exp/log (B&V 2004 §3.1.5)"),
    (sp.log(1 + sp.exp(X)), [X], lambda v: np.logaddexp(0, v[:, 0]),
     "log(1 + e^x): f'' = e^x/(1+e^x)^2 > 0 (B&V 2004 §3.1.5, log-sum-exp with a constant)"),
    (X**2 / P, [X, P], lambda v: v[:, 0] ** 2 / v[:, 1],
     "quadratic-over-linear with y > 0 (B&V 2004 §3.1.5)"),
    ((X**2 + 1) / P, [X, P], lambda v: (v[:, 0] ** 2 + 1) / v[:, 1],
     "quadratic-over-linear of (x, 1) (B&V 2004 §3.1.5)"),
    (sp.sqrt(X**2 + Y**2 + 1), [X, Y], lambda v: np.sqrt(v[:, 0] ** 2 + v[:, 1] ** 2 + 1),
     "the 2-norm of (x, y, 1), smooth since never 0 (B&V 2004 §3.1.4, §3.1.5)"),
    (1 / (P * Q), [P, Q], lambda v: 1 / (v[:, 0] * v[:, 1]),
     "Hessian minors 2/(x^3 y), 3/(x^4 y^4) > 0 on the positive orthant (B&V 2004 §3.1.4)"),
    (P * sp.log(P), [P], lambda v: v[:, 0] * np.log(v[:, 0]),
     "negative entropy, f'' = 1/x (B&V 2004 §3.1.5)"),
    (-sp.sqrt(P * Q), [P, Q], lambda v: -np.sqrt(v[:, 0] * v[:, 1]),
     "geometric mean is concave on the positive orthant (B&V 2004 §3.1.5)"),
    (sp.exp(X) / P, [X, P], lambda v: np.exp(v[:, 0]) / v[:, 1],
     "Hessian minors e^x/y, e^(2x)/y^4 > 0 (B&V 2004 §3.1.4)"),
    (-sp.log(P * Q), [P, Q], lambda v: -np.log(v[:, 0] * v[:, 1]),
     "minus log of a product = -log x - log y (B&V 2004 §3.1.5, logarithm)"),
    ((P**2 + 1) / P, [P], lambda v: v[:, 0] + 1 / v[:, 0],
     "x + 1/x on x > 0: f'' = 2/x^3 > 0 (B&V 2004 §3.1.4)"),
    (N**2 * (N + 1), [N], lambda v: v[:, 0] ** 3 + v[:, 0] ** 2,
     "x^3 + x^2 on x >= 0: f'' = 6x + 2 > 0, closed orthant (B&V 2004 §3.1.4)"),
]


def _sample(variables, rng, k=400):
    cols = []
    for s in variables:
        if s.is_positive:
            cols.append(rng.uniform(0.05, 5.0, k))
        elif s.is_nonnegative:
            cols.append(rng.uniform(0.0, 5.0, k))
        else:
            cols.append(rng.uniform(-5.0, 5.0, k))
    return np.column_stack(cols)


@pytest.mark.parametrize("expr, variables, reference, reason", CASES, ids=[c[3][:40] for c in CASES])
def test_proved_beyond_the_rules(expr, variables, reference, reason):
    assert not analyse(expr, FACTS).curvature.is_convex, "the rules decide this one: not a test of escalation"
    proof = prove_convex(expr, MODEL, FACTS)
    assert proof is not None, reason
    assert proof["method"] == "second-order"
    # Independent check of the claim (numpy reference, not optlint): the convexity inequality.
    rng = np.random.default_rng(7)
    a, b = _sample(variables, rng), _sample(variables, rng)
    t = rng.uniform(0, 1, (len(a), 1))
    fa, fb, ft = reference(a), reference(b), reference(t * a + (1 - t) * b)
    assert np.all(ft <= t[:, 0] * fa + (1 - t[:, 0]) * fb + 1e-9 * (1 + abs(fa) + abs(fb))), reason


@pytest.mark.parametrize("expr, why", [
    (X**3, "x^3 is not convex on R (f'' = 6x < 0 for x < 0)"),
    (X * Y, "xy: Hessian [[0,1],[1,0]] has eigenvalue -1"),
    (X**2 - Y**2, "saddle: eigenvalue -2"),
    (2 * X**2 + 2 * X * Y + Y**2 + Z**2 - 2 * Y * Z, "Hessian determinant -8"),
    (1 / X, "1/x on R: the domain is not convex"),
    (sp.log(X) * -1, "-log x with x of any sign: the domain is not all of R"),
    (sp.sqrt(X**2 + Y**2), "a norm is not differentiable at 0: the second-order test does not apply"),
    (D * X**2, "data of unknown sign"),
    (sp.Abs(X) * X, "Abs is not twice differentiable"),
    (sp.exp(X) * sp.sin(X), "not an elementary function the test accepts"),
])
def test_no_proof_when_not_certain(expr, why):
    assert prove_convex(expr, MODEL, FACTS) is None, why


def test_float_coefficients_are_exact():
    # 0.1 and 0.3 are not exact in binary; the proof reads the doubles exactly, so a Hessian that
    # is only barely indefinite in exact arithmetic is never rounded into a proof.
    assert prove_convex(0.1 * X**2 + 0.2 * X * Y + 0.1 * Y**2, MODEL, FACTS) is not None  # (0.1)(x+y)^2·...
    assert prove_convex(X**2 + 2.0000001 * X * Y + Y**2, MODEL, FACTS) is None  # eigenvalue -1e-7


SCIPY = """
import numpy as np
from scipy.optimize import minimize


def spread(z):
    return z[0] * (z[0] + 1.0) + z[1] ** 2 - 2 * z[0] * z[1]


def softmax_cost(z):
    return np.log(np.exp(z[0]) + np.exp(z[1]))


def ratio(z):
    return z[0] ** 2 / z[1]


def entropy_like(z):
    return z[0] * np.log(z[0])


def smooth_abs(z):
    return np.sqrt(z[0] ** 2 + 1.0)


def coupled(z):
    return z[0] ** 2 + z[0] * z[1] + z[1] ** 2


r1 = minimize(spread, np.zeros(2))
r2 = minimize(softmax_cost, np.zeros(2))
r3 = minimize(ratio, np.ones(2), bounds=[(0.1, 10.0), (0.1, 10.0)])
r4 = minimize(entropy_like, np.ones(1), bounds=[(0.01, None)])
r5 = minimize(smooth_abs, np.zeros(1))
r6 = minimize(coupled, np.zeros(2))
r7 = minimize(lambda z: z[0] * z[1], np.zeros(2))
"""


def test_scipy_file_proved_expressions_have_no_finding(tmp_path):
    path = tmp_path / "proved.py"
    path.write_text(textwrap.dedent(SCIPY))
    findings = check_file(str(path)).findings
    # Only the genuinely non-convex product z0*z1 (r7) is reported.
    assert [(f.rule, f.site.line) for f in findings] == [("nonconvex-objective", 36)]


def test_escalation_proves_the_wanted_curvature_only():
    expr = X * (X + 1)
    analysis = ModelAnalysis(_model())
    assert analysis.escalate(expr, Curvature.CONVEX)["method"] == "second-order"
    assert analysis.escalate(-expr, Curvature.CONCAVE)["method"] == "second-order"
    assert analysis.escalate(expr, Curvature.CONCAVE) is None


DSL = """
import cvxpy as cp

x = cp.Variable()
y = cp.Variable(pos=True)
v = cp.Variable(2)
p1 = cp.Problem(cp.Minimize(x * (x + 1)))
p2 = cp.Problem(cp.Minimize(x ** 2 / y))
p3 = cp.Problem(cp.Minimize(cp.log(cp.exp(x) + cp.exp(y))))
p4 = cp.Problem(cp.Minimize(cp.sqrt(x ** 2 + 1)))
p5 = cp.Problem(cp.Minimize(v[0] * v[0] - 2 * v[0] * v[1] + v[1] ** 2))
p6 = cp.Problem(cp.Maximize(cp.sqrt(y) * cp.sqrt(y + 1)))
p7 = cp.Problem(cp.Minimize(x * y))
"""


def test_dsl_proved_expressions_are_undisciplined_convex(tmp_path):
    path = tmp_path / "dsl_proved.py"
    path.write_text(textwrap.dedent(DSL))
    got = {f.site.line: f for f in check_file(str(path)).findings}
    for line in (7, 8, 9, 10, 11, 12):
        assert got[line].rule == "undisciplined-convex", (line, got[line].message)
        assert got[line].evidence["proof"] in ("second-order", "normal-form")
    assert got[13].rule == "nonconvex-objective"  # x*y: really not convex, keeps its witness
    assert "witness" in got[13].evidence


def test_budgets_refuse_what_sympy_cannot_afford():
    # A Float in an exponent is read exactly (0.3 = 5404319552844595 / 2^54); sympy's polynomial
    # algebra would take exp(0.3 n^2) as (exp(n^2 / 2^54))^5404319552844595 and fill memory.
    from optlint.evidence.second_order import _exponents_small, degree_bound as _degree_bound

    c = sp.Rational(sp.Float(0.3))
    assert not _exponents_small(sp.exp(c * N**2)) and not _exponents_small(N ** (c + 1))
    assert _exponents_small(sp.exp(N / 2) + N ** sp.Rational(3, 2))
    # degree over a common denominator: (x + 1)^3 (y - 1)^2 is 5; x/(y + 1) + y is 3 once together
    assert _degree_bound((X + 1) ** 3 * (Y - 1) ** 2) == 5
    assert _degree_bound(X / (Y + 1) + Y) >= 3
    # such expressions get no proof (sound), and promptly: the 5,000-example property run spent
    # most of an hour and 7.7 GB in them before these budgets
    assert prove_convex(sp.Float(1.35) * sp.exp(N) + sp.exp(sp.Float(0.5477) * N**2), MODEL, FACTS) is None
