"""multiplier-sign: the sign conventions it enforces, checked against numbers, not against itself.

The rule's claims (Nocedal & Wright, Numerical Optimization, 2nd ed., 2006, §12.3: a multiplier of
an inequality is nonnegative at a KKT point; Boyd & Vandenberghe 2004, §5.1 and §5.5.3: the dual
function is maximised, so dual steps ascend — both from memory) are checked here by running the
update formulas themselves in numpy on a one-variable problem with a known KKT point:

    minimise (x - 2)^2  subject to  g(x) = x - 1 <= 0    ->   x* = 1, lambda* = 2
    (stationarity 2 (x - 2) + lambda = 0 at x = 1; B&V §5.5.3 from memory)

and then the same formulas, written as model code, are handed to optlint: it must flag exactly the
ones the numbers show to be wrong. Fixtures in fixtures/multipliers/ cover the dialects.
"""

from __future__ import annotations

import textwrap

import numpy as np
import pytest

from optlint.engine import check_file
from optlint.prefilter import dialects_in


def _primal(lam: float, bound: float) -> float:
    """argmin_x (x - 2)^2 + lam * (x - bound)  (closed form)."""
    return 2.0 - lam / 2.0


def _iterate(update, bound=1.0, rounds=400, step=0.2):
    lam = 0.0
    for _ in range(rounds):
        x = _primal(lam, bound)
        lam = update(lam, step, x - bound)
    return _primal(lam, bound), lam


UPDATES = {
    # name: (numpy formula, the same formula as code, should optlint flag it?)
    "projected ascent": (lambda lam, s, g: max(0.0, lam + s * g), "lam = max(0.0, lam + step * (x - bound))", False),
    "unprojected ascent": (lambda lam, s, g: lam + s * g, "lam = lam + step * (x - bound)", True),
    "descent": (lambda lam, s, g: lam - s * g, "lam = lam - step * (x - bound)", True),
    "projected descent": (lambda lam, s, g: max(0.0, lam - s * g), "lam = max(0.0, lam - step * (x - bound))", True),
}


def test_the_numbers_behind_the_rule():
    # Active constraint: projected ascent finds the KKT pair (x*, lambda*) = (1, 2).
    x, lam = _iterate(UPDATES["projected ascent"][0])
    assert abs(x - 1.0) < 1e-6 and abs(lam - 2.0) < 1e-6
    # Descent moves away from lambda* = 2 and never reaches feasibility.
    x, lam = _iterate(UPDATES["descent"][0], rounds=60)
    assert abs(lam - 2.0) > 1e2
    # Projected descent sticks at lambda = 0 and leaves the constraint violated (x = 2 > 1).
    x, lam = _iterate(UPDATES["projected descent"][0])
    assert lam == 0.0 and x - 1.0 > 0.5
    # Slack constraint x - 3 <= 0 (lambda* = 0): without the projection the multiplier goes
    # negative, i.e. dual infeasible (N&W §12.3), and the primal is pushed past the unconstrained 2.
    x, lam = _iterate(UPDATES["unprojected ascent"][0], bound=3.0)
    assert lam < -1.0 and x > 2.0
    x, lam = _iterate(UPDATES["projected ascent"][0], bound=3.0)
    assert lam == 0.0 and abs(x - 2.0) < 1e-9


def test_joint_descent_on_the_lagrangian_diverges():
    """Gradient descent on L(x, lam) = (x - 2)^2 + lam (x - 1) over (x, lam) together: L is linear in
    lam, the KKT point is a saddle (Hessian [[2, 1], [1, 0]] has a negative eigenvalue, numpy's
    eigvalsh), and the iteration runs away from it."""
    assert np.linalg.eigvalsh(np.array([[2.0, 1.0], [1.0, 0.0]])).min() < 0
    z = np.array([1.5, 1.0])
    for _ in range(300):
        x, lam = z
        z = z - 0.1 * np.array([2 * (x - 2) + lam, x - 1])
    assert np.linalg.norm(z - np.array([1.0, 2.0])) > 1e3


TEMPLATE = '''
import numpy as np


def lagrangian(x, lam, bound):
    return (x - 2.0) ** 2 + lam * (x - bound)


def solve(bound, step=0.2, rounds=400):
    lam = 0.0
    x = 0.0
    for _ in range(rounds):
        x = 2.0 - lam / 2.0
        {update}
    assert x - bound <= 1e-6
    return x, lam
'''


@pytest.mark.parametrize("name", sorted(UPDATES))
def test_optlint_flags_what_the_numbers_show(tmp_path, name):
    _, code, flagged = UPDATES[name]
    path = tmp_path / "dual_loop.py"
    path.write_text(TEMPLATE.format(update=code))
    found = [f for f in check_file(str(path)).findings if f.rule == "multiplier-sign"]
    assert bool(found) == flagged, [f.message for f in found]
    if flagged:
        assert found[0].site.line == 14 and found[0].evidence["multiplier"] == "lam"
        assert found[0].evidence["constraint"] == "(x - bound) <= 0"


