"""Configuration: the ``[tool.optlint]`` table of the nearest pyproject.toml, validated strictly.

Found by walking up from the checked paths (the first ``pyproject.toml`` that has a
``[tool.optlint]`` table wins), or named with ``--config``. Every key is checked for its name, type
and values before anything runs; a mistake raises ``ConfigError`` naming the file, the dotted key
and what was expected (with a "did you mean" for near misses), and the command exits 2. Globs in
the file are relative to the directory holding it (the project root). Nothing here imports sympy.
"""

from __future__ import annotations

import difflib
import os
import re
import sys
from dataclasses import dataclass, field
from typing import Any

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on Python 3.10 only
    import tomli as tomllib

LEVELS = ("error", "warning", "note", "off")
FAIL_LEVELS = ("error", "warning", "note")
CURVATURES = ("convex", "concave", "affine")
SIGNS = ("positive", "nonnegative", "nonpositive", "negative", "unknown")
MONOTONICITIES = ("increasing", "decreasing", "nonmonotone")
ASSUMED_SIGNS = ("positive", "nonnegative", "nonpositive", "negative")
TOP_KEYS = ("fail-on", "include", "exclude", "dialects", "severity", "dialect-severity", "overrides",
            "atoms", "assume", "intended", "baseline")
_QUALNAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*(?:\.[A-Za-z_][A-Za-z0-9_]*)+$")
_NAME_GLOB = re.compile(r"^[A-Za-z0-9_*?\[\]!]+$")
_FUNCTION = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*(?:\.[A-Za-z_][A-Za-z0-9_]*)*$")


class ConfigError(Exception):
    """A configuration mistake: ``file``, dotted ``key`` and what was ``expected``."""

    def __init__(self, file: str, key: str, expected: str):
        super().__init__(f"{file}: {key}: {expected}")
        self.file, self.key, self.expected = file, key, expected


@dataclass(frozen=True)
class DeclaredAtom:
    """A function the project vouches for: curvature, sign of its value, monotonicity per argument."""

    name: str
    curvature: str
    sign: str = "unknown"
    monotonicity: tuple[str, ...] = ()


@dataclass(frozen=True)
class Override:
    paths: tuple[str, ...]
    severity: dict[str, str]


@dataclass(frozen=True)
class Intended:
    path: str
    reason: str
    function: str | None = None


@dataclass
class Config:
    file: str | None = None  # None: no configuration file found
    root: str = "."  # globs and fingerprints are relative to this directory
    fail_on: str | None = None
    include: tuple[str, ...] = ()
    exclude: tuple[str, ...] = ()
    dialects: tuple[str, ...] | None = None
    severity: dict[str, str] = field(default_factory=dict)
    dialect_severity: dict[str, dict[str, str]] = field(default_factory=dict)
    overrides: list[Override] = field(default_factory=list)
    atoms: dict[str, DeclaredAtom] = field(default_factory=dict)
    assumptions: dict[str, tuple[str, ...]] = field(default_factory=dict)
    intended: list[Intended] = field(default_factory=list)
    baseline: str | None = None  # absolute path


def find_config(paths: list[str]) -> str | None:
    """The nearest pyproject.toml with a [tool.optlint] table, walking up from the checked paths."""
    starts = [os.path.abspath(p) for p in paths] or [os.getcwd()]
    try:
        here = os.path.commonpath(starts)
    except ValueError:  # paths on different drives
        here = starts[0]
    if not os.path.isdir(here):
        here = os.path.dirname(here)
    while True:
        candidate = os.path.join(here, "pyproject.toml")
        if os.path.isfile(candidate) and _has_table(candidate):
            return candidate
        parent = os.path.dirname(here)
        if parent == here:
            return None
        here = parent


def _has_table(path: str) -> bool:
    tool = _read(path).get("tool")
    return isinstance(tool, dict) and isinstance(tool.get("optlint"), dict)


def _read(path: str) -> dict[str, Any]:
    try:
        with open(path, "rb") as fh:
            return tomllib.load(fh)
    except OSError as exc:
        raise ConfigError(path, "(file)", f"a readable TOML file ({exc.strerror or exc})")
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(path, "(file)", f"valid TOML ({exc})")


