"""optlint never runs the code it reads: an AST scan of optlint's own source for forbidden calls.

Forbidden anywhere in optlint/ and checks/: eval, exec, compile; sympy's sympify / parse_expr /
S(<str>) (they evaluate text); __import__ and importlib.import_module / import_module of anything
but a module name written in our own source; loading a file as a module (runpy, importlib.util's
spec_from_file_location / module_from_spec / exec_module, importlib.machinery's loaders); subprocess
with shell=True, a command that is not a list, or the string-command helpers; os.system / os.popen /
os.exec* / os.spawn*; network modules (socket, http.client, urllib.request, requests, ...). ``ast.parse``
is allowed (it only parses) and so is subprocess with a literal argument list (the git calls of
changed-files mode). The scanner is tested on samples that contain each forbidden call, so it can
be seen to fail (the test's check is common practice for code-execution reviews, not a standard).

Beside the scan, behaviour: checking a model file whose import would write a marker and open a
connection (and whose sibling helper would too) leaves no marker, no module in ``sys.modules`` and
no socket; the configured baseline path must stay inside the project (an absolute path or one that
climbs out with ``..`` or a link is a configuration error naming the file and the key); the result
cache never follows a link out of the project; two runs give byte-identical JSON.
"""

from __future__ import annotations

import ast
import json
from pathlib import Path

import pytest

from conftest import ROOT

BUILTIN_CALLS = {"eval", "exec", "compile", "__import__"}          # as plain names or builtins.<name>
ANYWHERE_CALLS = {"sympify", "parse_expr"}                          # however they are reached
OS_CALLS = {"system", "popen", "execv", "execve", "execvp", "execvpe", "execl", "execle", "execlp", "execlpe",
            "spawnv", "spawnve", "spawnvp", "spawnl", "spawnle", "spawnlp", "posix_spawn", "posix_spawnp"}  # os.<name>
FORBIDDEN_MODULES = {"socket", "http", "requests", "ftplib", "smtplib", "xmlrpc", "urllib.request", "runpy",
                     "telnetlib", "urllib3", "httpx", "aiohttp", "pty"}
LOADING_CALLS = {"spec_from_file_location", "module_from_spec", "exec_module", "SourceFileLoader",
                 "SourcelessFileLoader", "load_module", "run_path", "run_module"}   # however they are reached
STRING_COMMANDS = {"getoutput", "getstatusoutput"}                  # subprocess.<name> takes a shell string
# import_module is allowed only where its argument is built from a table in our own source.
IMPORT_MODULE_ALLOWED = {"optlint/dialects/__init__.py", "optlint/rules.py", "optlint/plugins.py"}


def _name(func) -> str:
    if isinstance(func, ast.Name):
        return func.id
    if isinstance(func, ast.Attribute):
        return func.attr
    return ""


def violations(source: str, rel: str = "<sample>") -> list[str]:
    out = []
    tree = ast.parse(source)
    for node in ast.walk(tree):
        if isinstance(node, (ast.Import, ast.ImportFrom)):
            mods = [a.name for a in node.names] if isinstance(node, ast.Import) else [node.module or ""]
            if isinstance(node, ast.ImportFrom):  # `from urllib import request` names the module too
                mods += [f"{node.module}.{a.name}" for a in node.names if node.module]
            for m in mods:
                if m in FORBIDDEN_MODULES or m.split(".")[0] in FORBIDDEN_MODULES:
                    out.append(f"{rel}:{node.lineno}: imports {m}")
        if not isinstance(node, ast.Call):
            continue
        name = _name(node.func)
        base = _name(node.func.value) if isinstance(node.func, ast.Attribute) else None
        if (name in BUILTIN_CALLS and base in (None, "builtins")) or name in ANYWHERE_CALLS \
                or (name in OS_CALLS and base == "os"):
            out.append(f"{rel}:{node.lineno}: calls {name}")
        if name == "S" and node.args and isinstance(node.args[0], ast.Constant) and isinstance(node.args[0].value, str):
            out.append(f"{rel}:{node.lineno}: sympy S() of a string")
        if name in LOADING_CALLS:
            out.append(f"{rel}:{node.lineno}: loads code with {name}")
        if name in STRING_COMMANDS and base == "subprocess":
            out.append(f"{rel}:{node.lineno}: subprocess.{name} of a command string")
        if name == "create_subprocess_shell":
            out.append(f"{rel}:{node.lineno}: shell subprocess")
        if name == "import_module" and rel not in IMPORT_MODULE_ALLOWED:
            out.append(f"{rel}:{node.lineno}: import_module outside the allowed registries")
        if name in ("run", "Popen", "call", "check_call", "check_output") and isinstance(node.func, ast.Attribute) \
                and _name(node.func.value) == "subprocess":
            if any(k.arg == "shell" and not (isinstance(k.value, ast.Constant) and k.value.value is False)
                   for k in node.keywords):
                out.append(f"{rel}:{node.lineno}: subprocess with shell=")
            if node.args and not isinstance(node.args[0], (ast.List, ast.Tuple, ast.Name)):
                out.append(f"{rel}:{node.lineno}: subprocess command is not an argument list")
    return out


