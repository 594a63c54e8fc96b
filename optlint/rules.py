"""The rule registry: every module of ``optlint.checks`` is one rule, discovered at run time.

A rule module declares ``ID``, ``SEVERITY`` (error | warning | note), ``SUMMARY`` (one line),
``RATIONALE`` (why it matters, in a paragraph), ``REFERENCE`` (the published source), ``BAD`` and
``GOOD`` (short code examples), optionally ``SUPERSEDES`` (rule ids whose finding at the same site
this rule's finding replaces), and ``check(model, analysis)`` yielding findings. Nothing else needs
registering: adding a rule is adding a module (and its fixture).
"""

from __future__ import annotations

import importlib
import pkgutil
from dataclasses import dataclass
from functools import lru_cache
from types import ModuleType
from typing import Callable

from optlint.findings import SEVERITIES

REQUIRED = ("ID", "SEVERITY", "SUMMARY", "RATIONALE", "REFERENCE", "BAD", "GOOD")


@dataclass(frozen=True)
class Rule:
    id: str
    severity: str
    summary: str
    rationale: str
    reference: str
    bad: str
    good: str
    supersedes: tuple[str, ...]
    check: Callable | None
    module: str


class RuleDefinitionError(Exception):
    pass


def _from_module(mod: ModuleType) -> Rule:
    missing = [a for a in REQUIRED if not isinstance(getattr(mod, a, None), str)]
    if missing:
        raise RuleDefinitionError(f"rule module {mod.__name__} lacks {', '.join(missing)}")
    if mod.SEVERITY not in SEVERITIES:
        raise RuleDefinitionError(f"rule module {mod.__name__}: SEVERITY must be one of {SEVERITIES}")
    check = getattr(mod, "check", None)
    return Rule(mod.ID, mod.SEVERITY, mod.SUMMARY, mod.RATIONALE.strip(), mod.REFERENCE,
                mod.BAD.strip("\n"), mod.GOOD.strip("\n"), tuple(getattr(mod, "SUPERSEDES", ())),
                check if callable(check) else None, mod.__name__)


@lru_cache(maxsize=1)
def all_rules() -> dict[str, Rule]:
    import optlint.checks as package

    rules: dict[str, Rule] = {}
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda i: i.name):
        if info.name.startswith("_"):
            continue
        rule = _from_module(importlib.import_module(f"{package.__name__}.{info.name}"))
        if rule.id in rules:
            raise RuleDefinitionError(f"rule id {rule.id} is defined twice")
        rules[rule.id] = rule
    return dict(sorted(rules.items()))


def markdown_table() -> str:
    """The rule table of the README, generated from the rule modules (a test keeps them equal)."""
    lines = ["| rule | default | what it reports | reference |", "|---|---|---|---|"]
    for rule in all_rules().values():
        lines.append(f"| `{rule.id}` | {rule.severity} | {rule.summary} | {rule.reference} |")
    return "\n".join(lines) + "\n"
