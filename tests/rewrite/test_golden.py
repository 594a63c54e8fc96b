"""optlint rewrite on the fixtures of fixtures/rewrite/: golden outputs, idempotence, the findings
it fixes, byte-identity outside the rewritten expressions, and numeric equivalence.

Each rewritten pair below is evaluated by a small numpy evaluator of our own, written here over
libcst's parse of the two texts (never optlint's lift, never eval), with each library function
given its textbook meaning (B&V 2004 §3.1.5, from memory): norm(x, 2) = sqrt(sum x_i^2),
norm(x, 1) = sum |x_i|, log_sum_exp(x) = log(sum exp(x_i)), quad_over_lin(x, y) = sum x_i^2 / y on
y > 0, inv_pos(x) = 1/x on x > 0, square(x) = x^2, hstack concatenates. Points are drawn at random
in each name's domain (positive where the fixture declares ``pos=True``). That the DSL reads ``<``
as ``<=`` is a fact of the trade (from memory); the strict-inequality check states it explicitly.
"""

from __future__ import annotations

from pathlib import Path

import libcst as cst
import numpy as np
import pytest

from conftest import FIXTURES, ROOT
from optlint.engine import check_data
from optlint.rewrite import rewrite_file, rewrite_source
from optlint.rewrite.driver import RULES

GOLDEN = ROOT / "tests" / "rewrite" / "golden"
INPUTS = sorted((FIXTURES / "rewrite").glob("*.py"))

# Per fixture: the texts the rewrite may change, in the order they appear, and what they become.
# "expr": an expression; "constraint": a comparison with an affine equivalent; "strict": `<`/`>`;
# "import": the import the new atoms need.
PAIRS = {
    "bakery_relay_point.py": [
        ("expr", "cp.sqrt(cp.sum_squares(relay - ovens))", "cp.norm(relay - ovens, 2)"),
        ("expr", "cp.sqrt(cp.sum_squares(relay - cafe))", "cp.norm(relay - cafe, 2)"),
        ("expr", "cp.sqrt(cp.sum_squares(relay - dispatcher))", "cp.norm(relay - dispatcher, 2)"),
        ("expr", "cp.sqrt((east - shop_east) ** 2 + (north - shop_north) ** 2 + lane_width ** 2)",
         "cp.norm(cp.hstack([east - shop_east, north - shop_north, lane_width]), 2)"),
    ],
    "greenhouse_soft_peak.py": [
        ("import", "    exp,\n    log,\n)", "    exp,\n    hstack,\n    log,\n    log_sum_exp,\n)"),
        ("expr", "log(total(exp(deficit)))", "log_sum_exp(deficit)"),
        ("expr", "log(exp(chill - seedlings) + exp(chill - 2 * cuttings))",
         "log_sum_exp(hstack([chill - seedlings, chill - 2 * cuttings]))"),
    ],
    "kiln_firing_ramp.py": [
        ("expr", "(ramp - TARGET_RAMP_C_PER_H) ** 2 / soak", "cvx.quad_over_lin(ramp - TARGET_RAMP_C_PER_H, soak)"),
        ("expr", "cooling * cooling", "cvx.square(cooling)"),
        ("expr", "cvx.sqrt(cvx.sum_squares(zone_temp - setpoint))", "cvx.norm(zone_temp - setpoint, 2)"),
        ("expr", "4.0 / soak", "4.0 * cvx.inv_pos(soak)"),
    ],
    "bike_dock_pinning.py": [
        ("constraint", "cp.norm(fill[0:2] - pinned, 2) <= 0", "fill[0:2] == pinned"),
        ("constraint", "cp.sum_squares(fill[2:4] - morning_target) == 0", "fill[2:4] == morning_target"),
        ("constraint", "(square_fill - station_square_target) ** 2 <= 0", "square_fill == station_square_target"),
        ("constraint", "0 >= cp.norm(fill[5] - 12, 1)", "fill[5] == 12"),
    ],
    "canal_lock_levels.py": [
        ("strict", "level[:, hour] > NAVIGABLE_M", "level[:, hour] >= NAVIGABLE_M"),
        ("strict", "level[0, :] < weir_m", "level[0, :] <= weir_m"),
    ],
}