def _sources():
    for folder in ("optlint", "checks"):
        for path in sorted((ROOT / folder).rglob("*.py")):
            yield path.relative_to(ROOT).as_posix(), path.read_text(encoding="utf-8")


def test_optlint_source_has_no_forbidden_calls():
    found = [v for rel, src in _sources() for v in violations(src, rel)]
    assert not found, "\n".join(found)


@pytest.mark.parametrize("sample, what", [
    ("eval(text)", "calls eval"),
    ("exec(code)", "calls exec"),
    ("compile(src, 'f', 'exec')", "calls compile"),
    ("import sympy\nsympy.sympify(s)", "calls sympify"),
    ("from sympy.parsing.sympy_parser import parse_expr\nparse_expr(s)", "calls parse_expr"),
    ("from sympy import S\nS('x + 1')", "S() of a string"),
    ("__import__(name)", "calls __import__"),
    ("import importlib\nimportlib.import_module(user_name)", "import_module outside"),
    ("import subprocess\nsubprocess.run(cmd_text, shell=True)", "shell="),
    ("import os\nos.system('ls')", "calls system"),
    ("import socket", "imports socket"),
    ("from urllib.request import urlopen", "imports urllib.request"),
    ("from urllib import request", "imports urllib.request"),
    ("import http.client", "imports http.client"),
    ("import requests\nrequests.get(url)", "imports requests"),
    ("import runpy\nrunpy.run_path(path)", "imports runpy"),
    ("from runpy import run_path", "imports runpy"),
    ("import importlib.util\nspec = importlib.util.spec_from_file_location('m', path)", "loads code with"),
    ("import importlib.util\nm = importlib.util.module_from_spec(spec)\nspec.loader.exec_module(m)", "loads code with"),
    ("from importlib.machinery import SourceFileLoader\nSourceFileLoader('m', path).load_module()", "loads code with"),
    ("import subprocess\nsubprocess.getoutput('git log ' + rev)", "command string"),
    ("import subprocess\nsubprocess.run('git log ' + rev)", "not an argument list"),
    ("import os\nos.execvp('sh', ['sh', '-c', text])", "calls execvp"),
    ("import asyncio\nasyncio.create_subprocess_shell(cmd)", "shell subprocess"),
])
def test_the_scan_catches_each_forbidden_call(sample, what):
    found = violations(sample)
    assert any(what in v for v in found), found


def test_parsing_with_ast_is_allowed():
    assert violations("import ast\nast.parse(text)") == []
    assert violations("import subprocess\nsubprocess.run(['git', 'diff'], capture_output=True)") == []


# -- behaviour ----------------------------------------------------------------------------------

# An invented ferry operator's fuel model whose import would leave traces: a marker file, a socket.
_TRACES = """\
import socket
import cvxpy as cp
from fuel_helpers import burn_rate

open({marker!r}, "w").write("imported")
socket.create_connection(("198.51.100.7", 80))
speed = cp.Variable(3, nonneg=True)
prob = cp.Problem(cp.Minimize(cp.sum(burn_rate(speed))), [speed > 4])
"""
_HELPER = """\
import cvxpy as cp
open({marker!r}, "w").write("helper imported")


def burn_rate(v):
    return cp.square(v)
"""


VAN = "import cvxpy as cp\nx = cp.Variable(2)\nprob = cp.Problem(cp.Minimize(cp.sum(x)), [x > 0])\n"


