"""Witnesses of non-convexity in the JSON evidence, re-evaluated independently.

Each witness names a scalar function (sympy's string form), two points a, b and t; the check is the
definition of convexity (B&V 2004 §3.1.1, from memory): a convex f has
f(t·a + (1−t)·b) <= t·f(a) + (1−t)·f(b). The expression is evaluated here by ``strform`` (Python's
ast with a whitelist, numpy arithmetic), never through optlint.
"""

from __future__ import annotations

import math
from collections import Counter

import pytest

from conftest import FIXTURES
from evidence.strform import evaluate
from optlint.engine import check_file

CLAIMS = ("nonconvex-objective", "nonconvex-penalty", "weight-sign", "weight-sign-unknown",
          "nonconvex-inequality", "nonaffine-equality")


@pytest.fixture(scope="module")
def claims():
    out = []
    for path in sorted(FIXTURES.rglob("*.py")):
        for f in check_file(str(path)).findings:
            if f.rule in CLAIMS:
                out.append((str(path.relative_to(FIXTURES)), f))
    return out


def _at(w, point):
    return evaluate(w["expression"], dict(zip(w["variables"], point)))


def test_every_witness_recomputes(claims):
    checked = 0
    for where, f in claims:
        w = f.evidence.get("witness")
        if w is None:
            continue
        assert f.evidence["proof"] == "witness"
        t = w["t"]
        assert 0 < t < 1
        mid = [t * x + (1 - t) * y for x, y in zip(w["a"], w["b"])]
        fa, fb, ft = _at(w, w["a"]), _at(w, w["b"]), _at(w, mid)
        for mine, theirs in ((fa, w["f_a"]), (fb, w["f_b"]), (ft, w["f_t"])):
            assert math.isclose(mine, theirs, rel_tol=1e-6, abs_tol=1e-9), (where, f.site.line)
        chord = t * fa + (1 - t) * fb
        tol = 1e-9 * (1 + abs(fa) + abs(fb))
        if w["kind"] == "function":
            assert ft > chord + tol, (where, f.site.line)
        elif w["kind"] == "set":
            assert fa <= 0 and fb <= 0 and ft > 0, (where, f.site.line)
        else:
            assert w["kind"] == "not-affine" and abs(ft - chord) > tol, (where, f.site.line)
        checked += 1
    assert checked >= 30


def test_witness_share(claims):
    """Every non-convex objective and penalty finding of the fixtures carries a witness (each is
    re-evaluated by test_every_witness_recomputes); the share over every claim rule is printed."""
    total, found = Counter(), Counter()
    missing = []
    for where, f in claims:
        total[f.rule] += 1
        found[f.rule] += "witness" in f.evidence
        if "witness" not in f.evidence:
            missing.append(f"{where}:{f.site.line} {f.rule}")
    print("\nwitness share: " + ", ".join(f"{r} {found[r]}/{total[r]}" for r in CLAIMS)
          + f"; all {sum(found.values())}/{sum(total.values())}")
    core = ("nonconvex-objective", "nonconvex-penalty")
    assert sum(total[r] for r in core) >= 25
    assert all(found[r] == total[r] for r in core), [m for m in missing if m.split()[-1] in core]
    # The other claims (weight signs, inequalities, equalities) are held to a floor, as measured.
    assert sum(found.values()) >= 0.9 * sum(total.values()), missing


def test_witness_expression_uses_only_listed_variables(claims):
    for where, f in claims:
        w = f.evidence.get("witness")
        if w is not None:
            assert set(w["variable_map"]) == set(w["variables"])
            assert len(w["a"]) == len(w["b"]) == len(w["variables"])