def load_config(path: str | None, rule_ids: list[str], dialects: list[str]) -> Config:
    """Read and validate one configuration file (``None``: the defaults)."""
    if path is None:
        return Config(root=os.getcwd())
    path = os.path.abspath(path)
    doc = _read(path)
    table = doc.get("tool", {}).get("optlint") if isinstance(doc.get("tool"), dict) else None
    if table is None:
        raise ConfigError(path, "tool.optlint", "a [tool.optlint] table")
    return _Validator(path, rule_ids, dialects).config(table)


class _Validator:
    def __init__(self, file: str, rule_ids: list[str], dialects: list[str]):
        self.file, self.rule_ids, self.dialect_names = file, rule_ids, dialects

    def fail(self, key: str, expected: str):
        raise ConfigError(self.file, key, expected)

    def table(self, value, key: str) -> dict:
        if not isinstance(value, dict):
            self.fail(key, f"a table, not {_kind(value)}")
        return value

    def keys(self, table: dict, key: str, allowed: tuple[str, ...]) -> None:
        for k in table:
            if k not in allowed:
                self.fail(f"{key}.{k}", f"a known key{_near(k, allowed)}; allowed: {', '.join(allowed)}")

    def string(self, value, key: str) -> str:
        if not isinstance(value, str) or not value.strip():
            self.fail(key, f"a non-empty string, not {_kind(value)}")
        return value

    def strings(self, value, key: str) -> tuple[str, ...]:
        if not isinstance(value, list):
            self.fail(key, f"a list of strings, not {_kind(value)}")
        return tuple(self.string(v, f"{key}[{i}]") for i, v in enumerate(value))

    def choice(self, value, key: str, allowed: tuple[str, ...]) -> str:
        if not isinstance(value, str) or value not in allowed:
            self.fail(key, f"one of {', '.join(allowed)}, not {value!r}{_near(value, allowed)}")
        return value

    def rule_levels(self, value, key: str) -> dict[str, str]:
        out = {}
        for rule, level in self.table(value, key).items():
            self.rule(rule, f"{key}.{rule}")
            out[rule] = self.choice(level, f"{key}.{rule}", LEVELS)
        return out

    def rule(self, rule: str, key: str) -> None:
        if rule not in self.rule_ids:
            self.fail(key, f"a rule id{_near(rule, self.rule_ids)}; `optlint rules` lists them")

    def dialect(self, name, key: str) -> str:
        if name not in self.dialect_names:
            self.fail(key, f"a dialect name{_near(str(name), self.dialect_names)}; known: "
                           f"{', '.join(self.dialect_names)}")
        return name

    def config(self, t: dict) -> Config:
        k = "tool.optlint"
        self.keys(t, k, TOP_KEYS)
        c = Config(file=self.file, root=os.path.dirname(self.file))
        if "fail-on" in t:
            c.fail_on = self.choice(t["fail-on"], f"{k}.fail-on", FAIL_LEVELS)
        c.include = self.strings(t.get("include", []), f"{k}.include")
        c.exclude = self.strings(t.get("exclude", []), f"{k}.exclude")
        if "dialects" in t:
            c.dialects = tuple(self.dialect(d, f"{k}.dialects[{i}]")
                               for i, d in enumerate(self.strings(t["dialects"], f"{k}.dialects")))
        c.severity = self.rule_levels(t.get("severity", {}), f"{k}.severity")
        for name, levels in self.table(t.get("dialect-severity", {}), f"{k}.dialect-severity").items():
            key = f"{k}.dialect-severity.{name}"
            self.dialect(name, key)
            c.dialect_severity[name] = self.rule_levels(levels, key)
        c.overrides = [self.override(o, f"{k}.overrides[{i}]") for i, o in enumerate(self.array(t, "overrides"))]
        for name, spec in self.table(t.get("atoms", {}), f"{k}.atoms").items():
            c.atoms[name] = self.atom(name, spec, f'{k}.atoms."{name}"')
        c.assumptions = self.assume(t.get("assume", {}), f"{k}.assume")
        c.intended = [self.intended(e, f"{k}.intended[{i}]") for i, e in enumerate(self.array(t, "intended"))]
        if "baseline" in t:
            c.baseline = self.inside(t["baseline"], f"{k}.baseline", c.root)
        return c

    def inside(self, value, key: str, root: str) -> str:
        """A path the command writes to: relative to the project root and inside it (links resolved)."""
        text = self.string(value, key)
        if os.path.isabs(text):
            self.fail(key, f"a path relative to the project root, not the absolute path {text!r}")
        target = os.path.normpath(os.path.join(root, text))
        real_root, real = os.path.realpath(root), os.path.realpath(target)
        try:
            inside = os.path.commonpath([real_root, real]) == real_root
        except ValueError:  # another drive
            inside = False
        if not inside or real == real_root:
            self.fail(key, f"a file inside the project root ({root}); {text!r} leads outside it")
        return target

    def array(self, t: dict, name: str) -> list:
        value = t.get(name, [])
        if not isinstance(value, list):
            self.fail(f"tool.optlint.{name}", f"an array of tables ([[tool.optlint.{name}]]), not {_kind(value)}")
        return value

    def override(self, value, key: str) -> Override:
        t = self.table(value, key)
        self.keys(t, key, ("paths", "severity"))
        if "paths" not in t or "severity" not in t:
            self.fail(key, "both `paths` (a list of globs) and `severity` (rule id -> level)")
        paths = self.strings(t["paths"], f"{key}.paths")
        if not paths:
            self.fail(f"{key}.paths", "at least one glob")
        return Override(paths, self.rule_levels(t["severity"], f"{key}.severity"))

    def atom(self, name: str, value, key: str) -> DeclaredAtom:
        if not _QUALNAME.match(name):
            self.fail(key, "a qualified function name such as \"pricing.curves.soft_cap\" (module and function)")
        t = self.table(value, key)
        self.keys(t, key, ("curvature", "sign", "monotonicity"))
        if "curvature" not in t:
            self.fail(f"{key}.curvature", f"a curvature, one of {', '.join(CURVATURES)}")
        curvature = self.choice(t["curvature"], f"{key}.curvature", CURVATURES)
        sign = self.choice(t.get("sign", "unknown"), f"{key}.sign", SIGNS)
        mono = self.strings(t.get("monotonicity", []), f"{key}.monotonicity")
        for i, m in enumerate(mono):
            self.choice(m, f"{key}.monotonicity[{i}]", MONOTONICITIES)
        return DeclaredAtom(name, curvature, sign, mono)

    def assume(self, value, key: str) -> dict[str, tuple[str, ...]]:
        t = self.table(value, key)
        self.keys(t, key, ASSUMED_SIGNS)
        out: dict[str, tuple[str, ...]] = {}
        owner: dict[str, str] = {}
        for sign, names in t.items():
            patterns = self.strings(names, f"{key}.{sign}")
            for i, p in enumerate(patterns):
                if not _NAME_GLOB.match(p):
                    self.fail(f"{key}.{sign}[{i}]", f"a name or name glob such as \"lam_*\", not {p!r}")
                if p in owner:
                    self.fail(f"{key}.{sign}[{i}]", f"one sign per name; {p!r} is already under {owner[p]}")
                owner[p] = sign
            out[sign] = patterns
        return out

    def intended(self, value, key: str) -> Intended:
        t = self.table(value, key)
        self.keys(t, key, ("path", "function", "reason"))
        for required in ("path", "reason"):
            if required not in t:
                self.fail(f"{key}.{required}", "a non-empty string (required)")
        function = None
        if "function" in t:
            function = self.string(t["function"], f"{key}.function")
            if not _FUNCTION.match(function):
                self.fail(f"{key}.function", "a function name, or Class.method")
        return Intended(self.string(t["path"], f"{key}.path"), self.string(t["reason"], f"{key}.reason").strip(),
                        function)


def _kind(value) -> str:
    names = {bool: "a boolean", int: "an integer", float: "a number", str: "a string", list: "a list",
             dict: "a table"}
    return names.get(type(value), type(value).__name__)


def _near(word: str, choices) -> str:
    near = difflib.get_close_matches(str(word), list(choices), n=1)
    return f" (did you mean {near[0]!r}?)" if near else ""
