"""Fixture markers: ``# expect: rule-id[, rule-id...]`` at the end of the line a finding is on.

Parsed with one strict regular expression, never evaluated. A line without a marker asserts that
no finding is reported on it; a rule id repeated on one line expects that many findings.
"""

from __future__ import annotations

import re
from collections import Counter

MARKER = re.compile(r"#\s*expect:\s*(?P<rules>[a-z][a-z0-9-]*(?:\s*,\s*[a-z][a-z0-9-]*)*)\s*$")


def expected_findings(text: str) -> Counter:
    """Counter of (line, rule) from the markers of a source text."""
    out: Counter = Counter()
    for number, line in enumerate(text.splitlines(), start=1):
        m = MARKER.search(line)
        if m:
            for rule in m.group("rules").split(","):
                out[(number, rule.strip())] += 1
    return out


def compare(expected: Counter, actual: Counter) -> list[str]:
    problems = []
    for key in sorted(set(expected) | set(actual)):
        e, a = expected.get(key, 0), actual.get(key, 0)
        if e > a:
            problems.append(f"line {key[0]}: expected {key[1]} x{e}, reported x{a} (missing)")
        elif a > e:
            problems.append(f"line {key[0]}: reported {key[1]} x{a}, expected x{e} (unexpected)")
    return problems
