"""Changed-files mode (git, in a temporary repository) and the terminal: progress bar on a terminal
only, per-rule counts, quiet mode, no colour under NO_COLOR (https://no-color.org convention, a
fact of the trade) or when the output is not a terminal. ANSI SGR escapes start with ESC '['
(ECMA-48, fact of the trade)."""

from __future__ import annotations

import io
import subprocess

import pytest

from conftest import run_cli
from optlint.report.text import make_console, progress_console, with_progress
from wf import CLEAN, NONCONVEX, STRICT, project, run, run_json, rules_of


def _git(cwd, *args):
    subprocess.run(["git", "-c", "user.name=t", "-c", "user.email=t@example.invalid", *args], cwd=cwd,
                   check=True, capture_output=True)


@pytest.fixture
def repo(tmp_path):
    project(tmp_path, {"a_van.py": STRICT, "b_fit.py": NONCONVEX, "c_ok.py": CLEAN}, "[tool.optlint]\n")
    _git(tmp_path, "init", "-q")
    _git(tmp_path, "add", "-A")
    _git(tmp_path, "commit", "-qm", "start")
    return tmp_path


def test_changed_since_checks_only_changed_and_untracked_files(repo, capsys):
    assert run_json(capsys, "--changed-since", "HEAD", str(repo))[1]["findings"] == []
    (repo / "c_ok.py").write_text(CLEAN.replace("== 30", "== 31") + "extra = [crates[1] < 3]\n")
    (repo / "d_new.py").write_text(STRICT)
    doc = run_json(capsys, "--changed-since", "HEAD", str(repo))[1]
    assert rules_of(doc) == [("c_ok.py", "strict-inequality"), ("d_new.py", "strict-inequality")]
    assert len(rules_of(run_json(capsys, str(repo))[1])) == 4   # without the mode, every file


@pytest.mark.parametrize("rev", ["--output=/tmp/x", "HEAD;rm -rf /", "a..b", "no-such-branch", ""])
def test_bad_revisions_exit_2(repo, capsys, rev):
    code, _, err = run(capsys, "check", "--changed-since", rev, str(repo))
    assert code == 2 and "--changed-since" in err


class Tty(io.StringIO):
    def isatty(self):
        return True


def test_progress_bar_only_on_a_terminal(monkeypatch):
    monkeypatch.setenv("TERM", "xterm-256color")
    assert progress_console(io.StringIO()) is None                     # not a terminal: no bar
    stream = Tty()
    console = progress_console(stream)
    assert console is not None
    from types import SimpleNamespace

    files = [f"f{i}.py" for i in range(25)]

    def work(on_result):
        out = []
        for p in files:
            out.append(p.upper())
            on_result(SimpleNamespace(path=p))
        return out

    done = with_progress(console, files, work)
    assert done == [f"F{i}.PY" for i in range(25)]
    assert "25/25" in stream.getvalue()


def test_no_color_env_and_pipes(tmp_path, monkeypatch):
    from optlint.engine import check_file
    from optlint.report import text

    project(tmp_path, {"van.py": STRICT})
    result = check_file(str(tmp_path / "van.py"))
    monkeypatch.setenv("TERM", "xterm-256color")
    for var in ("NO_COLOR", "FORCE_COLOR", "TTY_COMPATIBLE", "TTY_INTERACTIVE"):
        monkeypatch.delenv(var, raising=False)
    out = Tty()
    text.render(make_console(out), [result], 0, [])
    assert "\x1b[" in out.getvalue()                                   # colour on a terminal
    monkeypatch.setenv("NO_COLOR", "1")
    out = Tty()
    text.render(make_console(out), [result], 0, [])
    assert "\x1b[33m" not in out.getvalue() and "\x1b[1;31m" not in out.getvalue()
    out = Tty()
    monkeypatch.delenv("NO_COLOR")
    text.render(make_console(out, no_color=True), [result], 0, [])     # --no-color
    assert "\x1b[33m" not in out.getvalue()
    proc = run_cli("check", str(tmp_path), env={"NO_COLOR": ""})      # a pipe: never colour
    assert "\x1b[" not in proc.stdout


def test_per_rule_counts_and_quiet(tmp_path, capsys):
    project(tmp_path, {"a.py": STRICT, "b.py": STRICT, "c.py": NONCONVEX})
    _, out, _ = run(capsys, "check", "--no-config", str(tmp_path))
    assert "     2  strict-inequality" in out and "     1  nonconvex-objective" in out
    assert "3 findings (1 error, 2 warnings)" in out
    _, out, _ = run(capsys, "check", "--no-config", "--quiet", str(tmp_path))
    assert out.strip().splitlines() == [out.strip()] and out.startswith("optlint: 3 findings")
