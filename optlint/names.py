"""Names: which imported thing a dotted name in a module refers to, computed cheaply and lazily.

A stand-in for libcst's QualifiedNameProvider with the same answers for what optlint asks (the
qualified names of Name and Attribute nodes that come from imports or builtins), at a fraction
of the cost: one pass collects the module's imports (at any depth, as libcst's provider does), and
a node's qualified name is derived from its dotted text only when asked. Local shadowing is the
interpreter's business: it looks a name up in its own environment before asking here.
"""

from __future__ import annotations

import builtins

import libcst as cst
from libcst.metadata import QualifiedName, QualifiedNameSource

_BUILTINS = frozenset(dir(builtins))


def dotted(node) -> str | None:
    """``a.b.c`` for a Name/Attribute chain, else None."""
    if isinstance(node, cst.Name):
        return node.value
    if isinstance(node, cst.Attribute):
        base = dotted(node.value)
        return None if base is None else f"{base}.{node.attr.value}"
    return None


def _module_name(node) -> str:
    return dotted(node) or ""


class _ImportCollector:
    """Collects imports statement by statement (imports are statements: no expression is walked)."""

    def __init__(self) -> None:
        self.aliases: dict[str, set[str]] = {}

    def _add(self, local: str, qualified: str) -> None:
        self.aliases.setdefault(local, set()).add(qualified)

    def walk(self, body) -> None:
        stack = list(body)
        while stack:
            stmt = stack.pop()
            if isinstance(stmt, cst.SimpleStatementLine):
                for small in stmt.body:
                    if isinstance(small, cst.Import):
                        self._import(small)
                    elif isinstance(small, cst.ImportFrom):
                        self._import_from(small)
                continue
            for attr in ("body", "orelse", "finalbody", "handlers", "cases"):
                part = getattr(stmt, attr, None)
                if part is None:
                    continue
                if isinstance(part, (list, tuple)):
                    stack.extend(part)
                elif isinstance(part, cst.SimpleStatementSuite):
                    stack.append(cst.SimpleStatementLine(body=part.body))
                elif hasattr(part, "body"):
                    inner = part.body
                    stack.extend(inner if isinstance(inner, (list, tuple)) else [part])

    def _import(self, node: cst.Import) -> None:
        for alias in node.names:
            full = _module_name(alias.name)
            if alias.asname is not None and isinstance(alias.asname.name, cst.Name):
                self._add(alias.asname.name.value, full)
            else:
                self._add(full.split(".")[0], full.split(".")[0])

    def _import_from(self, node: cst.ImportFrom) -> None:
        if isinstance(node.names, cst.ImportStar):
            return
        prefix = "." * len(node.relative) + (_module_name(node.module) if node.module is not None else "")
        for alias in node.names:
            name = _module_name(alias.name)
            local = alias.asname.name.value if (alias.asname is not None
                                                and isinstance(alias.asname.name, cst.Name)) else name
            sep = "" if prefix.endswith(".") or not prefix else "."
            self._add(local, f"{prefix}{sep}{name}")


class QualifiedNames:
    """``get(node, default)`` -> set of QualifiedName, like the libcst provider's mapping."""

    def __init__(self, module: cst.Module):
        collector = _ImportCollector()
        collector.walk(module.body)
        self.module = module
        self.aliases = collector.aliases
        self._memo: dict[int, set[QualifiedName]] = {}

    def get(self, node, default=()):
        key = id(node)
        if key in self._memo:
            return self._memo[key]
        text = dotted(node)
        out: set[QualifiedName] = set()
        if text is not None:
            head, _, rest = text.partition(".")
            for target in self.aliases.get(head, ()):
                out.add(QualifiedName(f"{target}.{rest}" if rest else target, QualifiedNameSource.IMPORT))
            if not out and head in _BUILTINS:
                out.add(QualifiedName(f"builtins.{text}", QualifiedNameSource.BUILTIN))
        self._memo[key] = out
        return out if out else default

    def items(self):
        """(node, qualified names) for every Name and Attribute of the module (eager; small modules)."""
        found: list = []

        class _Names(cst.CSTVisitor):
            def visit_Name(self, node):
                found.append(node)

            def visit_Attribute(self, node):
                found.append(node)

        self.module.visit(_Names())
        for node in found:
            yield node, self.get(node, set())
