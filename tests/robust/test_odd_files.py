"""Odd and hostile files: each has one exact outcome, no traceback, and the good model beside it is
still checked.

One tree under a temporary directory holds every case in its own folder, each next to ``good.py``,
an invented model (a bakery's oven schedule) with one known finding: ``x > 0`` is a strict
inequality, which convex problems do not state (Boyd & Vandenberghe 2004 §4.1.1, from memory).
The command line runs once over the whole tree in a fresh process with two workers, as a user
would; each test reads its own folder's findings from that run's JSON. Expected lines and columns
are computed from the text each test wrote, never copied from a run. The facts of the trade the
cases rest on (from memory): PEP 263 coding declarations and the UTF-8 byte order mark decide a
file's encoding; Python ends a physical line at ``\\n``, ``\\r\\n`` or ``\\r`` (Language Reference
§2.1.2); CPython's tokenizer refuses more than 200 nested brackets ("too many nested
parentheses"); ``os.strerror`` gives the platform's text for an errno.
"""

from __future__ import annotations

import errno
import json
import os
import sys
from pathlib import Path

import pytest

from conftest import run_cli

GOOD = "import cvxpy as cp\nx = cp.Variable(3, name='trays')\nprob = cp.Problem(cp.Minimize(cp.sum(x)), [x > 0])\n"
STRICT = "strict inequality `>` in a constraint"
BIG = 10 * 1024 * 1024


def _col(line: str, needle: str, nth: int = 1) -> int:
    """1-based column of the nth occurrence of needle in line."""
    at = -1
    for _ in range(nth):
        at = line.index(needle, at + 1)
    return at + 1


def _good_expected():
    line = GOOD.splitlines()[2]
    return [("strict-inequality", 3, _col(line, "x > 0"))]


CASES: dict[str, dict[str, bytes]] = {}
EXPECT: dict[str, list] = {}   # "folder/file" -> [(rule, line, column, message fragment)]; [] = checked, clean
SKIPPED: set[str] = set()      # "folder/file" skipped by the prefilter (no modelling import)


def case(folder: str, name: str, data: bytes, expected=None, skipped: bool = False):
    CASES.setdefault(folder, {})[name] = data
    if skipped:
        SKIPPED.add(f"{folder}/{name}")
    else:
        EXPECT[f"{folder}/{name}"] = expected


# -- bytes and encodings ------------------------------------------------------------------------
_nul = b"import cvxpy as cp\n" + bytes(range(256)) * 4
case("binary", "model.py", _nul, [("syntax-error", 1, 1, "file contains NUL bytes: not Python source")])
case("binary", "blob.py", bytes(range(256)) * 64, skipped=True)  # no import: never decoded

_high = b"import cvxpy as cp\nx = cp.Variable(3)\n" + bytes(range(0x80, 0x100)) + b"\n"
case("binary_high", "model.py", _high,
     [("syntax-error", 3, 1, f"cannot decode the file as utf-8: invalid byte at offset {_high.index(0x80)}")])

_latin = ("# -*- coding: latin-1 -*-\nimport cvxpy as cp\ncafé = cp.Variable(3)  # tables du café\n"
          "prob = cp.Problem(cp.Minimize(cp.sum(café)), [café > 0])\n")
case("latin1_declared", "model.py", _latin.encode("latin-1"),
     [("strict-inequality", 4, _col(_latin.splitlines()[3], "café > ") , STRICT)])
_undeclared = _latin.replace("# -*- coding: latin-1 -*-\n", "").encode("latin-1")
case("latin1_undeclared", "model.py", _undeclared,
     [("syntax-error", 2, 1, f"cannot decode the file as utf-8: invalid byte at offset {_undeclared.index(0xE9)}")])

_strict_at_3 = [("strict-inequality", 3, _good_expected()[0][2], STRICT)]
case("bom", "model.py", b"\xef\xbb\xbf" + GOOD.encode(), _strict_at_3)
case("crlf", "model.py", GOOD.replace("\n", "\r\n").encode(), _strict_at_3)
_mixed = "import cvxpy as cp\r\nx = cp.Variable(3)\rhorizon = 4\nprob = cp.Problem(cp.Minimize(cp.sum(x)), [x > 0])\r\n"
case("mixed_newlines", "model.py", _mixed.encode(),
     [("strict-inequality", 4, _col(_mixed.splitlines()[3], "x > 0"), STRICT)])
