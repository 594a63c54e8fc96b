"""[tool.optlint] configuration: every key changes the run, every mistake exits 2 naming the key.

The TOML syntax is TOML 1.0 (fact of the trade); the expected verdicts follow the convex-problem
form of Boyd & Vandenberghe 2004 §4.2.1 (from memory), as in wf.py.
"""

from __future__ import annotations

import pytest

from optlint.config import ConfigError, DeclaredAtom, find_config, load_config
from optlint.plugins import registry
from wf import CLEAN, NONCONVEX, STRICT, project, run, run_json, rules_of


def test_found_by_walking_up_from_the_checked_path(tmp_path, capsys):
    project(tmp_path, {"models/van.py": STRICT}, '[tool.optlint]\nseverity = {"strict-inequality" = "off"}\n')
    assert find_config([str(tmp_path / "models" / "van.py")]) == str(tmp_path / "pyproject.toml")
    assert run_json(capsys, str(tmp_path / "models"))[1]["findings"] == []
    # a pyproject.toml without [tool.optlint] nearer to the file does not stop the walk
    (tmp_path / "models" / "pyproject.toml").write_text("[project]\nname = 'x'\n")
    assert find_config([str(tmp_path / "models")]) == str(tmp_path / "pyproject.toml")
    # --no-config ignores it
    assert rules_of(run_json(capsys, "--no-config", str(tmp_path / "models"))[1]) == [("van.py", "strict-inequality")]


def test_config_given_on_the_command_line(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT})
    (tmp_path / "strict-off.toml").write_text('[tool.optlint]\nseverity = {"strict-inequality" = "off"}\n')
    assert run_json(capsys, "--config", str(tmp_path / "strict-off.toml"), str(tmp_path))[1]["findings"] == []
    code, _, err = run(capsys, "check", "--config", str(tmp_path / "nope.toml"), str(tmp_path))
    assert code == 2 and "nope.toml" in err


def test_fail_on_and_command_line_override(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT}, '[tool.optlint]\nfail-on = "error"\n')
    assert run(capsys, "check", str(tmp_path))[0] == 0            # warning below the file's threshold
    assert run(capsys, "check", "--fail-on", "warning", str(tmp_path))[0] == 1   # CLI overrides the file


def test_include_and_exclude(tmp_path, capsys):
    project(tmp_path, {"models/van.py": STRICT, "legacy/old.py": NONCONVEX, "scratch/try.py": NONCONVEX},
            '[tool.optlint]\ninclude = ["models/**", "legacy/**"]\nexclude = ["legacy"]\n')
    assert rules_of(run_json(capsys, str(tmp_path))[1]) == [("van.py", "strict-inequality")]
    # --include replaces the file's include list; --exclude adds to its exclude list
    doc = run_json(capsys, "--include", "scratch/*.py", str(tmp_path))[1]
    assert rules_of(doc) == [("try.py", "nonconvex-objective")]
    assert run_json(capsys, "--exclude", "models/**", str(tmp_path))[1]["findings"] == []
    # files named explicitly (as pre-commit passes them) honour exclude too
    assert run_json(capsys, str(tmp_path / "legacy" / "old.py"))[1]["findings"] == []


def test_dialects(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT}, '[tool.optlint]\ndialects = []\n')
    doc = run_json(capsys, str(tmp_path))[1]
    assert doc["findings"] == [] and doc["files_skipped"] == 1
    assert rules_of(run_json(capsys, "--dialect", "dsl", str(tmp_path))[1]) == [("van.py", "strict-inequality")]


def test_severity_per_rule(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT}, '[tool.optlint.severity]\n"strict-inequality" = "error"\n')
    assert [f["severity"] for f in run_json(capsys, str(tmp_path))[1]["findings"]] == ["error"]
    doc = run_json(capsys, "--severity", "strict-inequality=note", str(tmp_path))[1]
    assert [f["severity"] for f in doc["findings"]] == ["note"]


def test_severity_by_dialect_and_rule_precedence(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT}, '[tool.optlint.dialect-severity.dsl]\n"strict-inequality" = "note"\n')
    assert [f["severity"] for f in run_json(capsys, str(tmp_path))[1]["findings"]] == ["note"]
    project(tmp_path, {}, '[tool.optlint.severity]\n"strict-inequality" = "error"\n'
                          '[tool.optlint.dialect-severity.dsl]\n"strict-inequality" = "note"\n')
    assert [f["severity"] for f in run_json(capsys, str(tmp_path))[1]["findings"]] == ["error"]


