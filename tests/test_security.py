"""optlint never runs the code it reads: an AST scan of optlint's own source for forbidden calls.

Forbidden anywhere in optlint/ and checks/: eval, exec, compile; sympy's sympify / parse_expr /
S(<str>) (they evaluate text); __import__ and importlib.import_module / import_module of anything
but a module name written in our own source; subprocess with shell=True or a command that is not
a list; os.system / os.popen; network modules. ``ast.parse`` is allowed (it only parses) and so is
subprocess with a literal argument list (the git calls of changed-files mode). The scanner is
tested on samples that contain each forbidden call, so it can be seen to fail (the test's check
is common practice for code-execution reviews, not a standard).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from conftest import ROOT

BUILTIN_CALLS = {"eval", "exec", "compile", "__import__"}          # as plain names or builtins.<name>
ANYWHERE_CALLS = {"sympify", "parse_expr"}                          # however they are reached
OS_CALLS = {"system", "popen", "execv", "execve", "spawnv"}         # os.<name>
FORBIDDEN_MODULES = {"socket", "http", "requests", "ftplib", "smtplib", "xmlrpc", "urllib.request"}
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
])
def test_the_scan_catches_each_forbidden_call(sample, what):
    found = violations(sample)
    assert any(what in v for v in found), found


def test_parsing_with_ast_is_allowed():
    assert violations("import ast\nast.parse(text)") == []
    assert violations("import subprocess\nsubprocess.run(['git', 'diff'], capture_output=True)") == []
