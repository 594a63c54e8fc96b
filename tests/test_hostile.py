"""Hostile inputs that must neither hang nor lose the rest of the file (the rest: tests/robust/).

A data table pasted into a model file is parsed by libcst token by token (minutes for a 1,000 x
1,000 matrix); optlint elides such numeric literals before parsing, keeping every other line and
column in place, and judges the model with the table as data of unknown value.
"""

from __future__ import annotations

import time

import pytest

from optlint.elide import PLACEHOLDER, elide_large_literals
from optlint.engine import check_file


def _matrix(n: int) -> str:
    return "[" + ",\n".join("[" + ", ".join(str((i * j) % 7 - 3) for j in range(n)) + "]" for i in range(n)) + "]"


def test_elision_keeps_lines_and_columns():
    text = "import numpy as np\nP = np.array(" + _matrix(120) + ")\nx = 1  # after\n"
    out, n = elide_large_literals(text * 1)
    assert n == 0                                     # small files are left alone
    big = "import numpy as np\nP = np.array(" + _matrix(160) + ")\ny = P  # after\n" + "# pad\n" * 30000
    out, n = elide_large_literals(big)
    assert n == 1 and PLACEHOLDER in out
    assert out.count("\n") == big.count("\n")
    a, b = big.splitlines(), out.splitlines()
    assert a[-30001] == b[-30001] == "y = P  # after"
    assert all(len(x) == len(y) for x, y in zip(a, b))


def test_a_thousand_by_thousand_literal_matrix_is_checked_quickly(tmp_path):
    path = tmp_path / "bigmat.py"
    path.write_text("import numpy as np\nimport cvxpy as cp\nP = np.array(" + _matrix(1000) + ")\n"
                    "x = cp.Variable(1000)\nprob = cp.Problem(cp.Minimize(cp.quad_form(x, P)), [x >= 0, x > 1])\n")
    start = time.perf_counter()
    findings = check_file(str(path)).findings
    assert time.perf_counter() - start < 90
    lines = path.read_text().count("\n")
    assert sorted((f.site.line, f.rule) for f in findings) == [(lines, "nonconvex-objective"),
                                                               (lines, "strict-inequality")]


OVERFLOWING = '''\
"""Ballast trim with gains pasted in at the edge of double precision (a units mix-up)."""
import cvxpy as cp
import numpy as np

x = cp.Variable(3)
A = np.array([[1e308, 2e308, 1.0], [1e300, -1e308, 3.0], [0.0, 1.0, 1e-320]])
big = 10**10**10
cost = cp.sum_squares(A @ x) - 1e308 * cp.norm(x) + big * cp.sum(x) - cp.quad_form(x, A * 1e300)
prob = cp.Problem(cp.Minimize(cost), [x >= -1e308, cp.square(x[0]) == 1e308])
'''


def test_numbers_that_overflow_doubles_give_findings_and_no_warnings(tmp_path):
    """The witness search evaluates at points where these overflow: numpy's RuntimeWarnings must
    not reach the user's terminal (they used to, three of them)."""
    from conftest import run_cli

    (tmp_path / "trim.py").write_text(OVERFLOWING)
    proc = run_cli("check", "--no-config", "--no-cache", "--format", "json", "trim.py", cwd=tmp_path,
                   env={"PYTHONWARNINGS": "default"})
    import json

    found = sorted((f["rule"], f["line"]) for f in json.loads(proc.stdout)["findings"])
    assert proc.returncode == 1 and found == [("nonaffine-equality", 9), ("nonconvex-objective", 9)]
    assert "Warning" not in proc.stderr and "Traceback" not in proc.stderr, proc.stderr


# Exponents typed as 10**10: the witness search once built a dense polynomial of that degree
# (SILO: 7.5 GB in 60 s) and put data values into the power exactly, 2**(10**10) (CHURN: 4 GB);
# both were found by the mutation fuzzer, which ran the machine out of memory.
SILO = '''\
"""Silo fill levels with an exponent typed as 10**10 instead of 10 (a fat-finger in a sweep)."""
import cvxpy as cp

fill = cp.Variable(3, nonneg=True) ** 10**10
cons = [cp.sqrt(cp.sum(fill) + 1) <= 4]
prob = cp.Problem(cp.Minimize(cp.sum(fill)), cons)
'''