def test_overrides_per_path(tmp_path, capsys):
    project(tmp_path, {"prod/van.py": NONCONVEX, "experiments/van.py": NONCONVEX},
            '[[tool.optlint.overrides]]\npaths = ["experiments/**"]\nseverity = {"nonconvex-objective" = "warning"}\n')
    doc = run_json(capsys, str(tmp_path))[1]
    levels = {f["path"].split("/")[-2]: f["severity"] for f in doc["findings"]}
    assert levels == {"prod": "error", "experiments": "warning"}


def test_intended_nonconvexity_becomes_a_note_with_the_reason(tmp_path, capsys):
    two = NONCONVEX.replace("problem =", "def local_fit():\n    return") + "\n\ndef other():\n    return " \
        + NONCONVEX.splitlines()[2].split("= ", 1)[1] + "\n"
    project(tmp_path, {"fit.py": two}, '[[tool.optlint.intended]]\npath = "fit.py"\nfunction = "local_fit"\n'
                                       'reason = "multistart local solve, checked by hand"\n')
    code, doc = run_json(capsys, str(tmp_path))
    by_line = {f["line"]: f for f in doc["findings"]}
    assert by_line[4]["severity"] == "note" and "multistart local solve" in by_line[4]["message"]
    assert by_line[4]["evidence"]["intended"]["function"] == "local_fit"
    assert by_line[8]["severity"] == "error" and "intended" not in by_line[8]["evidence"]
    # a whole module, without `function`
    project(tmp_path, {}, '[[tool.optlint.intended]]\npath = "*.py"\nreason = "research prototype"\n')
    assert {f["severity"] for f in run_json(capsys, str(tmp_path))[1]["findings"]} == {"note"}


def test_baseline_key(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT}, '[tool.optlint]\nbaseline = "ci/optlint-baseline.json"\n')
    (tmp_path / "ci").mkdir()
    assert run(capsys, "baseline", str(tmp_path))[0] == 0
    assert (tmp_path / "ci" / "optlint-baseline.json").is_file()
    assert run(capsys, "check", str(tmp_path))[0] == 0
    assert run(capsys, "check", "--no-baseline", str(tmp_path))[0] == 1


def test_atoms_and_assumptions_reach_options(tmp_path):
    (tmp_path / "pyproject.toml").write_text(
        '[tool.optlint.atoms."pricing.curves.soft_cap"]\ncurvature = "concave"\nsign = "nonnegative"\n'
        'monotonicity = ["increasing"]\n[tool.optlint.assume]\nnonnegative = ["gamma", "lam_*"]\n'
        'positive = ["rho"]\n')
    config = load_config(str(tmp_path / "pyproject.toml"), list(registry()), ["dsl"])
    assert config.atoms == {"pricing.curves.soft_cap": DeclaredAtom("pricing.curves.soft_cap", "concave",
                                                                    "nonnegative", ("increasing",))}
    from optlint.engine import Options

    options = Options(atoms=config.atoms, assumptions=config.assumptions)
    assert options.assumed_sign("lam_ridge") == "nonnegative" and options.assumed_sign("rho") == "positive"
    assert options.assumed_sign("lambda") is None


def test_options_reach_a_recogniser_that_asks_for_them(tmp_path, monkeypatch):
    """The hook for declared atoms: a recognise(..., options=...) receives the run's Options."""
    from optlint import engine
    from optlint.dialects import dsl

    seen = []
    real = dsl.recognise
    monkeypatch.setattr(dsl, "recognise", lambda wrapper, path, options=None: seen.append(options) or real(wrapper, path))
    (tmp_path / "van.py").write_text(CLEAN)
    options = engine.Options(atoms={"a.b": DeclaredAtom("a.b", "convex")})
    engine.check_file(str(tmp_path / "van.py"), options)
    assert seen == [options]