_tabs = ("import cvxpy as cp\n\ndef plan(n):\n\tx = cp.Variable(n)\n\tif n > 2:\n\t\tcons = [x >= 0, x < 9]\n"
         "\treturn cp.Problem(cp.Minimize(cp.sum(x)), cons)\n\nplan(4)\n")
case("tabs", "model.py", _tabs.encode(),
     [("strict-inequality", 6, _col(_tabs.splitlines()[5], "x < 9"), "strict inequality `<` in a constraint")])
case("empty", "model.py", b"", skipped=True)
case("empty", "only_import.py", b"import cvxpy as cp\n", [])

# -- size ---------------------------------------------------------------------------------------
_pad = b"# a comment line that pads the file out past the size limit...\n"
case("big", "model.py", b"import cvxpy as cp\n" + _pad * (BIG // len(_pad)),
     [("file-error", 1, 1, "file is larger than 8 MiB; not checked")])
case("big", "table.py", b"ROWS = 3\n" + _pad * (BIG // len(_pad)), skipped=True)  # no model import anywhere

# -- nesting ------------------------------------------------------------------------------------
_parens = "import cvxpy as cp\ny = " + "(" * 1000 + "1" + ")" * 1000 + "\n"
case("deep_parens", "model.py", _parens.encode(),
     [("syntax-error", 2, _col(_parens.splitlines()[1], "(", 201), "file does not parse: too many nested parentheses")])
_deep_obj = ("import cvxpy as cp\nx = cp.Variable(3)\nprob = cp.Problem(cp.Minimize(" + "cp.exp(" * 1000 + "cp.sum(x)"
             + ")" * 1000 + "))\n")
case("deep_objective", "model.py", _deep_obj.encode(),
     [("syntax-error", 3, _col(_deep_obj.splitlines()[2], "(", 201), "too many nested parentheses")])
_long = ("import cvxpy as cp\nx = cp.Variable(3)\nprob = cp.Problem(cp.Minimize(" + " + ".join(["cp.sum(x)"] * 1000)
         + "))\n")
case("long_sum", "model.py", _long.encode(),
     [("file-error", 3, _col(_long.splitlines()[2], "cp.Problem"),
       "expression nested more than 1000 levels deep (each term of a sum written out is a level); "
       "optlint does not follow it; file not checked")])
# 500 terms: deeper than the default recursion limit of the pipeline allows, within MAX_DEPTH.
_sum500 = ("import cvxpy as cp\nx = cp.Variable(3)\nprob = cp.Problem(cp.Minimize(" + " + ".join(["cp.sum(x)"] * 500)
           + " - cp.norm(x)))\n")
case("sum_of_500", "model.py", _sum500.encode(),
     [("weight-sign", 3, _col(_sum500.splitlines()[2], "cp.Minimize"), "convex term `cp.norm(x)` has weight -1")])

# -- numbers ------------------------------------------------------------------------------------
_pow = ("import cvxpy as cp\nx = cp.Variable(3)\nk = 10**10**10\n"
        "prob = cp.Problem(cp.Minimize(k * cp.sum(x) + cp.sum(x) ** (10**10**10)), [x > 0])\n")
case("tower", "model.py", _pow.encode(),
     [("nonconvex-objective", 4, _col(_pow.splitlines()[3], "cp.Minimize"), "exponent is not a known real number"),
      ("strict-inequality", 4, _col(_pow.splitlines()[3], "x > 0"), STRICT)])
_floats = ("import cvxpy as cp\nx = cp.Variable(3)\n"
           "prob = cp.Problem(cp.Minimize(1e308 * 10 * cp.sum_squares(x) + 1e999 * cp.sum(x) - 1e999 * cp.norm(x)),"
           " [x > 0, x * 1e-999 <= 1])\n")
case("huge_floats", "model.py", _floats.encode(),
     [("weight-sign", 3, _col(_floats.splitlines()[2], "cp.Minimize"), "convex term `cp.norm(x)` has weight -1e999"),
      ("strict-inequality", 3, _col(_floats.splitlines()[2], "x > 0"), STRICT)])

# A literal list longer than 64 entries once crashed the engine (an atom's argument limit).
_prices = ", ".join(str(i % 9 + 1) for i in range(100))
_list = (f"import cvxpy as cp\nimport numpy as np\nprices = np.array([{_prices}])\nx = cp.Variable(100)\n"
         "prob = cp.Problem(cp.Minimize(prices @ x), [x > 1])\n")
case("long_list", "model.py", _list.encode(), [("strict-inequality", 5, _col(_list.splitlines()[4], "x > 1"), STRICT)])

# -- many constraints ---------------------------------------------------------------------------
_many = ("import cvxpy as cp\nx = cp.Variable(3)\ncons = [\n" + "".join(f"    x[{i % 3}] > {i},\n" for i in range(2000))
         + "]\nprob = cp.Problem(cp.Minimize(cp.sum(x)), cons)\n")
case("many_constraints", "listed.py", _many.encode(), [("strict-inequality", 4 + i, 5, STRICT) for i in range(2000)])
_looped = ("import cvxpy as cp\nx = cp.Variable(3)\ncons = [x[i % 3] > i for i in range(5000)]\nfor i in range(5000):\n"
           "    cons.append(cp.square(x[i % 3]) == i)\nprob = cp.Problem(cp.Minimize(cp.sum(x)), cons)\n")
case("many_constraints", "looped.py", _looped.encode(),
     [("strict-inequality", 3, _col(_looped.splitlines()[2], "x[i % 3] >"), STRICT),
      ("nonaffine-equality", 5, _col(_looped.splitlines()[4], "cp.square"), "equality constraint is not affine")])

# -- notebooks ----------------------------------------------------------------------------------
_conflict = ('{"cells": [\n<<<<<<< HEAD\n {"cell_type": "code", "source": ["import cvxpy as cp\\n"]},\n=======\n'
             '>>>>>>> theirs\n], "nbformat": 4}\n')
case("notebooks", "conflict.ipynb", _conflict.encode(), [("syntax-error", 2, 1, "notebook is not valid JSON")])
_prose = {"cells": [{"cell_type": "markdown", "metadata": {}, "source": ["We plan with `import cvxpy as cp`.\n"]}],
          "metadata": {}, "nbformat": 4, "nbformat_minor": 5}
case("notebooks", "prose.ipynb", json.dumps(_prose).encode(), skipped=True)
_nonstr = {"cells": [{"cell_type": "code", "metadata": {}, "outputs": [], "execution_count": None,
                      "source": ["import cvxpy as cp\n"]},
                     {"cell_type": "code", "metadata": {}, "outputs": [], "execution_count": None, "source": [1, 2]}],
           "metadata": {}, "nbformat": 4, "nbformat_minor": 5}
case("notebooks", "numbers_as_source.ipynb", json.dumps(_nonstr).encode(),
     [("syntax-error", 1, 1, "cell 2 has a source that is not text")])


LINKS = {"loop_a.py": "loop_b.py", "loop_b.py": "loop_a.py", "dangling.py": "gone.py"}


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    root = tmp_path_factory.mktemp("odd")
    for folder, files in CASES.items():
        (root / folder).mkdir()
        (root / folder / "good.py").write_text(GOOD)
        for name, data in files.items():
            (root / folder / name).write_bytes(data)
    links = root / "links"
    links.mkdir()
    (links / "good.py").write_text(GOOD)
    for name, target in LINKS.items():
        os.symlink(target, links / name)
    os.symlink("..", links / "up")            # a directory loop: never followed
    os.mkfifo(links / "pipe.py")              # opening it would wait for a writer forever
    proc = run_cli("check", "--no-config", "--no-cache", "--format", "json", "--jobs", "2", str(root), cwd=root)
    return root, proc


def _by_file(root: Path, doc: dict) -> dict[str, list]:
    out: dict[str, list] = {}
    for f in doc["findings"]:
        rel = Path(f["path"]).relative_to(root).as_posix()
        out.setdefault(rel, []).append(f)
    return out


def test_the_run_ends_normally_and_every_good_model_is_checked(run):
    root, proc = run
    assert proc.returncode == 1, proc.stderr
    assert "Traceback" not in proc.stderr and "Error" not in proc.stderr, proc.stderr
    doc = json.loads(proc.stdout)
    found = _by_file(root, doc)
    folders = list(CASES) + ["links"]
    for folder in folders:
        got = [(f["rule"], f["line"], f["column"]) for f in found.get(f"{folder}/good.py", [])]
        assert got == _good_expected(), folder
    # every file: good.py per folder, the cases, the links and the pipe; skipped ones are counted
    total = len(folders) + sum(len(v) for v in CASES.values()) + len(LINKS) + 1
    assert doc["files_skipped"] == len(SKIPPED)
    assert doc["files_checked"] == total - len(SKIPPED)
    assert not any(f["rule"] == "internal-error" for f in doc["findings"])


@pytest.mark.parametrize("name", sorted(EXPECT))
def test_exact_outcome(run, name):
    root, proc = run
    found = _by_file(root, json.loads(proc.stdout)).get(name, [])
    got = sorted((f["rule"], f["line"], f["column"]) for f in found)
    assert got == sorted((r, l, c) for r, l, c, _ in EXPECT[name]), [f["message"] for f in found][:3]
    for rule, line, column, fragment in EXPECT[name]:
        match = [f for f in found if (f["rule"], f["line"], f["column"]) == (rule, line, column)]
        assert fragment in match[0]["message"], match[0]["message"]


def test_skipped_files_have_no_findings(run):
    root, proc = run
    found = _by_file(root, json.loads(proc.stdout))
    assert not [name for name in SKIPPED if name in found]


def test_a_large_file_without_a_model_import_is_skipped_but_one_with_it_is_reported_as_not_checked(run):
    root, proc = run
    found = _by_file(root, json.loads(proc.stdout))
    (finding,) = found["big/model.py"]
    assert finding["severity"] == "warning" and finding["evidence"]["bytes"] > 8 * 1024 * 1024
    assert "big/table.py" not in found


def test_a_loop_constraint_is_one_finding_with_its_count(run):
    root, proc = run
    found = _by_file(root, json.loads(proc.stdout))["many_constraints/looped.py"]
    (equality,) = [f for f in found if f["rule"] == "nonaffine-equality"]
    assert equality["evidence"]["instances"] == 5000


def test_links_and_pipes_are_reported_not_followed(run):
    root, proc = run
    found = _by_file(root, json.loads(proc.stdout))
    messages = {name: [(f["rule"], f["severity"], f["message"]) for f in fs] for name, fs in found.items()
                if name.startswith("links/") and not name.endswith("good.py")}
    loop = ("file-error", "error", f"cannot read file: {os.strerror(errno.ELOOP)}")
    assert messages == {
        "links/loop_a.py": [loop], "links/loop_b.py": [loop],
        "links/dangling.py": [("file-error", "error", f"cannot read file: {os.strerror(errno.ENOENT)}")],
        "links/pipe.py": [("file-error", "error", "not a regular file (a pipe, socket or device); not checked")],
    }
    assert not [name for name in found if name.startswith("links/up/")]  # the directory loop was not entered


def test_an_unreadable_file_is_a_file_error_and_the_rest_is_checked(tmp_path):
    if os.geteuid() == 0:
        pytest.skip("root reads a mode-000 file; the pipe and the broken links above cover unopenable paths")
    (tmp_path / "good.py").write_text(GOOD)
    locked = tmp_path / "locked.py"
    locked.write_text(GOOD)
    locked.chmod(0)
    try:
        proc = run_cli("check", "--no-config", "--no-cache", "--format", "json", str(tmp_path), cwd=tmp_path)
    finally:
        locked.chmod(0o644)
    doc = json.loads(proc.stdout)
    got = sorted((Path(f["path"]).name, f["rule"], f["message"]) for f in doc["findings"])
    assert got == [("good.py", "strict-inequality", got[0][2]),
                   ("locked.py", "file-error", f"cannot read file: {os.strerror(errno.EACCES)}")]
    assert proc.returncode == 1 and "Traceback" not in proc.stderr


def test_invalid_toml_in_pyproject_is_a_usage_error_naming_file_and_line(tmp_path):
    (tmp_path / "good.py").write_text(GOOD)
    (tmp_path / "pyproject.toml").write_text('[tool.optlint]\nfail-on = "error"\nseverity = {\n')
    proc = run_cli("check", "good.py", cwd=tmp_path)
    assert proc.returncode == 2, proc.stdout + proc.stderr
    assert proc.stdout == "" and "Traceback" not in proc.stderr
    assert str(tmp_path / "pyproject.toml") in proc.stderr and "valid TOML" in proc.stderr
    assert "line 3" in proc.stderr, proc.stderr
    assert sys.version_info < (3, 11) or "(at line 3, column" in proc.stderr
