"""`optlint rewrite` as a user runs it, in a fresh process: preview, --apply, exit codes."""

from __future__ import annotations

import shutil

from conftest import FIXTURES, ROOT

GOLDEN = ROOT / "tests" / "rewrite" / "golden"


def test_preview_changes_nothing_then_apply_then_nothing_left(tmp_path, cli):
    target = tmp_path / "bakery_relay_point.py"
    shutil.copy(FIXTURES / "rewrite" / target.name, target)
    before = target.read_bytes()

    preview = cli("rewrite", "--no-config", target.name, cwd=tmp_path)
    assert preview.returncode == 1, preview.stderr
    assert preview.stdout.startswith(f"--- {target.name}\n+++ {target.name}\n@@ ")
    assert "-    to_ovens = cp.sqrt(cp.sum_squares(relay - ovens))\n" in preview.stdout
    assert "+    to_ovens = cp.norm(relay - ovens, 2)\n" in preview.stdout
    assert target.read_bytes() == before

    applied = cli("rewrite", "--no-config", "--apply", target.name, cwd=tmp_path)
    assert applied.returncode == 0, applied.stderr
    assert applied.stdout == ""
    assert target.read_bytes() == (GOLDEN / target.name).read_bytes()

    again = cli("rewrite", "--no-config", target.name, cwd=tmp_path)
    assert again.returncode == 0 and again.stdout == ""
    assert "nothing to rewrite" in again.stderr


def test_suggestions_that_stay_are_named_on_stderr(tmp_path, cli):
    target = tmp_path / "survey.py"
    shutil.copy(FIXTURES / "evidence" / "survey_drone.py", target)
    result = cli("rewrite", "--no-config", target.name, cwd=tmp_path)
    assert result.returncode == 0 and result.stdout == ""
    assert f"{target.name}:24: undisciplined-convex left as a suggestion: cannot show" in result.stderr
    assert "Traceback" not in result.stderr


def test_usage_errors_exit_2(tmp_path, cli):
    missing = cli("rewrite", "--no-config", "no_such_dir", cwd=tmp_path)
    assert missing.returncode == 2 and "no_such_dir" in missing.stderr
    unknown = cli("rewrite", "--no-config", "--severity", "no-such-rule=off", ".", cwd=tmp_path)
    assert unknown.returncode == 2 and "unknown rule" in unknown.stderr
    option = cli("rewrite", "--frobnicate", cwd=tmp_path)
    assert option.returncode == 2
