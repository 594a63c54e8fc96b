"""Each non-convex penalty family: optlint recognises it by structure, and an independent numpy
midpoint search confirms that the family really is non-convex (so the rule cannot be crying wolf).

Sources of non-convexity (section numbers from memory):
- capped losses and minima of convex functions: the pointwise *maximum* of convex functions is convex
  (Boyd & Vandenberghe 2004, §3.2.3); the minimum is not in general — min(r², c) has a flat top;
- log(1 + r²), 1 − exp(−r²/c), r²/(c + r²): bounded (redescending) robust losses; a convex function
  bounded above on the real line is constant (B&V 2004, §3.1 exercises; fact of the trade), so these
  non-constant bounded losses cannot be convex — log(1 + r²) is only unbounded-slowly but has
  f'' < 0 for |r| > 1;
- |r|^p with 0 < p < 1: B&V 2004 §3.1.5 lists |x|^p as convex for p ≥ 1 only; for p < 1 it is concave
  on each half-line;
- count of nonzeros: takes values 0 and 1 on a segment with an interior 1 (fact of the trade).
"""

from __future__ import annotations

import textwrap

import numpy as np
import pytest

from optlint.engine import check_file

FAMILIES = {
    "capped": (lambda r: np.minimum(r ** 2, 4.0), "cp.sum(cp.minimum(cp.square(r), 4.0))"),
    "capped-abs": (lambda r: np.minimum(np.abs(r), 1.5), "cp.sum(cp.minimum(cp.abs(r), 1.5))"),
    "min-of-convex": (lambda r: np.minimum((r - 1) ** 2, (r + 1) ** 2),
                      "cp.minimum(cp.norm(x - a), cp.norm(x + a))"),
    "log-one-plus": (lambda r: np.log1p(r ** 2), "cp.sum(cp.log1p(cp.square(r)))"),
    "one-minus-exp": (lambda r: 1 - np.exp(-r ** 2 / 2.0), "cp.sum(1 - cp.exp(-cp.square(r) / 2.0))"),
    "ratio": (lambda r: r ** 2 / (1.0 + r ** 2), "cp.sum(cp.square(r) / (1.0 + cp.square(r)))"),
    "p-below-one": (lambda r: np.abs(r) ** 0.5, "cp.sum(cp.power(cp.abs(r), 0.5))"),
    "p-norm-below-one": (lambda r: np.abs(r) ** 0.5, "cp.pnorm(r, 0.5)"),
}

EXPECTED_NAME = {
    "capped": "capped", "capped-abs": "capped", "min-of-convex": "minimum of convex",
    "log-one-plus": "log(1 + g)", "one-minus-exp": "exp(−r²/c)", "ratio": "r²/(c + r²)",
    "p-below-one": "0 < p < 1", "p-norm-below-one": "0 < p < 1",
}


def midpoint_violation(f, rng, trials=4000, low=-6.0, high=6.0):
    """Search a, b, t with f(ta + (1-t)b) > t f(a) + (1-t) f(b): the convexity inequality broken."""
    a = rng.uniform(low, high, trials)
    b = rng.uniform(low, high, trials)
    t = rng.uniform(0.05, 0.95, trials)
    gap = f(t * a + (1 - t) * b) - (t * f(a) + (1 - t) * f(b))
    i = int(np.argmax(gap))
    return gap[i] > 1e-6, (a[i], b[i], t[i], gap[i])


@pytest.mark.parametrize("family", sorted(FAMILIES))
def test_family_is_really_nonconvex(family):
    found, witness = midpoint_violation(FAMILIES[family][0], np.random.default_rng(7))
    assert found, f"{family}: no violation of the convexity inequality found: {witness}"


def test_l0_is_nonconvex():
    nnz = lambda v: float(np.count_nonzero(v))  # noqa: E731
    a, b, t = np.array([0.0]), np.array([2.0]), 0.5
    assert nnz(t * a + (1 - t) * b) > t * nnz(a) + (1 - t) * nnz(b)


@pytest.mark.parametrize("family", sorted(FAMILIES))
def test_family_is_recognised(tmp_path, family):
    path = tmp_path / "fit.py"
    path.write_text(textwrap.dedent(f"""
        import cvxpy as cp
        import numpy as np
        a = np.array([1.0, -2.0, 0.5])
        x = cp.Variable(3)
        r = x - a
        prob = cp.Problem(cp.Minimize({FAMILIES[family][1]}), [cp.sum(x) == 1])
    """))
    findings = check_file(str(path)).findings
    assert [(f.site.line, f.rule) for f in findings] == [(7, "nonconvex-penalty")]
    assert EXPECTED_NAME[family] in findings[0].evidence["family"]


def test_mirror_in_a_maximised_objective(tmp_path):
    path = tmp_path / "fit.py"
    path.write_text("import cvxpy as cp\nx = cp.Variable(3)\n"
                    "prob = cp.Problem(cp.Maximize(cp.sum(x) - cp.sum(cp.minimum(cp.square(x), 1.0))))\n")
    assert [f.rule for f in check_file(str(path)).findings] == ["nonconvex-penalty"]


@pytest.mark.parametrize("objective", [
    "cp.sum(cp.huber(r, 2.0))",                       # the convex robust loss
    "cp.norm(r, 1)",                                  # L1 instead of p < 1
    "cp.sum(cp.maximum(cp.square(r), 1.0))",          # maximum of convex: convex (B&V 2004 §3.2.3)
    "-cp.sum(cp.log(x + 2))",                         # log-barrier
])
def test_convex_look_alikes_are_silent(tmp_path, objective):
    path = tmp_path / "fit.py"
    path.write_text(textwrap.dedent(f"""
        import cvxpy as cp
        import numpy as np
        a = np.array([1.0, -2.0, 0.5])
        x = cp.Variable(3)
        r = x - a
        prob = cp.Problem(cp.Minimize({objective}))
    """))
    assert check_file(str(path)).findings == []
