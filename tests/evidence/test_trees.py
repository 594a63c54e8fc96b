"""Derivation trees and witness sentences (optlint.trees).

The tree must show each step's expression, curvature, sign and rule, and mark exactly the step
where the rules fail; the witness sentence must carry numbers a reader can recompute: they are
re-evaluated here with the independent string-form evaluator (tests/evidence/strform.py) and the
definition of convexity (B&V 2004 §3.1.1, from memory).
"""

from __future__ import annotations

import re

from rich.console import Console

from conftest import FIXTURES
from evidence.strform import evaluate
from optlint.engine import check_file
from optlint.trees import trees_at, witness_sentence

DELIVERY = FIXTURES / "scipy" / "delivery_speed.py"
SHIFT = FIXTURES / "evidence" / "shift_mix.py"


def _console():
    return Console(record=True, width=240, color_system=None)


def test_tree_marks_the_failing_step_once():
    line = next(f.site.line for f in check_file(str(DELIVERY)).findings if f.rule == "nonconvex-objective")
    console = _console()
    assert trees_at(str(DELIVERY), line, console) == 0
    text = console.export_text()
    marked = [row for row in text.splitlines() if "✗" in row]
    assert len(marked) == 1
    assert "speed[0]*speed[1]" in marked[0] and "product of two non-constant expressions" in marked[0]
    for word in ("convex", "affine", "constant", "sign positive", "leaf-variable"):
        assert word in text


def test_tree_of_a_proved_part_names_the_proof():
    # a²/y with y > 0 is quad_over_lin (a normal form); (0.5d - 1)(d - 2) = 0.5(d - 2)² needs the Hessian
    for atom, method in (("quad_over_lin", "normal-form"), ("square", "second-order")):
        line = next(f.site.line for f in check_file(str(SHIFT)).findings if f"cp.{atom}" in f.message)
        console = _console()
        assert trees_at(str(SHIFT), line, console) == 0
        assert f"proved beyond the rules ({method})" in console.export_text()


def test_nothing_at_a_line_without_a_model_part():
    console = _console()
    assert trees_at(str(SHIFT), 1, console) == 1
    assert console.export_text() == ""


def _numbers(sentence: str, name: str) -> float:
    return float(re.search(re.escape(name) + r" = (-?[0-9.e+-]+|-?inf)", sentence).group(1))


def test_witness_sentences_recompute():
    checked = 0
    for path in sorted(FIXTURES.rglob("*.py")):
        for f in check_file(str(path)).findings:
            w = f.evidence.get("witness")
            if w is None or w["kind"] != "function" or len(w["variables"]) > 3:
                continue
            s = witness_sentence(w)
            env = lambda p: dict(zip(w["variables"], p))  # noqa: E731
            t = w["t"]
            mid = [t * x + (1 - t) * y for x, y in zip(w["a"], w["b"])]
            fa, fb, ft = evaluate(w["expression"], env(w["a"])), evaluate(w["expression"], env(w["b"])), \
                evaluate(w["expression"], env(mid))
            for shown, mine in ((_numbers(s, "f(a)"), fa), (_numbers(s, "f(b)"), fb),
                                (_numbers(s, "f(t·a+(1−t)·b)"), ft)):
                assert abs(shown - mine) <= 1e-5 * (1 + abs(mine)), (path, s)
            chord = _numbers(s, "t·f(a)+(1−t)·f(b)")
            assert ft > chord - 1e-5 * (1 + abs(chord)) and "not convex" in s
            checked += 1
            if checked >= 12:
                return
    assert checked >= 5


def test_check_shows_derivation_and_witness_only_when_asked():
    # the real command line in a subprocess; the finding's tree and witness sentence go under it
    from conftest import run_cli

    target = str(DELIVERY)
    plain = run_cli("check", "--no-cache", target)
    shown = run_cli("check", "--no-cache", "--show-derivation", target)
    assert plain.returncode == shown.returncode == 1
    for marker in ("✗ ", "leaf-variable", "witness: for f(x_0, x_1) = "):
        assert marker not in plain.stdout and marker in shown.stdout
    tree = [row for row in shown.stdout.splitlines() if "──" in row]
    assert any("✗" in row and "product of two non-constant expressions" in row for row in tree)
    sentence = next(row for row in shown.stdout.splitlines() if "witness: " in row)
    # the numbers of the sentence recompute (B&V 2004 §3.1.1, from memory)
    finding = next(f for f in check_file(target).findings if f.rule == "nonconvex-objective")
    w = finding.evidence["witness"]
    assert witness_sentence(w) in sentence and "not convex" in sentence
    for point, name in ((w["a"], "f(a)"), (w["b"], "f(b)")):
        mine = evaluate(w["expression"], dict(zip(w["variables"], point)))
        assert abs(_numbers(sentence, name) - mine) <= 1e-5 * (1 + abs(mine))
    # a proved part shows its proof instead of a witness
    proved = run_cli("check", "--no-cache", "--show-derivation", str(SHIFT))
    assert "proved beyond the rules (normal-form)" in proved.stdout and "witness:" not in proved.stdout
