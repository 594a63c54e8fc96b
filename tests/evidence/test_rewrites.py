"""undisciplined-convex: each suggested DSL rewrite equals the expression as written.

The two texts of a finding's ``evidence.rewrite`` (``expression``: the subexpression over the
model's names; ``dsl``: the suggested spelling) are evaluated here by a small evaluator of our own
(Python's ast with a whitelist of nodes and names, numpy arithmetic, never eval), with each atom
given its textbook meaning: norm(x, 2) = sqrt(sum x_i^2), log_sum_exp(x) = log(sum exp(x_i)),
quad_over_lin(x, y) = sum x_i^2 / y on y > 0, inv_pos(x) = 1/x on x > 0, square(x) = x^2,
multiply(x, y) = the entrywise product (B&V 2004 §3.1.5, from memory). Random points are drawn in
each variable's declared domain. Products and quotients the code writes with * and / (which
sympy folds, x*x into x**2) are checked in their written text against the suggested atom.
"""

from __future__ import annotations

import ast

import numpy as np
import pytest
import sympy as sp

from conftest import FIXTURES
from optlint.analysis import ModelAnalysis
from optlint.engine import check_file
from optlint.evidence import rewrite
from optlint.ir import Declaration, Model
from optlint.printer import show

_F = {
    "log": np.log, "exp": np.exp, "sqrt": np.sqrt, "sum": np.sum, "abs": np.abs,
    "sum_squares": lambda x: np.sum(np.square(x)),
    "norm": lambda x, p=2: np.sqrt(np.sum(np.square(x))) if p == 2 else None,
    "hstack": lambda xs: np.hstack([np.atleast_1d(x) for x in xs]),
    "log_sum_exp": lambda x: np.log(np.sum(np.exp(x))),
    "quad_over_lin": lambda x, y: np.sum(np.square(x)) / y if y > 0 else np.inf,
    "inv_pos": lambda x: 1 / x if np.all(x > 0) else np.inf,
    "square": np.square, "array": np.array, "multiply": np.multiply,
}
_BIN = {ast.Add: np.add, ast.Sub: np.subtract, ast.Mult: np.multiply, ast.Div: np.divide,
        ast.Pow: np.power, ast.MatMult: np.matmul}


def evaluate(text: str, env: dict):
    return _eval(ast.parse(text, mode="eval").body, env)


def _eval(node, env):
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
        return float(node.value)
    if isinstance(node, ast.Name):
        return env[node.id]
    if isinstance(node, ast.List):
        return [_eval(e, env) for e in node.elts]
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return -_eval(node.operand, env)
    if isinstance(node, ast.BinOp) and type(node.op) in _BIN:
        return _BIN[type(node.op)](_eval(node.left, env), _eval(node.right, env))
    if isinstance(node, ast.Call) and not node.keywords:
        f = node.func
        name = f.attr if isinstance(f, ast.Attribute) and isinstance(f.value, ast.Name) \
            and f.value.id in ("cp", "np") else (f.id if isinstance(f, ast.Name) else None)
        if name in _F:
            return _F[name](*[_eval(a, env) for a in node.args])
    raise ValueError(f"not in the whitelist: {ast.dump(node)[:80]}")


# Each variable's domain and size as the fixtures declare them; data get the values the fixtures
# give them (module constants, the arguments of their __main__ calls); names the code binds to an
# expression of variables (``cost = PATTERN_COST @ weight``) are computed from the draw.
DOMAINS = {
    "hover": (2, "free"), "east": (1, "free"), "weight": (3, "free"), "day": (1, "free"),
    "night": (1, "free"), "overtime": (1, "free"), "rest": (1, "pos"), "drift": (1, "free"),
    "last_fix": (2, "free"), "target_east": (1, "free"),
    "ramp": (3, "free"), "soak": (1, "pos"), "glaze": (1, "free"),  # dsl/kiln_firing_plan.py
}
DATA = {"PATTERN_COST": np.array([[3.0, 1.0, 2.0], [1.0, 4.0, 1.5]]), "overtime_target": 2.0,
        "station": np.array([0.0, 0.0]),
        "WEAR_PER_RAMP2": 0.8, "SOAK_LOSS_KWH": 3.5, "COLOUR_WEIGHT": 2.0, "target_offset": 0.2}