def _findings(tmp_path, source: str, rule="multiplier-sign"):
    path = tmp_path / "model.py"
    path.write_text(textwrap.dedent(source))
    return [f for f in check_file(str(path)).findings if f.rule == rule]


def test_nocedal_wright_convention(tmp_path):
    """L = f - lam * c with c(x) >= 0 (N&W §12.3): ascent is lam - step * c, kept >= 0."""
    good = """
    import numpy as np
    def run(c, step, x):
        lam = 0.0
        for _ in range(100):
            x = x - 0.1 * np.sum(x) + lam
            value = np.sum(x ** 2) - lam * c(x)
            lam = max(0.0, lam - step * c(x))
        assert np.all(c(x) >= -1e-8)
    """
    assert _findings(tmp_path, good) == []
    bad = good.replace("lam - step * c(x)", "lam + step * c(x)")
    found = _findings(tmp_path, bad)
    assert len(found) == 1 and "downhill" in found[0].message


def test_equality_multipliers_are_free(tmp_path):
    """ADMM's scaled dual update u <- u + (w - z) is unprojected by design (an equality w == z)."""
    source = """
    import numpy as np
    def admm(rho, rounds, w, z):
        u = np.zeros(3)
        for _ in range(rounds):
            cost = np.sum(w ** 2) + rho * u @ (w - z)
            u = u + (w - z)
        assert np.allclose(w - z, 0)
        return u
    """
    assert _findings(tmp_path, source) == []


def test_no_evidence_of_an_inequality_judges_only_the_direction(tmp_path):
    source = """
    import numpy as np
    def loop(g, x, eta):
        mu = np.zeros(2)
        for _ in range(10):
            total = np.sum(x ** 2) + mu @ g(x)
            mu = mu + eta * g(x)
        return mu
    """
    assert _findings(tmp_path, source) == []
    found = _findings(tmp_path, source.replace("mu + eta", "mu - eta"))
    assert len(found) == 1 and found[0].evidence["in_loop"] is True


def test_a_name_alone_is_not_a_multiplier(tmp_path):
    """`lam` as a regularisation weight (never updated by a residual) is not a multiplier."""
    source = """
    import numpy as np
    def ridge_path(X, y, lams):
        out = []
        for lam in lams:
            w = np.linalg.solve(X.T @ X + lam * np.eye(X.shape[1]), X.T @ y)
            loss = np.sum((X @ w - y) ** 2) + lam * w @ w
            out.append(loss)
            lam = lam * 0.5
        return out
    """
    assert _findings(tmp_path, source) == []


def test_prefilter_passes_update_shaped_array_code_only():
    assert "lagrangian" in dialects_in(b"import numpy as np\nlam = lam + eta * g(x)\n")
    assert "lagrangian" in dialects_in(b"import torch\nlam += rho * r\n")
    assert "lagrangian" not in dialects_in(b"import numpy as np\ntotal = np.sum(a) + 1\n")
    assert "lagrangian" not in dialects_in(b"lam = lam + eta * g(x)\n")  # no array library imported
    assert "lagrangian" not in dialects_in(b"import numpy as np\n" + b"x = x * 2 " * 1_000_000)  # one huge line


FIXTURES = __import__("pathlib").Path(__file__).resolve().parents[1] / "fixtures"
CLEAN_UPDATES = [  # (fixture, the clean update as written, the same with its step's sign flipped)
    ("multipliers/cold_storage_dual_prices.py", "price = np.maximum(0.0, price + step", "price = np.maximum(0.0, price - step"),
    ("multipliers/kiln_schedule_scipy.py", "mult = max(0.0, mult - step", "mult = max(0.0, mult + step"),
    ("multipliers/quay_crane_torch.py", "lam_noise += dual_lr", "lam_noise -= dual_lr"),
    ("multipliers/glasshouse_method_of_multipliers.py", "price = max(0.0, price + step", "price = max(0.0, price - step"),
    ("multipliers/feeder_dual_prices_dsl.py", "price.value = np.maximum(price.value + step", "price.value = np.maximum(price.value - step"),
    ("tour/pumps/licence_prices.py", "price = max(0.0, price + step", "price = max(0.0, price - step"),
]


@pytest.mark.parametrize("fixture, written, flipped", CLEAN_UPDATES, ids=[c[0] for c in CLEAN_UPDATES])
def test_clean_look_alikes_are_silent_for_the_right_reason(tmp_path, fixture, written, flipped):
    """A clean update is recognised (not overlooked): flipping its step's sign makes it a finding there."""
    text = (FIXTURES / fixture).read_text()
    lines = text.splitlines()
    hits = [i for i, line in enumerate(lines, 1) if written in line and "expect:" not in line]
    assert len(hits) == 1, hits
    path = tmp_path / "mutated.py"
    path.write_text(text.replace(lines[hits[0] - 1], lines[hits[0] - 1].replace(written, flipped)))
    found = [f for f in check_file(str(path)).findings if f.rule == "multiplier-sign" and f.site.line == hits[0]]
    assert len(found) == 1, [f.message for f in check_file(str(path)).findings]