# Each name's shape and domain as the fixtures declare them (data: any real values).
DOMAINS = {
    "bakery_relay_point.py": {"relay": (2, "free"), "ovens": (2, "free"), "cafe": (2, "free"),
                              "dispatcher": (2, "free"), "east": ((), "free"), "north": ((), "free"),
                              "shop_east": ((), "free"), "shop_north": ((), "free"), "lane_width": ((), "free")},
    "greenhouse_soft_peak.py": {"deficit": (3, "free"), "chill": ((), "free"), "seedlings": ((), "free"),
                                "cuttings": ((), "free")},
    "kiln_firing_ramp.py": {"ramp": ((), "free"), "soak": ((), "pos"), "cooling": ((), "free"),
                            "zone_temp": (3, "free"), "setpoint": (3, "free")},
    "bike_dock_pinning.py": {"fill": (6, "nonneg"), "pinned": (2, "free"), "morning_target": (2, "free"),
                             "square_fill": ((), "free"), "station_square_target": ((), "free")},
    "canal_lock_levels.py": {"level": ((3, 6), "free"), "weir_m": ((), "free")},
}
CONSTANTS = {"TARGET_RAMP_C_PER_H": 120.0, "NAVIGABLE_M": 1.4}


def _norm(x, p=2):
    x = np.ravel(x)
    return float(np.sqrt(np.sum(x * x))) if p == 2 else float(np.sum(np.abs(x)))


def _positive_only(f):
    def wrapped(*args):
        assert np.all(np.asarray(args[-1]) > 0), "outside the atom's domain"
        return f(*args)
    return wrapped


FUNCTIONS = {
    "sqrt": np.sqrt, "exp": np.exp, "log": np.log, "abs": np.abs, "square": np.square,
    "sum": np.sum, "total": np.sum, "sum_squares": lambda x: float(np.sum(np.square(x))),
    "norm": _norm, "hstack": lambda xs: np.hstack([np.atleast_1d(x) for x in xs]),
    "log_sum_exp": lambda x: float(np.log(np.sum(np.exp(x)))),
    "quad_over_lin": _positive_only(lambda x, y: float(np.sum(np.square(x))) / y),
    "inv_pos": _positive_only(lambda x: 1.0 / x),
}
MODULES = ("cp", "cvx")


class Evaluator:
    """Python expressions over numbers and arrays, node by node (a whitelist; nothing else runs)."""

    def __init__(self, env, strict_as_dsl=False):
        self.env = env
        self.strict_as_dsl = strict_as_dsl  # read `<` and `>` as the DSL does: `<=` and `>=`

    def __call__(self, node):
        if isinstance(node, cst.Integer):
            return float(int(node.value))
        if isinstance(node, cst.Float):
            return float(node.value)
        if isinstance(node, cst.Name):
            return self.env[node.value] if node.value in self.env else FUNCTIONS[node.value]
        if isinstance(node, cst.Attribute) and isinstance(node.value, cst.Name) and node.value.value in MODULES:
            return FUNCTIONS[node.attr.value]
        if isinstance(node, cst.List):
            return [self(el.value) for el in node.elements]
        if isinstance(node, cst.UnaryOperation) and isinstance(node.operator, cst.Minus):
            return -self(node.expression)
        if isinstance(node, cst.BinaryOperation):
            a, b = self(node.left), self(node.right)
            op = type(node.operator).__name__
            return {"Add": np.add, "Subtract": np.subtract, "Multiply": np.multiply, "Divide": np.divide,
                    "Power": np.power, "MatrixMultiply": np.matmul}[op](a, b)
        if isinstance(node, cst.Call):
            return self(node.func)(*[self(a.value) for a in node.args])
        if isinstance(node, cst.Subscript):
            return np.asarray(self(node.value))[self.index(node)]
        if isinstance(node, cst.Comparison) and len(node.comparisons) == 1:
            a, b = self(node.left), self(node.comparisons[0].comparator)
            op = type(node.comparisons[0].operator).__name__
            if self.strict_as_dsl:
                op = {"LessThan": "LessThanEqual", "GreaterThan": "GreaterThanEqual"}.get(op, op)
            test = {"LessThan": np.less, "LessThanEqual": np.less_equal, "GreaterThan": np.greater,
                    "GreaterThanEqual": np.greater_equal, "Equal": np.equal}[op]
            return bool(np.all(test(a, b)))
        raise AssertionError(f"not in the evaluator's whitelist: {type(node).__name__}")

    def index(self, node: cst.Subscript):
        parts = []
        for el in node.slice:
            s = el.slice
            if isinstance(s, cst.Index):
                parts.append(int(self(s.value)))
            else:
                parts.append(slice(*(None if p is None else int(self(p)) for p in (s.lower, s.upper, s.step))))
        return parts[0] if len(parts) == 1 else tuple(parts)