def test_checking_a_file_neither_imports_nor_runs_it_nor_its_helpers(tmp_path, monkeypatch):
    import socket
    import sys

    from optlint.engine import check_file

    marker, helper_marker = tmp_path / "ran.txt", tmp_path / "helper_ran.txt"
    (tmp_path / "ferry_fuel.py").write_text(_TRACES.format(marker=str(marker)))
    (tmp_path / "fuel_helpers.py").write_text(_HELPER.format(marker=str(helper_marker)))
    attempts = []

    def refuse(*args, **kwargs):
        attempts.append(args)
        raise OSError("no network in this test")

    monkeypatch.setattr(socket, "create_connection", refuse)
    monkeypatch.setattr(socket.socket, "connect", refuse)
    result = check_file(str(tmp_path / "ferry_fuel.py"))
    assert sorted(f.rule for f in result.findings) == ["strict-inequality"]
    assert str(tmp_path / "fuel_helpers.py") in result.dependencies   # the helper was read, as text
    assert not marker.exists() and not helper_marker.exists() and not attempts
    assert "ferry_fuel" not in sys.modules and "fuel_helpers" not in sys.modules


@pytest.mark.parametrize("value, why", [
    ('"/tmp/elsewhere/baseline.json"', "not the absolute path"),
    ('"../outside/baseline.json"', "leads outside it"),
    ('"ci/../../baseline.json"', "leads outside it"),
    ('"."', "leads outside it"),
    ('"linked/baseline.json"', "leads outside it"),
])
def test_a_baseline_outside_the_project_is_a_configuration_error(tmp_path, value, why):
    from conftest import run_cli

    project = tmp_path / "project"
    project.mkdir()
    (tmp_path / "outside").mkdir()
    (project / "linked").symlink_to(tmp_path / "outside")
    (project / "van.py").write_text(VAN)
    (project / "pyproject.toml").write_text(f"[tool.optlint]\nbaseline = {value}\n")
    for command in ("check", "baseline"):
        proc = run_cli(command, ".", cwd=project)
        assert proc.returncode == 2, proc.stdout + proc.stderr
        assert f"{project / 'pyproject.toml'}: key `tool.optlint.baseline`: expected a " in proc.stderr, proc.stderr
        assert why in proc.stderr and "Traceback" not in proc.stderr
    assert not list(tmp_path.rglob("baseline.json"))


def test_a_baseline_inside_the_project_is_written_there(tmp_path):
    from conftest import run_cli

    (tmp_path / "van.py").write_text(VAN)
    (tmp_path / "pyproject.toml").write_text('[tool.optlint]\nbaseline = "ci/../ci/known.json"\n')
    (tmp_path / "ci").mkdir()
    proc = run_cli("baseline", ".", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert json.loads((tmp_path / "ci" / "known.json").read_text())["entries"]


def test_the_cache_does_not_follow_a_link_out_of_the_project(tmp_path):
    from conftest import run_cli

    project, outside = tmp_path / "project", tmp_path / "outside"
    project.mkdir()
    outside.mkdir()
    (project / ".optlint_cache").symlink_to(outside)
    (project / "van.py").write_text(VAN)
    proc = run_cli("check", "--no-config", ".", cwd=project)
    assert proc.returncode == 1 and "strict-inequality" in proc.stdout, proc.stderr
    assert list(outside.iterdir()) == []
    # the same project with a real cache directory does write entries, inside it
    (project / ".optlint_cache").unlink()
    run_cli("check", "--no-config", ".", cwd=project)
    assert list((project / ".optlint_cache").rglob("*.json"))


def test_two_runs_give_byte_identical_json(tmp_path):
    from conftest import FIXTURES, run_cli

    # trial_allocation_grid: a witness search over a Min, whose sympy traversal followed string
    # hashing; under these two seeds it found different points before optlint.lift.preorder
    args = ("check", "--no-config", "--no-cache", "--format", "json", str(FIXTURES / "tour"),
            str(FIXTURES / "penalties" / "trial_allocation_grid.py"))
    first = run_cli(*args, "--jobs", "1", env={"PYTHONHASHSEED": "0"})
    second = run_cli(*args, "--jobs", "2", env={"PYTHONHASHSEED": "1"})
    assert first.returncode == second.returncode == 1, first.stderr + second.stderr
    assert json.loads(first.stdout)["findings"]
    assert first.stdout.encode() == second.stdout.encode()
