"""Inline acceptances and the baseline. Which lines are findings follows wf.py (B&V 2004 §4.2.1,
from memory); the comment syntax is tokenised as Python's tokenize module defines comments (a `#`
inside a string literal is not a comment: The Python Language Reference §2.1.3)."""

from __future__ import annotations

import json

from wf import NONCONVEX, STRICT, project, run, run_json, rules_of

ACCEPT = "  # optlint: accept strict-inequality -- the solver's >= is what we mean here"


def _lines(text: str, line: int, suffix: str) -> str:
    rows = text.splitlines()
    rows[line - 1] += suffix
    return "\n".join(rows) + "\n"


def test_acceptance_on_the_finding_line(tmp_path, capsys):
    project(tmp_path, {"van.py": _lines(STRICT, 3, ACCEPT)})
    code, doc = run_json(capsys, "--no-config", str(tmp_path))
    assert code == 0 and doc["findings"] == [] and doc["accepted_inline"] == 1
    assert rules_of(run_json(capsys, "--no-accept-comments", str(tmp_path))[1]) == [("van.py", "strict-inequality")]


def test_acceptance_on_the_first_line_of_a_multiline_statement(tmp_path, capsys):
    text = ("import cvxpy as cp\ncrates = cp.Variable(4, nonneg=True)\ncons = [" + ACCEPT.strip() + "\n"
            "    cp.sum(crates) <= 40,\n    crates > 1,\n]\n")
    project(tmp_path, {"van.py": text})
    assert run_json(capsys, "--no-config", str(tmp_path))[1]["findings"] == []
    # the same comment two statements away accepts nothing: the finding stays, the comment is reported
    moved = "import cvxpy as cp  " + ACCEPT.strip() + "\n" + "\n".join(STRICT.splitlines()[1:]) + "\n"
    project(tmp_path, {"van.py": moved})
    assert rules_of(run_json(capsys, "--no-config", str(tmp_path))[1]) == [("van.py", "strict-inequality"),
                                                                         ("van.py", "unused-suppression")]


def test_several_ids_and_a_missing_reason(tmp_path, capsys):
    both = STRICT.replace("cons = [cp.sum(crates) <= 40, crates > 1]",
                          "cons = [cp.sum(crates) <= 40, crates > 1, cp.square(crates[0]) == 4]")
    project(tmp_path, {"van.py": _lines(both, 3, "  # optlint: accept strict-inequality, nonaffine-equality")})
    code, doc = run_json(capsys, "--no-config", str(tmp_path))
    assert [(f["rule"], f["severity"], f["line"]) for f in doc["findings"]] == [
        ("suppression-without-reason", "warning", 3)]
    assert code == 1 and doc["accepted_inline"] == 2


def test_unused_unknown_and_malformed_acceptances_are_notes(tmp_path, capsys):
    text = (STRICT.replace("crates > 1", "crates >= 1")
            + "x_note = 1  # optlint: accept nonconvex-objectiv -- typo in the id\n"
            + "y_note = 2  # optlint: ignore everything\n"
            + "z_text = '# optlint: accept strict-inequality'\n")
    project(tmp_path, {"van.py": _lines(text, 3, ACCEPT)})
    code, doc = run_json(capsys, "--no-config", str(tmp_path))
    found = {(f["line"], f["rule"], f["severity"]) for f in doc["findings"]}
    assert found == {(3, "unused-suppression", "note"), (5, "unused-suppression", "note"),
                     (6, "unused-suppression", "note")}
    messages = {f["line"]: f["message"] for f in doc["findings"]}
    assert "did you mean 'nonconvex-objective'" in messages[5] and "not understood" in messages[6]
    assert code == 0  # notes are below the default threshold


def test_baseline_keeps_old_findings_quiet_across_line_shifts(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT, "fit.py": NONCONVEX}, "[tool.optlint]\n")
    code, out, _ = run(capsys, "baseline", str(tmp_path))
    assert code == 0 and "wrote 2 findings" in out
    base = json.loads((tmp_path / "optlint-baseline.json").read_text())
    assert base["format"] == "optlint-baseline" and len(base["entries"]) == 2
    baseline = str(tmp_path / "optlint-baseline.json")
    code, doc = run_json(capsys, "--baseline", baseline, str(tmp_path))
    assert code == 0 and doc["findings"] == [] and doc["baseline"]["matched"] == 2

    # lines inserted above both findings, and a comment added on the finding's line: still baselined
    shifted = '"""Van loading, revised."""\n\nDEPOT = "north"\n' + STRICT.replace("crates > 1]", "crates > 1]  # lower bound")
    project(tmp_path, {"van.py": shifted})
    code, doc = run_json(capsys, "--baseline", baseline, str(tmp_path))
    assert code == 0 and doc["findings"] == [], doc["findings"]

    # a second, new strict inequality is reported; the old one stays baselined
    project(tmp_path, {"van.py": shifted + "more = [crates[0] < 9]\n"})
    code, doc = run_json(capsys, "--baseline", baseline, str(tmp_path))
    assert code == 1 and [(f["rule"], f["line"]) for f in doc["findings"]] == [("strict-inequality", 8)]

    # fixing the baselined model leaves its entry stale, counted in the summary
    project(tmp_path, {"fit.py": NONCONVEX.replace("Maximize", "Minimize")})
    code, out, _ = run(capsys, "check", "--baseline", baseline, str(tmp_path))
    assert "1 baseline entry no longer match" in out
    assert run_json(capsys, "--baseline", baseline, str(tmp_path))[1]["baseline"]["unmatched_entries"] == 1


def test_bad_baseline_file_exits_2(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT})
    (tmp_path / "b.json").write_text('{"entries": []}')
    code, _, err = run(capsys, "check", "--baseline", str(tmp_path / "b.json"), str(tmp_path))
    assert code == 2 and "not an optlint baseline" in err
    code, _, err = run(capsys, "check", "--baseline", str(tmp_path / "missing.json"), str(tmp_path))
    assert code == 2 and "missing.json" in err