def _draw(name, rng):
    env = dict(CONSTANTS, hour=int(rng.integers(1, 6)))
    for var, (shape, domain) in DOMAINS[name].items():
        if domain == "pos":
            value = rng.uniform(0.05, 20.0, shape)
        elif domain == "nonneg":
            value = rng.uniform(0.0, 20.0, shape)
        else:
            value = rng.normal(0.0, 10.0, shape)
        env[var] = float(value) if shape == () else value
    return env


def _hold_with_equality(after: cst.Comparison, env) -> None:
    """Change the data so that the rewritten equality (or the bound of `>=`/`<=`) holds exactly."""
    left, right = after.left, after.comparisons[0].comparator
    value = Evaluator(env)(left) if isinstance(right, cst.Name) and right.value in env else None
    if value is not None and right.value not in CONSTANTS:
        env[right.value] = value
        return
    target = Evaluator(env)(right)
    assert isinstance(left, cst.Subscript) and isinstance(left.value, cst.Name)
    array = np.array(env[left.value.value], dtype=float)
    array[Evaluator(env).index(left)] = target
    env[left.value.value] = array


def _golden(path: Path) -> bytes:
    return (GOLDEN / path.name).read_bytes()


def test_every_fixture_has_a_golden_output_and_pairs():
    assert [p.name for p in INPUTS] == sorted(p.name for p in GOLDEN.glob("*.py")) == sorted(PAIRS)
    kinds = {kind for pairs in PAIRS.values() for kind, _, _ in pairs}
    assert kinds == {"expr", "constraint", "strict", "import"}


@pytest.mark.parametrize("path", INPUTS, ids=[p.name for p in INPUTS])
def test_rewrite_matches_the_golden_output(path):
    outcome = rewrite_file(str(path))
    assert outcome.refused is None and not outcome.notes
    assert outcome.rewritten == _golden(path)


@pytest.mark.parametrize("path", INPUTS, ids=[p.name for p in INPUTS])
def test_rewriting_twice_changes_nothing_the_second_time(path):
    again = rewrite_source(str(path), _golden(path))
    assert not again.changed and not again.changes and again.refused is None


@pytest.mark.parametrize("path", INPUTS, ids=[p.name for p in INPUTS])
def test_the_fixed_rules_report_nothing_after_the_rewrite(path):
    before = [f for f in check_data(str(path), path.read_bytes()).findings if f.rule in RULES]
    after = [f for f in check_data(str(path), _golden(path)).findings if f.rule in RULES]
    assert before, "the fixture must have findings to fix"
    assert after == []


@pytest.mark.parametrize("path", INPUTS, ids=[p.name for p in INPUTS])
def test_only_the_rewritten_spans_differ(path):
    """Cut each listed span out of both files (in order, each found exactly once): what remains,
    comments, blank lines and layout, must be byte for byte the same."""
    original, rewritten = path.read_text(encoding="utf-8"), _golden(path).decode("utf-8")
    masked = []
    for text, side in ((original, 1), (rewritten, 2)):
        rest, out = text, []
        for pair in PAIRS[path.name]:
            piece = pair[side]
            assert rest.count(piece) == 1, (path.name, piece)
            head, rest = rest.split(piece)
            out.append(head)
        out.append(rest)
        masked.append(out)
    assert masked[0] == masked[1]


def _expression_pairs():
    for name, pairs in PAIRS.items():
        for kind, before, after in pairs:
            if kind != "import":
                yield pytest.param(name, kind, before, after, id=f"{name}:{before[:40]}")


@pytest.mark.parametrize("name, kind, before, after", list(_expression_pairs()))
def test_rewritten_expression_keeps_its_value(name, kind, before, after):
    rng = np.random.default_rng(20240611)
    old, new = cst.parse_expression(before), cst.parse_expression(after)
    for _ in range(300):
        env = _draw(name, rng)
        if kind == "expr":
            a, b = Evaluator(env)(old), Evaluator(env)(new)
            assert np.allclose(a, b, rtol=1e-10, atol=1e-10), (before, after, env)
            continue
        dsl = kind == "strict"
        # at a random point (almost surely off the boundary) both say the same ...
        assert Evaluator(env, dsl)(old) == Evaluator(env)(new)
        # ... and where the rewritten constraint holds with equality, both hold
        _hold_with_equality(new, env)
        assert Evaluator(env)(new) and Evaluator(env, dsl)(old), (before, after, env)
        if dsl:  # on plain numbers `<` excludes the boundary: why only model constraints are rewritten
            assert not Evaluator(env)(old)