CHURN = '''\
"""Churn scores with a typo'd sharpening exponent."""
import numpy as np
from scipy.optimize import minimize


def loss(w, X, y, l2=1e-2):
    z = (X @ w) ** 10**10
    return np.maximum(np.mean(np.logaddexp(0.0, y * z)), 0) + l2 * np.dot(w, w)


def fit(X, y):
    return minimize(loss, np.zeros(X.shape[1]), args=(X, y), method="L-BFGS-B").x
'''


# and data raised to 10**10 entry by entry when the function is scalarised (ARM: over 30 s).
ARM = '''\
"""Arm effort with a wrench raised to 10**10 (a typo for a unit conversion)."""
import cvxpy as cp
import numpy as np

wrench = np.array([-1.0, 0.4, -35.0]) ** 10**10
tau = cp.Variable(3)
prob = cp.Problem(cp.Minimize(cp.sum(cp.sqrt(cp.abs(tau - wrench)))))
'''


# and a product with a constant factor raised to 10**10 in the interpreter or through a power
# function of a dialect: sympy distributes the exponent and computes 2**(10**10) exactly (GLASSHOUSE:
# minutes; found by the mutation fuzzer in a CasADi fixture).
GLASSHOUSE = '''\
"""Glasshouse lamp schedule; a unit conversion typed as ** 10**10."""
import casadi as ca

HOURS = 6
opti = ca.Opti()
lamp = opti.variable(HOURS)
heat = opti.variable(HOURS)


def glow(k):
    return 2 * lamp[k] * heat[k]


opti.minimize(ca.sum1(ca.power(3 * lamp, 10**10)) + ca.constpow(-5 * heat[0], 10**12) + 0.5 * ca.sumsqr(heat))
opti.minimize(sum(glow(k) ** 10**10 for k in range(HOURS)))
opti.subject_to(opti.bounded(0, lamp, 1.0))
'''


# A float as large as 1e308 is read exactly (a 1,024-bit integer) by the second-order proof; sympy's
# factoring of a minor with such a coefficient spends its time testing primes (DRYER: 12 s, found
# by the mutation fuzzer in a kiln fixture; about 1 s now, hence its own 5 s bound).
DRYER = '''\
"""Dryer fan schedule; one weight pasted as 1e308."""
import cvxpy as cp
import numpy as np

FAN_WEIGHTS = np.array([0.4, 0.35, 1e308])
fan = cp.Variable(3)
spread = cp.sum(cp.multiply(fan, fan))
prob = cp.Problem(cp.Minimize(spread / FAN_WEIGHTS @ fan), [fan >= 0])
'''


# A data power whose exponent is data times 10**10: the witness search put trial values into it
# (3**(4*10**10) exactly) and hung (TRAM; found by the mutation fuzzer in a regression fixture).
TRAM = '''\
"""Tram ridership fit; a damping factor typed with an exponent of 10**10."""
import cvxpy as cp


def fit(shift, boardings, decay):
    beta = cp.Variable(3)
    damp = (decay + 2) ** (10**10 * shift)
    shortfall = cp.sum(0.5 ** cp.neg(boardings - damp * beta))
    return cp.Problem(cp.Minimize(shortfall), [beta >= 0]).solve()
'''


# Not huge numbers but large expressions, both found by the mutation fuzzer: the witness search
# expanded (an 18-term sum)**6 into 134,596 terms to look for an affine root (MIRROR: minutes),
# and sympy's Piecewise folded the guard ``x > 0`` of inv_pos over a sum of 48 Huber pieces
# (TUNNEL: over three minutes).
MIRROR = '''\
"""Mirror segment alignment; a saturating loss on the mean tilt residual."""
import cvxpy as cp

SEGMENTS = 18
tilt = cp.Variable(SEGMENTS)
mean_residual = cp.sum(0.04 * tilt) - 0.52
loss = cp.log(1 + cp.power(mean_residual, 6))
prob = cp.Problem(cp.Minimize(loss + 1e-3 * cp.sum_squares(tilt)))
'''

TUNNEL = '''\
"""Tunnel humidity tracking; the cost was wrapped in inv_pos by mistake."""
import cvxpy as cp

HOURS = 48


def plan(scale):
    rh = cp.Variable(HOURS)
    mist = cp.Variable(12)
    cost = cp.sum(cp.huber(rh - 92, 1.0)) + cp.sum_squares(rh - 90) / scale**2
    return cp.Problem(cp.Minimize(cp.inv_pos(cost + 0.2 * cp.sum(mist))), [mist >= 0]).solve()
'''


