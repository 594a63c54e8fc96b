"""optlint's own failures: an exception in one rule or one file is an ``internal-error`` finding
for that file, the run goes on, and the exit code is 3 (the run was incomplete).

The failures are real exceptions raised in a fresh process: a plugin rule (a distribution found
through the ``optlint.rules`` entry-point group, laid out as an installed ``.dist-info`` directory
on PYTHONPATH — the layout importlib.metadata reads, a fact of the packaging specifications) that
divides by zero on maximised objectives, and a helper script that makes one dialect's recogniser
raise before calling the command line's ``main``. The models are an invented ice-cream kiosk's
stock plan; ``x > 0`` is a strict inequality (Boyd & Vandenberghe 2004 §4.1.1, from memory).
"""

from __future__ import annotations

import json
import sys
import textwrap

from conftest import run_cli

CRASHY = '''\
"""kiosk-crashy: a broken house rule (invented for this test)."""
ID = "kiosk-crashy"
SEVERITY = "warning"
SUMMARY = "A house rule that fails on maximised objectives."
RATIONALE = "It divides by the number of minimised objectives."
REFERENCE = "Kiosk handbook (invented)."
BAD = "prob = cp.Problem(cp.Maximize(revenue))"
GOOD = "prob = cp.Problem(cp.Minimize(cost))"


def check(model, analysis):
    minimised = sum(1 for o in model.objectives if o.sense == "minimise")
    for objective in model.objectives:
        share = 1 / minimised   # ZeroDivisionError for a model that only maximises
        yield from ()
'''

MAXIMISE = ("import cvxpy as cp\nscoops = cp.Variable(4, nonneg=True)\n"
            "prob = cp.Problem(cp.Maximize(cp.sum(scoops)), [cp.sum(scoops) <= 80, scoops > 2])\n")
MINIMISE = ("import cvxpy as cp\nscoops = cp.Variable(4)\n"
            "prob = cp.Problem(cp.Minimize(cp.sum_squares(scoops - 20)), [scoops > 0])\n")


def _plugin(site):
    site.mkdir()
    (site / "kiosk_crashy.py").write_text(CRASHY)
    info = site / "kiosk_crashy-0.1.dist-info"
    info.mkdir()
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: kiosk-crashy\nVersion: 0.1\n")
    (info / "entry_points.txt").write_text("[optlint.rules]\ncrashy = kiosk_crashy\n")
    return {"PYTHONPATH": str(site)}


def _tree(root):
    root.mkdir()
    (root / "a_festival.py").write_text(MAXIMISE)
    (root / "b_weekday.py").write_text(MINIMISE)
    return root


def _findings(stdout):
    return sorted((f["path"].rsplit("/", 1)[-1], f["rule"], f["line"]) for f in json.loads(stdout)["findings"])


def test_a_failing_rule_costs_its_own_findings_only_and_the_run_exits_3(tmp_path):
    env = _plugin(tmp_path / "site")
    tree = _tree(tmp_path / "kiosk")
    proc = run_cli("check", "--no-config", "--format", "json", "--jobs", "1", str(tree), cwd=tmp_path, env=env)
    assert proc.returncode == 3, proc.stdout + proc.stderr
    assert "Traceback" not in proc.stderr
    assert proc.stderr == "optlint: the run was incomplete: 1 file was not fully checked (internal-error)\n"
    assert _findings(proc.stdout) == [("a_festival.py", "internal-error", 1),
                                      ("a_festival.py", "strict-inequality", 3),   # the other rules still ran
                                      ("b_weekday.py", "strict-inequality", 3)]
    (crash,) = [f for f in json.loads(proc.stdout)["findings"] if f["rule"] == "internal-error"]
    assert crash["message"].startswith("optlint failed on this file (rule kiosk-crashy: ZeroDivisionError in "
                                       "kiosk_crashy.py:14): division by zero.")
    assert crash["evidence"] == {"exception": "ZeroDivisionError", "rule": "kiosk-crashy"}

    # whatever severity the project gives it, the run stays incomplete; SARIF says so too
    proc = run_cli("check", "--no-config", "--severity", "internal-error=note", "--fail-on", "error",
                   "--format", "sarif", str(tree), cwd=tmp_path, env=env)
    assert proc.returncode == 3, proc.stderr
    assert json.loads(proc.stdout)["runs"][0]["invocations"][0]["executionSuccessful"] is False
    # the failing file's result is not cached: the second run above failed again the same way
    cached = [json.loads(p.read_text()) for p in (tmp_path / ".optlint_cache").rglob("*.json")]
    assert cached and not any(f["rule"] == "internal-error" for c in cached for f in c["result"]["findings"])

    # a baseline that recorded the internal error does not make the run complete
    base = tmp_path / "known.json"
    assert run_cli("baseline", "--no-config", "-o", str(base), str(tree), cwd=tmp_path, env=env).returncode == 0
    proc = run_cli("check", "--no-config", "--baseline", str(base), str(tree), cwd=tmp_path, env=env)
    assert proc.returncode == 3 and "incomplete" in proc.stderr, proc.stdout + proc.stderr

    # without the plugin the same tree is complete: findings only, exit 1
    proc = run_cli("check", "--no-config", "--no-cache", str(tree), cwd=tmp_path)
    assert proc.returncode == 1 and "incomplete" not in proc.stderr


def test_a_file_whose_recogniser_raises_is_an_internal_error_and_the_next_file_is_checked(tmp_path):
    tree = _tree(tmp_path / "kiosk")
    script = tmp_path / "run_with_broken_dialect.py"
    script.write_text(textwrap.dedent('''\
        import sys
        from optlint import cli
        from optlint.dialects import load

        dsl = load("dsl")
        original = dsl.recognise

        def recognise(wrapper, path, **kw):
            if path.endswith("a_festival.py"):
                raise KeyError("scoops")  # stands for a bug in a recogniser
            return original(wrapper, path, **kw)

        dsl.recognise = recognise
        sys.exit(cli.main(sys.argv[1:]))
        '''))
    import subprocess

    proc = subprocess.run([sys.executable, str(script), "check", "--no-config", "--no-cache", "--jobs", "1",
                           "--format", "json", str(tree)], capture_output=True, text=True, timeout=300,
                          cwd=str(tmp_path))
    assert proc.returncode == 3, proc.stdout + proc.stderr
    assert "Traceback" not in proc.stderr
    assert _findings(proc.stdout) == [("a_festival.py", "internal-error", 1), ("b_weekday.py", "strict-inequality", 3)]
    (crash,) = [f for f in json.loads(proc.stdout)["findings"] if f["rule"] == "internal-error"]
    assert "KeyError in run_with_broken_dialect.py:10" in crash["message"]
