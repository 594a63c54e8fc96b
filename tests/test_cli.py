"""The command line as users run it: JSON contract, exit codes, rules/explain, robustness of a run."""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import jsonschema
import pytest

from conftest import FIXTURES, ROOT, run_cli
from optlint import __version__

# The JSON output contract, as the README states it (more keys are allowed).
FINDING = {
    "type": "object",
    "required": ["path", "line", "column", "end_line", "end_column", "rule", "severity", "message", "evidence"],
    "properties": {
        "path": {"type": "string"},
        "line": {"type": "integer", "minimum": 1},
        "column": {"type": "integer", "minimum": 1},
        "end_line": {"type": "integer", "minimum": 1},
        "end_column": {"type": "integer", "minimum": 1},
        "rule": {"type": "string"},
        "severity": {"enum": ["error", "warning", "note"]},
        "message": {"type": "string", "minLength": 1},
        "evidence": {"type": "object"},
    },
}
REPORT = {
    "type": "object",
    "required": ["optlint", "findings", "files_checked", "files_skipped"],
    "properties": {
        "optlint": {"type": "string"},
        "findings": {"type": "array", "items": FINDING},
        "files_checked": {"type": "integer", "minimum": 0},
        "files_skipped": {"type": "integer", "minimum": 0},
    },
}


def _json(proc) -> dict:
    doc = json.loads(proc.stdout)
    jsonschema.validate(doc, REPORT)
    return doc


def test_json_output_validates_and_matches_markers():
    from markers import expected_findings

    proc = run_cli("check", "--format", "json", "fixtures/dsl")
    assert proc.returncode == 1, proc.stderr
    doc = _json(proc)
    assert doc["optlint"] == __version__
    reported = {(f["path"], f["line"], f["rule"]) for f in doc["findings"]}
    expected = set()
    for path in sorted((FIXTURES / "dsl").glob("*.py")):
        for (line, rule) in expected_findings(path.read_text(encoding="utf-8")):
            expected.add((os.path.join("fixtures/dsl", path.name), line, rule))
    assert reported == expected
    for f in doc["findings"]:
        assert f["end_line"] >= f["line"]
    assert doc["files_checked"] == len(list((FIXTURES / "dsl").glob("*.py")))


def test_paths_are_joined_as_given():
    proc = run_cli("check", "--format", "json", str(FIXTURES / "tour"))
    doc = _json(proc)
    assert doc["findings"]
    for f in doc["findings"]:
        assert f["path"].startswith(str(FIXTURES / "tour") + os.sep)


def test_exit_codes(tmp_path):
    clean = tmp_path / "clean.py"
    clean.write_text("import cvxpy as cp\nx = cp.Variable(3)\nprob = cp.Problem(cp.Minimize(cp.norm(x, 1)), [x >= 0])\n")
    strict = tmp_path / "strict.py"
    strict.write_text("import cvxpy as cp\nx = cp.Variable(3)\nprob = cp.Problem(cp.Minimize(cp.sum(x)), [x > 0])\n")
    assert run_cli("check", str(clean)).returncode == 0
    assert run_cli("check", str(strict)).returncode == 1                    # warning >= default threshold
    assert run_cli("check", "--fail-on", "error", str(strict)).returncode == 0
    assert run_cli("check", str(tmp_path / "missing")).returncode == 2
    assert run_cli("check", "--format", "xml", str(clean)).returncode == 2
    assert run_cli("frobnicate").returncode == 2


def test_syntax_error_among_good_files(tmp_path):
    shutil.copy(FIXTURES / "dsl" / "broken_syntax.py", tmp_path / "a_broken.py")
    shutil.copy(FIXTURES / "dsl" / "drone_trajectory.py", tmp_path / "b_drone.py")
    shutil.copy(FIXTURES / "dsl" / "greenhouse_mpc.py", tmp_path / "c_greenhouse.py")
    doc = _json(run_cli("check", "--format", "json", str(tmp_path)))
    by_file = {}
    for f in doc["findings"]:
        by_file.setdefault(Path(f["path"]).name, []).append(f["rule"])
    assert by_file["a_broken.py"] == ["syntax-error"]
    assert sorted(by_file["b_drone.py"]) == ["nonaffine-equality", "nonconvex-inequality"]
    assert "c_greenhouse.py" not in by_file
    assert doc["files_checked"] == 3


