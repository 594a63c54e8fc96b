"""Fuzzing the engine in-process: it never fails on a program and stays inside a per-file budget.

Two sources of programs, each run through ``engine.check_data`` (the per-file pipeline on bytes):

- hypothesmith's generated Python programs (from the grammar and from libcst nodes), behind the
  imports of all six modelling libraries so that the prefilter passes them and every recogniser
  walks them;
- mutants of the model fixtures (dsl, penalties, scipy, casadi, losses, algebraic, pulp): a seeded
  libcst transformer splices atoms around expressions (cp.log, cp.exp, cp.sqrt, np.maximum, ...),
  swaps arithmetic operators, flips signs and comparisons and puts extreme numbers in place of
  literals.

"Never fails" means no ``internal-error`` finding (the engine turns every exception into one) and
no exception out of the engine. CI runs fixed examples (300 grammar programs, 40 node programs,
60 mutants; a run never depends on luck); the long runs are separate commands:

    OPTLINT_FUZZ_EXAMPLES=5000 OPTLINT_MUTANTS=2000 python -m pytest tests/robust/test_fuzz.py -q -s

(``-s`` shows the counts; with the variables set, hypothesis explores freely instead of replaying.)
"""

from __future__ import annotations

import os
import random
import time
import warnings
from collections import Counter
from pathlib import Path

import libcst as cst
import pytest
from hypothesis import HealthCheck, given, settings

from conftest import FIXTURES
from optlint.engine import check_data

hypothesmith = pytest.importorskip("hypothesmith")

EXAMPLES = int(os.environ.get("OPTLINT_FUZZ_EXAMPLES", "300"))
NODE_EXAMPLES = max(40, EXAMPLES // 8)
MUTANTS = int(os.environ.get("OPTLINT_MUTANTS", "60"))
BUDGET = 5.0            # seconds per generated program (they are small)
MUTANT_BUDGET = 15.0    # seconds per mutated fixture (the largest fixture takes about 3 s as it is)
PREFIX = ("import cvxpy as cp\nimport numpy as np\nimport pyomo.environ as pyo\nimport scipy.optimize as so\n"
          "import casadi\nimport torch\nimport pulp\n")
DIALECT_DIRS = ("dsl", "penalties", "scipy", "casadi", "losses", "algebraic", "pulp")


def _settings(n):
    return settings(max_examples=n, deadline=None, database=None,
                    derandomize="OPTLINT_FUZZ_EXAMPLES" not in os.environ,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                           HealthCheck.filter_too_much])


def _check(path: Path, text: str, budget: float, stats: Counter) -> None:
    start = time.perf_counter()
    result = check_data(str(path), text.encode("utf-8", "surrogatepass"))
    elapsed = time.perf_counter() - start
    stats["programs"] += 1
    stats.update(f.rule for f in result.findings)
    crashes = [f.message for f in result.findings if f.rule == "internal-error"]
    assert not crashes, (crashes, text[:2000])
    assert elapsed < budget, (f"{elapsed:.1f} s", text[:2000])


@pytest.fixture(scope="module", autouse=True)
def _warm():
    check_data("warm.py", (PREFIX + "x = cp.Variable(2)\nprob = cp.Problem(cp.Minimize(cp.sum(x)))\n").encode())


@pytest.mark.parametrize("strategy, n", [("from_grammar", EXAMPLES), ("from_node", NODE_EXAMPLES)])
def test_generated_programs_never_crash_the_engine(tmp_path, strategy, n):
    stats: Counter = Counter()
    path = tmp_path / "generated.py"

    @_settings(n)
    @given(getattr(hypothesmith, strategy)())
    def one(source):
        _check(path, PREFIX + source, BUDGET, stats)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SyntaxWarning)  # hypothesmith compiles its programs to vet them
        one()
    print(f"\n{strategy}: {dict(stats)}")
    assert stats["programs"] >= n


# -- mutants of the fixtures ----------------------------------------------------------------------

