"""The README stays true: its rule table is the one the rule modules generate, its quick start
names commands that exist, and the caution about what a clean report means is present."""

from __future__ import annotations

import re

from conftest import ROOT
from optlint.rules import all_rules, markdown_table

README = (ROOT / "README.md").read_text(encoding="utf-8")


def test_rules_table_is_current():
    m = re.search(r"<!-- rules-table:[^>]*-->\n(.*?)<!-- end rules-table -->", README, re.S)
    assert m, "rules-table markers missing from README.md"
    assert m.group(1) == markdown_table(), "regenerate with: python -m optlint rules --format markdown"


def test_every_rule_documents_itself():
    for rule in all_rules().values():
        assert rule.summary and rule.rationale and rule.reference and rule.bad and rule.good, rule.id
        assert rule.id in README


def test_quick_start_has_exactly_two_commands():
    section = README.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```sh\n(.*?)```", section, re.S)
    assert len(blocks) == 2 and all(len(b.strip().splitlines()) == 1 for b in blocks)
    assert "optlint check fixtures/tour" in blocks[0]
    assert "pytest" in blocks[1]
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "python -m pytest" in ci and 'pip install --quiet -e ".[test]"' in ci


def test_readme_states_the_limits_of_a_clean_report():
    assert "aid to review, not a certificate" in README
    assert "licensed professional practice" in README


def test_every_package_is_installed():
    """A non-editable install ships only the packages pyproject.toml lists: keep the list complete."""
    try:
        import tomllib
    except ImportError:  # Python 3.10
        import tomli as tomllib
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    found = {p.parent.relative_to(ROOT).as_posix().replace("/", ".") for p in (ROOT / "optlint").rglob("__init__.py")}
    assert found | {"optlint.checks"} == listed