DERIVED = {"cost": lambda env: env["PATTERN_COST"] @ env["weight"]}
FILES = sorted((FIXTURES / "evidence").glob("*.py")) + [FIXTURES / "dsl" / "kiln_firing_plan.py"]


def _draw(rng):
    env = dict(DATA)
    for name, (size, dom) in DOMAINS.items():
        v = rng.uniform(0.05, 20.0, size) if dom == "pos" else rng.normal(0.0, 10.0, size)
        env[name] = v[0] if size == 1 else v
    for name, compute in DERIVED.items():
        env[name] = compute(env)
    return env


def _fixture_rewrites():
    out = []
    for path in FILES:
        for f in check_file(str(path)).findings:
            if f.rule != "undisciplined-convex":
                continue
            listed = [f.evidence["rewrite"]] if "rewrite" in f.evidence else []
            listed += f.evidence.get("escalation", {}).get("rewrites", [])  # products and quotients as written
            seen = set()
            for rw in listed:
                if (rw["expression"], rw["dsl"]) not in seen:
                    seen.add((rw["expression"], rw["dsl"]))
                    out.append((f"{path.name}:{f.site.line}:{rw['atom']}", rw))
    return out


REWRITES = _fixture_rewrites()


def test_every_listed_rewrite_is_exercised_by_a_fixture():
    atoms = {r["atom"] for _, r in REWRITES}
    assert {"norm", "log_sum_exp", "quad_over_lin", "square", "inv_pos"} <= atoms
    assert any("hstack" in r["dsl"] and r["atom"] == "norm" for _, r in REWRITES)  # sqrt(x^2 + c^2)
    # x * x, cp.multiply(x, x), c / x and (c·a·a) / x as the code writes them (folded by sympy)
    written = {r["expression"] for _, r in REWRITES}
    assert {"ramp * ramp", "cp.multiply(ramp, ramp)", "SOAK_LOSS_KWH / soak"} <= written
    assert any(w.endswith("/ soak") and r["atom"] == "quad_over_lin" for w, r in
               ((r["expression"], r) for _, r in REWRITES))


@pytest.mark.parametrize("where, rw", REWRITES, ids=[w for w, _ in REWRITES])
def test_fixture_rewrite_keeps_the_value(where, rw):
    rng = np.random.default_rng(11)
    for _ in range(200):
        env = _draw(rng)
        before, after = evaluate(rw["expression"], env), evaluate(rw["dsl"], env)
        assert np.allclose(before, after, rtol=1e-9, atol=1e-9), (where, env)


# The same at the level of the rewrite table, for forms no fixture needs (inv_pos: the rules
# already accept 1/x for a positive x, so it only surfaces inside a larger rejected expression).
X = sp.Dummy("x", real=True)
Y = sp.Dummy("y", positive=True)


def _analysis():
    m = Model(path="case.py", dialect="dsl")
    for s in (X, Y):
        m.declarations[s] = Declaration(name=s.name, role="variable", symbol=s, site=None, shape=())
    return ModelAnalysis(m)


@pytest.mark.parametrize("expr, atom", [
    (3 / (2 * Y + 1), "inv_pos"),
    (X**2 / Y, "quad_over_lin"),
    ((X**2 + 4) / Y, "quad_over_lin"),
    (sp.sqrt(X**2 + 9), "norm"),
    (sp.sqrt(4 * X**2 + Y**2 + 1), "norm"),
    (sp.log(sp.exp(X) + sp.exp(2 * Y) + 3), "log_sum_exp"),
    ((2 * X - 2) * (X - 1), "square"),
    ((2 * X - 2) * (X - 1) / Y, "quad_over_lin"),  # 2·(x - 1)² / y, the 2 distributed by sympy
])
def test_table_rewrite_keeps_the_value(expr, atom):
    found = rewrite.find(expr, _analysis())
    assert found is not None and found.atom == atom
    rng = np.random.default_rng(5)
    for _ in range(200):
        env = {"x": rng.normal(0, 5), "y": rng.uniform(0.05, 10)}
        assert np.isclose(evaluate(show(found.node, 400), env), evaluate(found.dsl, env), rtol=1e-9)
