"""Literal matrices in quadratic forms: PSD / NSD decided numerically, checked against numpy.

Reference: numpy.linalg.eigvalsh of the symmetric part (a quadratic form x'Px is convex iff P is
PSD, concave iff NSD; B&V 2004 §3.1.5 and §A.5, from memory). The model file is written to a
temporary directory and read by optlint (never imported).
"""

from __future__ import annotations

import numpy as np
import pytest

from optlint.engine import check_file

MATRICES = {
    "pd": [[2.0, 0.5], [0.5, 1.0]],
    "psd": [[1.0, 1.0], [1.0, 1.0]],
    "indefinite": [[1.0, 0.0], [0.0, -1.0]],
    "nsd": [[-1.0, 0.0], [0.0, 0.0]],
}
FORMS = ["cp.quad_form(x, P)", "x.T @ P @ x", "x @ P @ x"]


def _eig_kind(m):
    eig = np.linalg.eigvalsh((np.array(m) + np.array(m).T) / 2)
    return "convex" if eig.min() >= -1e-12 else "concave" if eig.max() <= 1e-12 else "neither"


@pytest.mark.parametrize("name", sorted(MATRICES))
@pytest.mark.parametrize("form", FORMS)
def test_quadratic_form_of_a_literal_matrix(tmp_path, name, form):
    kind = _eig_kind(MATRICES[name])
    path = tmp_path / "model.py"
    path.write_text(
        "import cvxpy as cp\nimport numpy as np\n\n"
        "x = cp.Variable(2)\n"
        f"P = np.array({MATRICES[name]!r})\n"
        f"lo = cp.Problem(cp.Minimize({form}))\n"
        f"hi = cp.Problem(cp.Maximize({form}))\n", encoding="utf-8")
    flagged = {f.site.line for f in check_file(str(path)).findings if f.rule == "nonconvex-objective"}
    assert (6 in flagged) == (kind != "convex")
    assert (7 in flagged) == (kind != "concave")


def test_scaled_identity_is_negative_definite(tmp_path):
    path = tmp_path / "model.py"
    path.write_text("import cvxpy as cp\nimport numpy as np\n\nx = cp.Variable(3)\n"
                    "p = cp.Problem(cp.Maximize(cp.quad_form(x, -2.0 * np.eye(3))))\n", encoding="utf-8")
    assert np.linalg.eigvalsh(-2.0 * np.eye(3)).max() < 0
    assert not [f for f in check_file(str(path)).findings if f.rule == "nonconvex-objective"]
