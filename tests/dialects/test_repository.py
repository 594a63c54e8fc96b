"""Repository-level behaviour of the dialects: prefilter signatures, a mixed-dialect tree checked in
one run with deterministic JSON, and the size of each dialect's fixture set."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from optlint.prefilter import scan_dialects

ROOT = Path(__file__).resolve().parents[2]
FIXTURES = ROOT / "fixtures"
MARKER = "# expect:"


@pytest.mark.parametrize("source, dialect", [
    (b"import pyomo.environ as pyo\n", "algebraic"),
    (b"from pyomo.environ import *\n", "algebraic"),
    (b"import pyomo.kernel as pmo\n", "algebraic"),
    (b"from scipy.optimize import minimize\n", "scipy"),
    (b"from scipy import optimize\n", "scipy"),
    (b"from casadi import *\n", "casadi"),
    (b"import casadi as ca\n", "casadi"),
    (b"import torch.nn as nn\n", "losses"),
    (b"def f():\n    import torch\n", "losses"),
    (b"from pulp import *\n", "pulp"),
])
def test_prefilter_signatures(source, dialect):
    assert dialect in scan_dialects("m.py", source)


@pytest.mark.parametrize("source, expected", [
    (b"import scipy\nfrom scipy import linalg\nu = linalg.solve(a, b)\n", False),   # no optimize: skipped
    (b"from scipy.stats import norm\n", False),
    (b"import scipy\nres = scipy.optimize.minimize(f, x0)\n", True),
    (b"import scipy as sp\nsp.optimize.linprog(c)\n", True),
])
def test_the_scipy_signature_needs_scipy_optimize(source, expected):
    assert ("scipy" in scan_dialects("m.py", source)) is expected


def test_prefilter_ignores_mentions_that_are_not_imports():
    assert scan_dialects("m.py", b"# we used to use pyomo and torch here\nx = 'casadi'\n") == ()


def _json_run(path: Path) -> bytes:
    env = dict(os.environ, NO_COLOR="1")
    command = [sys.executable, "-m", "optlint", "check", "--no-config", "--no-cache", "--format", "json", str(path)]
    proc = subprocess.run(command, capture_output=True, cwd=str(ROOT), env=env, timeout=300)
    assert proc.returncode in (0, 1), proc.stderr.decode()
    return proc.stdout


def test_mixed_dialect_repository_in_one_run_is_deterministic(tmp_path):
    # one directory holding every dialect (the tour plus the dialect fixture sets)
    first, second = _json_run(FIXTURES / "tour"), _json_run(FIXTURES / "tour")
    assert first == second
    found = json.loads(first)["findings"]
    keys = [(f["path"], f["line"], f["column"]) for f in found]
    assert keys == sorted(keys)
    tour_files = {Path(f["path"]).name for f in found}
    # a finding from a file of each dialect of the tour
    for name in ("coagulant_dosing.py", "night_flow_fit.py", "speed_nmpc.py", "consumption_net.py", "crew_rota.py"):
        assert name in tour_files


@pytest.mark.parametrize("dialect, minimum", [("algebraic", 10), ("scipy", 10), ("casadi", 10), ("losses", 10),
                                              ("pulp", 6)])
def test_fixture_sets_are_substantial(dialect, minimum):
    files = sorted((FIXTURES / dialect).glob("*.py"))
    texts = [p.read_text(encoding="utf-8") for p in files]
    marked = [t for t in texts if MARKER in t]
    assert len(files) >= minimum
    assert len(marked) >= minimum // 2 and len(files) - len(marked) >= minimum // 2
    assert all(40 <= len(t.splitlines()) <= 120 for t in texts), [p.name for p, t in zip(files, texts)
                                                                  if not 40 <= len(t.splitlines()) <= 120]