BAD_CONFIGS = [
    ("[tool.optlint\nfail-on = 1\n", "(file)", "valid TOML"),
    ('[tool.optlint]\nfail_on = "error"\n', "tool.optlint.fail_on", "did you mean 'fail-on'"),
    ('[tool.optlint]\nfail-on = "fatal"\n', "tool.optlint.fail-on", "one of error, warning, note"),
    ('[tool.optlint]\ninclude = "models/**"\n', "tool.optlint.include", "a list of strings"),
    ('[tool.optlint]\nexclude = [3]\n', "tool.optlint.exclude[0]", "a non-empty string"),
    ('[tool.optlint]\ndialects = ["cvx"]\n', "tool.optlint.dialects[0]", "a dialect name"),
    ('[tool.optlint.severity]\n"nonconvex-objectiv" = "off"\n', "tool.optlint.severity.nonconvex-objectiv",
     "did you mean 'nonconvex-objective'"),
    ('[tool.optlint.severity]\n"strict-inequality" = "fatal"\n', "tool.optlint.severity.strict-inequality",
     "one of error, warning, note, off"),
    ('[tool.optlint]\nseverity = "off"\n', "tool.optlint.severity", "a table"),
    ('[tool.optlint.dialect-severity.dls]\n"strict-inequality" = "note"\n', "tool.optlint.dialect-severity.dls",
     "did you mean 'dsl'"),
    ('[tool.optlint.dialect-severity.dsl]\n"strict-inequalty" = "note"\n',
     "tool.optlint.dialect-severity.dsl.strict-inequalty", "did you mean 'strict-inequality'"),
    ('[[tool.optlint.overrides]]\nseverity = {"strict-inequality" = "off"}\n', "tool.optlint.overrides[0]",
     "both `paths`"),
    ('[[tool.optlint.overrides]]\npaths = ["a/**"]\nseverity = {"strict-inequality" = "off"}\nlevel = 1\n',
     "tool.optlint.overrides[0].level", "a known key"),
    ('[tool.optlint]\noverrides = {paths = ["a"]}\n', "tool.optlint.overrides", "an array of tables"),
    ('[tool.optlint.atoms.soft_cap]\ncurvature = "convex"\n', 'tool.optlint.atoms."soft_cap"',
     "a qualified function name"),
    ('[tool.optlint.atoms."a.soft_cap"]\ncurvature = "convx"\n', 'tool.optlint.atoms."a.soft_cap".curvature',
     "did you mean 'convex'"),
    ('[tool.optlint.atoms."a.soft_cap"]\nsign = "positive"\n', 'tool.optlint.atoms."a.soft_cap".curvature',
     "a curvature"),
    ('[tool.optlint.atoms."a.soft_cap"]\ncurvature = "convex"\nmonotonicity = ["up"]\n',
     'tool.optlint.atoms."a.soft_cap".monotonicity[0]', "one of increasing, decreasing, nonmonotone"),
    ('[tool.optlint.assume]\nnonneg = ["gamma"]\n', "tool.optlint.assume.nonneg", "did you mean 'nonnegative'"),
    ('[tool.optlint.assume]\npositive = ["gamma"]\nnegative = ["gamma"]\n', "tool.optlint.assume.negative[0]",
     "one sign per name"),
    ('[tool.optlint.assume]\npositive = ["a b"]\n', "tool.optlint.assume.positive[0]", "a name or name glob"),
    ('[[tool.optlint.intended]]\npath = "fit.py"\n', "tool.optlint.intended[0].reason", "required"),
    ('[[tool.optlint.intended]]\npath = "fit.py"\nreason = "x"\nfunction = "not a name"\n',
     "tool.optlint.intended[0].function", "a function name"),
    ('[tool.optlint]\nbaseline = 7\n', "tool.optlint.baseline", "a non-empty string"),
]


@pytest.mark.parametrize("text,key,expected", BAD_CONFIGS, ids=[k for _, k, _ in BAD_CONFIGS])
def test_config_errors_exit_2_naming_file_and_key(tmp_path, capsys, text, key, expected):
    project(tmp_path, {"van.py": CLEAN})
    (tmp_path / "pyproject.toml").write_text(text)
    code, out, err = run(capsys, "check", "--config", str(tmp_path / "pyproject.toml"), str(tmp_path))
    assert code == 2 and out == ""
    assert str(tmp_path / "pyproject.toml") in err and f"`{key}`" in err and expected in err, err
    with pytest.raises(ConfigError) as info:
        load_config(str(tmp_path / "pyproject.toml"), list(registry()), ["dsl"])
    assert info.value.key == key


def test_command_line_mistakes_exit_2(tmp_path, capsys):
    project(tmp_path, {"van.py": CLEAN})
    code, _, err = run(capsys, "check", "--severity", "strict-inequalty=off", str(tmp_path))
    assert code == 2 and "did you mean strict-inequality" in err
    assert run(capsys, "check", "--severity", "strict-inequality=loud", str(tmp_path))[0] == 2
    assert run(capsys, "check", "--dialect", "pyomo-ish", str(tmp_path))[0] == 2
