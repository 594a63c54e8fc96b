"""Plugins through the `optlint.rules` entry-point group, and the real pre-commit hook.

The plugin is a real wheel (the binary distribution format of PEP 427, with entry points as the
packaging specifications define them: fact of the trade) built here and installed by pip into a
temporary --target directory, so the test environment is left as it was. The pre-commit test runs
the `pre-commit` package from PyPI: `pre-commit try-repo REPO HOOK --files ...` is its documented
way to try a hook repository without a config file.
"""

from __future__ import annotations

import base64
import hashlib
import os
import shutil
import subprocess
import sys
import zipfile

import pytest

from conftest import ROOT, run_cli
from wf import CLEAN, project

PLUGIN = '''\
"""acme-maximise-used: a house rule of an invented team that wants every model stated as a minimisation."""
from optlint.findings import Finding

ID = "acme-maximise-used"
SEVERITY = "warning"
SUMMARY = "Objective stated as a maximisation (house style: minimise the negation)."
RATIONALE = "The team's reports compare objective values, so every model minimises."
REFERENCE = "Acme modelling handbook (invented for this test)."
BAD = "prob = cp.Problem(cp.Maximize(revenue))"
GOOD = "prob = cp.Problem(cp.Minimize(-revenue))"


def check(model, analysis):
    for objective in model.objectives:
        if objective.sense == "maximise":
            yield Finding(ID, objective.site, "maximisation; this team states models as minimisations")
'''


def _wheel(directory) -> str:
    name = "acme_optlint_rules-0.1-py3-none-any.whl"
    files = {
        "acme_optlint_rules.py": PLUGIN,
        "acme_optlint_rules-0.1.dist-info/METADATA": "Metadata-Version: 2.1\nName: acme-optlint-rules\nVersion: 0.1\n",
        "acme_optlint_rules-0.1.dist-info/WHEEL": "Wheel-Version: 1.0\nGenerator: hand\nRoot-Is-Purelib: true\nTag: py3-none-any\n",
        "acme_optlint_rules-0.1.dist-info/entry_points.txt": "[optlint.rules]\nmaximise = acme_optlint_rules\n",
    }
    record = []
    for path, text in files.items():
        digest = base64.urlsafe_b64encode(hashlib.sha256(text.encode()).digest()).rstrip(b"=").decode()
        record.append(f"{path},sha256={digest},{len(text.encode())}")
    record.append("acme_optlint_rules-0.1.dist-info/RECORD,,")
    files["acme_optlint_rules-0.1.dist-info/RECORD"] = "\n".join(record) + "\n"
    with zipfile.ZipFile(directory / name, "w") as zf:
        for path, text in files.items():
            zf.writestr(path, text)
    return str(directory / name)


def test_plugin_rule_is_discovered_and_runs(tmp_path):
    wheel = _wheel(tmp_path)
    target = tmp_path / "site"
    subprocess.run([sys.executable, "-m", "pip", "install", "--quiet", "--no-deps", "--no-index",
                    "--target", str(target), wheel], check=True, capture_output=True, timeout=120)
    project(tmp_path / "proj", {"sales.py": CLEAN.replace("cp.Minimize(cp.sum_squares(crates - 5))",
                                                          "cp.Maximize(cp.sum(crates))")})
    env = {"PYTHONPATH": str(target)}
    proc = run_cli("check", "--no-config", str(tmp_path / "proj"), env=env)
    assert proc.returncode == 1 and "acme-maximise-used" in proc.stdout, proc.stdout + proc.stderr
    assert "acme-maximise-used" in run_cli("rules", env=env).stdout
    assert "Acme modelling handbook" in run_cli("explain", "acme-maximise-used", env=env).stdout
    # without the plugin on the path, the same file is clean
    assert run_cli("check", "--no-config", str(tmp_path / "proj")).returncode == 0


def _snapshot(dest) -> None:
    """This checkout as a git repository of its own (tracked or not, as the work tree has it now)."""
    ignore = shutil.ignore_patterns("__pycache__", "*.egg-info", ".git", ".pytest_cache", ".hypothesis")
    dest.mkdir()
    for name in ("pyproject.toml", "README.md", ".pre-commit-hooks.yaml"):
        shutil.copy(ROOT / name, dest / name)
    for name in ("optlint", "checks"):
        shutil.copytree(ROOT / name, dest / name, ignore=ignore)
    for args in (["init", "-q"], ["add", "-A"], ["commit", "-qm", "snapshot"]):
        subprocess.run(["git", "-c", "user.name=t", "-c", "user.email=t@example.invalid", *args], cwd=dest,
                       check=True, capture_output=True)


@pytest.mark.slow
def test_pre_commit_hook_fails_on_a_bad_model_and_passes_a_clean_one(tmp_path):
    pre_commit = shutil.which("pre-commit", path=os.path.dirname(sys.executable)) or shutil.which("pre-commit")
    assert pre_commit, "install the test extra: pip install -e '.[test]' (it brings pre-commit)"
    _snapshot(tmp_path / "optlint-src")
    work = tmp_path / "work"
    project(work, {"models/bad_van.py": "import cvxpy as cp\nx = cp.Variable(3)\n"
                                        "prob = cp.Problem(cp.Minimize(cp.sum(x)), [x > 0])\n",
                   "models/ok_van.py": CLEAN,
                   "models/unrelated_bad.py": "import cvxpy as cp\nx = cp.Variable(2)\n"
                                              "prob = cp.Problem(cp.Maximize(cp.norm(x, 2)), [x <= 1])\n"})
    subprocess.run(["git", "init", "-q"], cwd=work, check=True)
    subprocess.run(["git", "add", "-A"], cwd=work, check=True)
    env = dict(os.environ, PRE_COMMIT_HOME=str(tmp_path / "pc-home"), NO_COLOR="1")
    env.pop("PYTHONPATH", None)

    def hook(*files):
        return subprocess.run([pre_commit, "try-repo", str(tmp_path / "optlint-src"), "optlint", "--files", *files],
                              cwd=work, env=env, capture_output=True, text=True, timeout=110)

    bad = hook("models/bad_van.py")
    assert bad.returncode == 1, bad.stdout + bad.stderr
    assert "strict-inequality" in bad.stdout and "bad_van.py" in bad.stdout
    assert "unrelated_bad.py" not in bad.stdout and "1 file checked" in bad.stdout   # only the given file
    ok = hook("models/ok_van.py")
    assert ok.returncode == 0, ok.stdout + ok.stderr
    assert "Passed" in ok.stdout