ATOMS = ("cp.log({})", "cp.exp({})", "cp.sqrt({})", "np.maximum({}, 0)", "cp.square({})", "cp.abs({})",
         "cp.norm({}, 1)", "cp.pos({})", "cp.inv_pos({})", "np.log({})", "np.exp({})", "torch.relu({})",
         "casadi.sqrt({})", "pyo.log({})", "cp.minimum({}, 1)", "cp.log_sum_exp({})", "cp.power({}, 0.5)",
         "cp.power({}, 3)", "cp.quad_over_lin({}, 2)", "abs({})", "max({}, 0)", "min({}, -3)", "({}) ** 0.5",
         "({}) ** -1", "({}) ** 10**10", "1 / ({})", "house_curve({})", "cp.sum({})", "cp.max({})")
NUMBERS = ("0", "-1", "0.0", "1e308", "1e-308", "1e999", "10**100", "-10**10**3", "3.5", "2")
BINARY = (cst.Add, cst.Subtract, cst.Multiply, cst.Divide, cst.Power, cst.MatrixMultiply)
COMPARE = (cst.LessThanEqual, cst.GreaterThanEqual, cst.Equal, cst.LessThan, cst.GreaterThan, cst.NotEqual)


class Mutator(cst.CSTTransformer):
    """Each expression node is mutated with probability ``rate``; ``count`` says how many were."""

    def __init__(self, rng: random.Random, rate: float):
        self.rng, self.rate, self.count = rng, rate, 0

    def _hit(self) -> bool:
        if self.rng.random() < self.rate:
            self.count += 1
            return True
        return False

    def _wrap(self, node: cst.BaseExpression) -> cst.BaseExpression:
        choice = self.rng.random()
        if choice < 0.25:
            return cst.UnaryOperation(cst.Minus(), cst.parse_expression(f"({cst.Module([]).code_for_node(node)})"))
        template = self.rng.choice(ATOMS)
        return cst.parse_expression(template.format(cst.Module([]).code_for_node(node)))

    def leave_Call(self, original, updated):
        return self._wrap(updated) if self._hit() else updated

    def leave_BinaryOperation(self, original, updated):
        if not self._hit():
            return updated
        if self.rng.random() < 0.5:
            return updated.with_changes(operator=self.rng.choice(BINARY)())
        return self._wrap(updated)

    def leave_Comparison(self, original, updated):
        if not self._hit():
            return updated
        targets = [t.with_changes(operator=self.rng.choice(COMPARE)()) for t in updated.comparisons]
        return updated.with_changes(comparisons=targets)

    def leave_UnaryOperation(self, original, updated):
        if self._hit() and isinstance(updated.operator, cst.Minus):
            return updated.expression.with_changes(lpar=[cst.LeftParen()], rpar=[cst.RightParen()])
        return updated

    def _number(self, updated):
        return cst.parse_expression(f"({self.rng.choice(NUMBERS)})") if self._hit() else updated

    def leave_Integer(self, original, updated):
        return self._number(updated)

    def leave_Float(self, original, updated):
        return self._number(updated)


def _fixtures() -> dict[Path, cst.Module]:
    out = {}
    for path in sorted(p for d in DIALECT_DIRS for p in (FIXTURES / d).glob("*.py")):
        try:
            out[path] = cst.parse_module(path.read_text(encoding="utf-8"))
        except cst.ParserSyntaxError:  # dsl/broken_syntax.py is broken on purpose
            continue
    return out


def mutant(modules: dict[Path, cst.Module], files: list[Path], k: int) -> tuple[Path, str, int]:
    """Mutant number k: its fixture, its text and how many mutations it holds (also used by
    tests/robust/scan_mutants.py, so a number reported there is this one)."""
    path = files[k % len(files)]
    rng = random.Random(f"mutant-{k}")
    mutator = Mutator(rng, rng.uniform(0.03, 0.25))
    return path, modules[path].visit(mutator).code, mutator.count


def test_mutated_models_never_crash_the_engine():
    modules = _fixtures()
    files = list(modules)
    assert len(files) > 50
    stats: Counter = Counter()
    unparsable = 0
    for k in range(MUTANTS):
        try:
            path, text, count = mutant(modules, files, k)
        except (cst.ParserSyntaxError, ValueError):  # a splice libcst itself refuses to print
            unparsable += 1
            continue
        stats["mutations"] += count
        _check(path, text, MUTANT_BUDGET, stats)   # the fixture's own path: its sibling helpers are read
    print(f"\nmutants: {dict(stats)}, not printable: {unparsable}")
    assert stats["programs"] >= MUTANTS * 0.9
