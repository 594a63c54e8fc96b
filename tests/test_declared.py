"""Declared atoms and sign assumptions from [tool.optlint] reach the analysis (not only the parser).

A project vouches for its own helpers' curvature ([tool.optlint.atoms]) and for the sign of its
weights ([tool.optlint.assume]); with those declarations the model below is analysed: the helper's
unknown-curvature note disappears, a misuse of the declared convex helper is found, and the weight
of unknown sign is accepted. The curvature reasoning is the composition rules (B&V 2004 §3.2.4).
"""

from __future__ import annotations

import json
import textwrap

from conftest import run_cli

PYPROJECT = textwrap.dedent("""
    [tool.optlint.atoms."thermal_models.comfort_penalty"]
    curvature = "convex"
    sign = "nonnegative"
    monotonicity = ["nonmonotone", "nonmonotone"]

    [tool.optlint.assume]
    nonnegative = ["lam_*"]
""")
MODEL = textwrap.dedent("""\
    import cvxpy as cp
    from thermal_models import comfort_penalty

    def plan(lam_smooth, beta):
        t = cp.Variable(5)
        cost = comfort_penalty(t, 20.5) + lam_smooth * cp.sum_squares(cp.diff(t))
        fine = cp.Problem(cp.Minimize(cost))
        wrong = cp.Problem(cp.Maximize(comfort_penalty(t, 3)))
        unsure = cp.Problem(cp.Minimize(cp.sum_squares(t) + beta * cp.norm(t)))
        return fine, wrong, unsure
""")


def _rules(tmp_path, with_config: bool):
    (tmp_path / "model.py").write_text(MODEL)
    if with_config:
        (tmp_path / "pyproject.toml").write_text(PYPROJECT)
    proc = run_cli("check", "--format", "json", "--no-cache", "model.py", cwd=tmp_path)
    return sorted((f["line"], f["rule"]) for f in json.loads(proc.stdout)["findings"])


def test_without_declarations_the_helper_is_unknown(tmp_path):
    assert _rules(tmp_path, False) == [(7, "unknown-curvature"), (8, "unknown-curvature"),
                                       (9, "weight-sign-unknown")]


def test_declared_atom_and_assumption_are_used(tmp_path):
    assert _rules(tmp_path, True) == [(8, "nonconvex-objective"), (9, "weight-sign-unknown")]