@pytest.mark.parametrize("name, text, expected", [
    ("arm.py", ARM, [("nonconvex-penalty", 7)]),
    ("glasshouse.py", GLASSHOUSE, [("nonconvex-objective", 15)]),   # the first objective is convex
    ("dryer.py", DRYER, [("nonconvex-objective", 8)]),
    ("tram.py", TRAM, [("nonconvex-objective", 9)]),
    ("mirror.py", MIRROR, [("nonconvex-penalty", 8)]),
    ("tunnel.py", TUNNEL, [("nonconvex-objective", 11)]),
    ("silo.py", SILO, [("nonconvex-inequality", 5)]),
    ("churn.py", CHURN, [("nonconvex-objective", 12)]),
])
def test_huge_numbers_and_large_expressions_are_judged_without_exhausting_time_or_memory(tmp_path, name, text, expected):
    path = tmp_path / name
    path.write_text(text)
    start = time.perf_counter()
    findings = check_file(str(path)).findings
    assert time.perf_counter() - start < (5 if name == "dryer.py" else 30)  # minutes and gigabytes before; about 1 s now
    assert sorted((f.rule, f.site.line) for f in findings) == expected


# Found by the forced sweep of the standard library (re/_parser.py, zipimport.py: octal literals
# in guards; test_copy.py and eight more: lists that hold themselves); each was an internal-error.
OCTAL_GUARD = '''\
"""Kiln firing schedule: the guard writes zero in octal, as the controller's docs do."""
import cvxpy as cp

PERMISSIONS = 0o644


def schedule(weight):
    if weight < 0o0:
        raise ValueError("weight must be nonnegative")
    heat = cp.Variable(4)
    return cp.Problem(cp.Minimize(weight * cp.sum_squares(heat)), [heat >= 0o00])
'''

SELF_HOLDING_LIST = '''\
"""Audit trail that holds itself (a bookkeeping slip), next to a small transport model."""
import cvxpy as cp

trail = []
trail.append(trail)
ship = cp.Variable(3, nonneg=True)
cost = cp.sum(ship) + trail[0]
prob = cp.Problem(cp.Minimize(cost), [cp.sum(ship) >= 5, ship <= trail])
'''


# Found by the mutation fuzzer: max() of a number sympy cannot order (an atom of constants).
INCOMPARABLE_MAX = '''\
"""Market stall pricing: demand written with a matrix product of two plain numbers."""
import numpy as np
from scipy.optimize import minimize


def revenue(p, base=60.0, slope=6.5):
    demand = max(base - np.matmul(slope, 4.0), 0.0)
    return -(p[0] * demand)


best = minimize(revenue, np.array([1.0]))
'''


@pytest.mark.parametrize("name, text, expected", [
    ("stall.py", INCOMPARABLE_MAX, []),
    ("kiln.py", OCTAL_GUARD, []),  # `weight < 0o0` raising guards the weight's sign
    ("audit.py", SELF_HOLDING_LIST, [("unknown-curvature", 8)]),
])
def test_odd_values_are_read_not_crashed_on(tmp_path, name, text, expected):
    path = tmp_path / name
    path.write_text(text)
    assert sorted((f.rule, f.site.line) for f in check_file(str(path)).findings) == expected


def test_maximum_keeps_what_sympy_cannot_order_and_refuses_what_is_no_number():
    """optlint.lift.maximum: unevaluated where sympy refuses to order a constant, and a TypeError
    (the recognisers' sign for "unknown call") for an argument that is no number at all: a None
    kept inside a Max broke every later step (a fuzzed CasADi model, `fmax` of an unknown value)."""
    import sympy

    from optlint.calculus import functions as F
    from optlint.lift import maximum, minimum

    odd = sympy.Float(60.0) - F.matmul(sympy.Float(6.5), sympy.Float(4.0))
    m = maximum(odd, 0.0)
    assert isinstance(m, sympy.Max) and set(m.args) == {odd, sympy.Float(0.0)}
    assert isinstance(minimum(odd, 1), sympy.Min)
    assert maximum(sympy.Integer(2), 3) == 3  # ordinary values are evaluated as before
    with pytest.raises(TypeError):
        maximum(odd, None)