def test_prefilter_skips_files_without_models(tmp_path, monkeypatch):
    """300 plain Python files: none is parsed, all are counted as skipped."""
    import libcst

    from optlint import engine
    from optlint.discover import discover

    for i in range(300):
        (tmp_path / f"util_{i:03d}.py").write_text(
            f'"""helper {i}"""\nimport numpy as np\n\n\ndef scale_{i}(v):\n    return np.asarray(v) * {i} <= 3\n')
    parsed = []
    real_parse = libcst.parse_module
    monkeypatch.setattr(libcst, "parse_module", lambda *a, **k: parsed.append(1) or real_parse(*a, **k))
    files, problems = discover([str(tmp_path)])
    results = [engine.check_file(p) for p in files]
    assert len(files) == 300 and not problems
    assert not parsed
    assert all(not r.checked for r in results)
    doc = _json(run_cli("check", "--format", "json", str(tmp_path)))
    assert doc["files_skipped"] == 300 and doc["files_checked"] == 0 and doc["findings"] == []


def test_analysed_code_is_never_imported_or_run(tmp_path):
    """hostile_import.py writes a file and raises SystemExit at import; optlint only reads it."""
    marker = Path("/tmp/optlint_was_imported")
    if marker.exists():
        marker.unlink()
    shutil.copy(FIXTURES / "dsl" / "hostile_import.py", tmp_path / "hostile_import.py")
    proc = run_cli("check", "--format", "json", str(tmp_path), cwd=tmp_path)
    doc = _json(proc)
    assert [f["rule"] for f in doc["findings"]] == ["nonconvex-inequality"]
    assert not marker.exists()
    assert "hostile_import" not in proc.stderr


def test_rules_and_explain():
    proc = run_cli("rules")
    assert proc.returncode == 0
    listed = {line.split()[0] for line in proc.stdout.splitlines()}
    assert {"nonconvex-objective", "nonaffine-equality", "nonconvex-inequality", "strict-inequality",
            "unknown-curvature", "syntax-error", "model-skipped", "nonconvex-penalty", "weight-sign",
            "weight-sign-unknown", "degenerate-constraint", "multiplier-sign"} <= listed
    for rule in sorted(listed):
        text = run_cli("explain", rule).stdout
        assert text.startswith(rule) and "Reference:" in text and "Flagged:" in text and "Fine:" in text
    bad = run_cli("explain", "nonconvex-objectiv")
    assert bad.returncode == 2 and "did you mean nonconvex-objective" in bad.stderr


def test_text_report_is_plain_without_a_terminal():
    proc = run_cli("check", "fixtures/tour")
    assert proc.returncode == 1
    assert "\x1b[" not in proc.stdout
    assert "nonaffine-equality" in proc.stdout
    last = proc.stdout.strip().splitlines()[-1]
    assert last.startswith("optlint: ") and "checked" in last


def test_version_and_module_entry():
    proc = run_cli("--version")
    assert proc.returncode == 0 and proc.stdout.strip() == f"optlint {__version__}"


def test_derive_prints_the_tree_at_a_line():
    proc = run_cli("derive", "fixtures/tour/meters/calibration.py:21")
    assert proc.returncode == 0
    assert "objective: needs convex" in proc.stdout and "sqrt" in proc.stdout and "leaf-variable" in proc.stdout
    assert run_cli("derive", "fixtures/tour/meters/calibration.py:2").returncode == 1
    assert run_cli("derive", "no/such/file.py:3").returncode == 2
    assert run_cli("derive", "fixtures/tour/meters/calibration.py").returncode == 2
