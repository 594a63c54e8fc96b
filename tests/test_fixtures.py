"""Every fixture file's markers against optlint's findings, both ways (missing and unexpected).

The fixtures are realistic model files in invented scenarios; see fixtures/README.md. The
curvature expected at each marker follows the composition rules of Boyd & Vandenberghe (2004),
§3.2.4, and the convex-problem form of §4.2.1 (convex objective and inequality functions, affine
equalities); each fixture file's docstring and comments say what the seeded mistake is.
"""

from __future__ import annotations

from collections import Counter

import pytest

from conftest import FIXTURES
from markers import compare, expected_findings
from optlint.engine import check_file

FILES = sorted(p for p in FIXTURES.rglob("*.py"))


@pytest.mark.parametrize("path", FILES, ids=[str(p.relative_to(FIXTURES)) for p in FILES])
def test_fixture_markers(path):
    expected = expected_findings(path.read_text(encoding="utf-8"))
    result = check_file(str(path))
    actual = Counter((f.site.line, f.rule) for f in result.findings)
    problems = compare(expected, actual)
    detail = "\n".join(f"  {f.site.line}: {f.rule}: {f.message}" for f in result.findings)
    assert not problems, "\n".join(problems) + "\nfindings:\n" + detail


def test_fixture_set_is_substantial():
    """The marker test above means little on a thin set: keep enough bad and clean files."""
    dsl = sorted((FIXTURES / "dsl").glob("*.py"))
    marked = [p for p in dsl if expected_findings(p.read_text(encoding="utf-8"))]
    clean = [p for p in dsl if p not in marked]
    assert len(marked) >= 6 and len(clean) >= 6


def test_markers_parse_strictly():
    text = "a = 1  # expect: nonconvex-objective, strict-inequality\nb = 2  # expect nothing\nc = 3 # expect: x2bad\n"
    found = expected_findings(text)
    assert found == Counter({(1, "nonconvex-objective"): 1, (1, "strict-inequality"): 1, (3, "x2bad"): 1})
    assert compare(Counter({(1, "a"): 1}), Counter()) == ["line 1: expected a x1, reported x0 (missing)"]
    assert compare(Counter(), Counter({(2, "b"): 1})) == ["line 2: reported b x1, expected x0 (unexpected)"]
