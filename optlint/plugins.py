"""Plugins: third-party rule modules found through the ``optlint.rules`` entry-point group.

An installed distribution declares ``[project.entry-points."optlint.rules"] NAME = "pkg.module"``;
the module has the attributes of a built-in rule module (``ID``, ``SEVERITY``, ``SUMMARY``,
``RATIONALE``, ``REFERENCE``, ``BAD``, ``GOOD``, ``check(model, analysis)``). Plugins are loaded
once per process; a plugin that fails to load, or reuses a built-in rule id, is a ``PluginError``
(the command exits 2) rather than a silently missing check. The README's rule table lists the
built-in rules only; ``registry()`` is what a run uses.
"""

from __future__ import annotations

import importlib
from functools import lru_cache

from optlint.rules import Rule, RuleDefinitionError, _from_module, all_rules

ENTRY_POINT_GROUP = "optlint.rules"


class PluginError(Exception):
    pass


@lru_cache(maxsize=1)
def plugin_rules() -> dict[str, Rule]:
    from importlib.metadata import entry_points

    builtin = all_rules()
    out: dict[str, Rule] = {}
    for ep in sorted(entry_points(group=ENTRY_POINT_GROUP), key=lambda e: e.name):
        try:
            rule = _from_module(importlib.import_module(ep.value.split(":", 1)[0]))
        except (ImportError, RuleDefinitionError) as exc:
            raise PluginError(f"plugin {ep.name!r} ({ep.value}) could not be loaded: {exc}") from exc
        if rule.id in builtin or rule.id in out:
            raise PluginError(f"plugin {ep.name!r} defines rule id {rule.id!r}, which is already taken")
        out[rule.id] = rule
    return out


def registry() -> dict[str, Rule]:
    """Built-in and plugin rules, by id."""
    return dict(sorted({**all_rules(), **plugin_rules()}.items()))
