"""Helpers for the workflow tests: write a small project, run the command line in this process."""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

from optlint.cli import main

# Model files in an invented scenario (a bakery's delivery-van loading plan); each seeded line is
# wrong by the convex-problem form of Boyd & Vandenberghe 2004 §4.2.1 (from memory): strict
# inequalities are not part of the standard form, equality constraints must be affine, and a
# maximised objective must be concave (a norm is convex, §3.1.5, so maximising it is not convex).
STRICT = """\
import cvxpy as cp
crates = cp.Variable(4, nonneg=True)
cons = [cp.sum(crates) <= 40, crates > 1]
problem = cp.Problem(cp.Minimize(cp.sum(crates)), cons)
"""
NONCONVEX = """\
import cvxpy as cp
crates = cp.Variable(4, nonneg=True)
problem = cp.Problem(cp.Maximize(cp.norm(crates, 2)), [cp.sum(crates) == 30])
"""
CLEAN = """\
import cvxpy as cp
crates = cp.Variable(4, nonneg=True)
problem = cp.Problem(cp.Minimize(cp.sum_squares(crates - 5)), [cp.sum(crates) == 30])
"""


def project(root: Path, files: dict[str, str], config: str | None = None) -> Path:
    for name, text in files.items():
        path = root / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(textwrap.dedent(text), encoding="utf-8")
    if config is not None:
        (root / "pyproject.toml").write_text("[project]\nname = \"van-loading\"\n\n" + textwrap.dedent(config),
                                             encoding="utf-8")
    return root


def run(capsys, *args: str) -> tuple[int, str, str]:
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def run_json(capsys, *args: str) -> tuple[int, dict]:
    code, out, err = run(capsys, "check", "--format", "json", *args)
    assert code in (0, 1), err
    return code, json.loads(out)


def rules_of(doc: dict) -> list[tuple[str, str]]:
    return sorted((Path(f["path"]).name, f["rule"]) for f in doc["findings"])
