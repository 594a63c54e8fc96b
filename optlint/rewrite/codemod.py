"""Codemod: naming the library's atoms the way the file does, and applying replacements with libcst.

``Namer.callee(atom, like)`` spells an atom in the file's import style: beside a call written
``cp.sqrt`` it writes ``cp.norm``; beside a bare ``sqrt`` imported from the library it adds
``norm`` to that module-level ``from cvxpy import ...`` (or uses a name already imported, never
importing twice); where no call is replaced (an operator) it prefers the module's ``import cvxpy
as X``. A spelling is used only when the name cannot mean anything else in the file: the alias or
bare name is bound nowhere in the module except by the library's import, and no other module is
star-imported. ``apply`` replaces nodes by identity and appends the new names to their import;
everything else in the module is printed back byte for byte (libcst keeps all whitespace and
comments).
"""

from __future__ import annotations

import libcst as cst

from optlint.names import dotted

LIB = "cvxpy"


class _Bindings(cst.CSTVisitor):
    """Every name bound anywhere in the module, except by an import of the library itself."""

    def __init__(self) -> None:
        self.names: set[str] = set()
        self.foreign_star = False

    def _target(self, node) -> None:
        if isinstance(node, cst.Name):
            self.names.add(node.value)
        elif isinstance(node, (cst.Tuple, cst.List)):
            for el in node.elements:
                self._target(el.value)
        elif isinstance(node, cst.StarredElement):
            self._target(node.value)

    def visit_AssignTarget(self, node):
        self._target(node.target)

    def visit_AnnAssign(self, node):
        self._target(node.target)

    def visit_AugAssign(self, node):
        self._target(node.target)

    def visit_For(self, node):
        self._target(node.target)

    def visit_CompFor(self, node):
        self._target(node.target)

    def visit_AsName(self, node):
        self._target(node.name)

    def visit_NamedExpr(self, node):
        self._target(node.target)

    def visit_Param(self, node):
        self.names.add(node.name.value)

    def visit_FunctionDef(self, node):
        self.names.add(node.name.value)

    def visit_ClassDef(self, node):
        self.names.add(node.name.value)

    def visit_Global(self, node):
        self.names.update(n.name.value for n in node.names)

    def visit_Nonlocal(self, node):
        self.names.update(n.name.value for n in node.names)

    def visit_MatchAs(self, node):
        if node.name is not None:
            self._target(node.name)

    def visit_Import(self, node):
        for alias in node.names:
            if dotted(alias.name) == LIB:
                continue
            if alias.asname is not None:
                self._target(alias.asname.name)
            else:
                self.names.add((dotted(alias.name) or "").split(".")[0])
        return False  # an import's `as` names are collected here, not as AsName nodes

    def visit_ImportFrom(self, node):
        module = dotted(node.module) if node.module is not None else None
        if module == LIB and not node.relative:
            return False
        if isinstance(node.names, cst.ImportStar):
            self.foreign_star = True
            return False
        for alias in node.names:
            if alias.asname is not None:
                self._target(alias.asname.name)
            else:
                self.names.add(dotted(alias.name) or "")
        return False


def _top_level_imports(module: cst.Module):
    """(aliases of the library, its from-imports with local names, a star import of it)."""
    aliases: list[str] = []
    froms: list[tuple[cst.ImportFrom, dict[str, str]]] = []
    star = False
    for stmt in module.body:
        if not isinstance(stmt, cst.SimpleStatementLine):
            continue
        for small in stmt.body:
            if isinstance(small, cst.Import):
                for alias in small.names:
                    if dotted(alias.name) != LIB:
                        continue
                    if alias.asname is None:
                        aliases.append(LIB)
                    elif isinstance(alias.asname.name, cst.Name):
                        aliases.append(alias.asname.name.value)
            elif isinstance(small, cst.ImportFrom) and not small.relative and small.module is not None \
                    and dotted(small.module) == LIB:
                if isinstance(small.names, cst.ImportStar):
                    star = True
                    continue
                local = {}
                for alias in small.names:
                    name = dotted(alias.name) or ""
                    local[name] = alias.asname.name.value if alias.asname is not None \
                        and isinstance(alias.asname.name, cst.Name) else name
                froms.append((small, local))
    return aliases, froms, star


class Namer:
    def __init__(self, module: cst.Module):
        bindings = _Bindings()
        module.visit(bindings)
        self.bound = bindings.names
        self.foreign_star = bindings.foreign_star
        self.aliases, self.froms, self.star = _top_level_imports(module)
        self.added: dict[int, list[str]] = {}  # id(ImportFrom) -> names to append
        self.attempt()
        self._import_nodes: dict[int, cst.ImportFrom] = {id(n): n for n, _ in self.froms}

    def attempt(self, second_choice: bool = False) -> None:
        """Start naming the atoms of one replacement: all in one style (the file's preferred one,
        or with ``second_choice`` the other), and no import additions left from a failed try."""
        self._style = None
        self._second = second_choice
        self._saved = {k: list(v) for k, v in self.added.items()}

    def abandon(self) -> None:
        self.added = self._saved

    def callee(self, atom: str, like=None) -> cst.BaseExpression | None:
        """How to call the library's ``atom`` here, or None if no spelling is safe."""
        if isinstance(like, cst.Attribute):  # the replaced call's own prefix, resolved to the library
            return cst.Attribute(value=like.value.deep_clone(), attr=cst.Name(atom))
        ways = [self._bare, self._alias] if isinstance(like, cst.Name) else [self._alias, self._bare]
        if self._second:
            ways.reverse()
        for way in ways if self._style is None else [self._style]:
            found = way(atom)
            if found is not None:
                self._style = way
                return found
        return None

    def _alias(self, atom: str):
        for local in self.aliases:
            if local not in self.bound:
                return cst.Attribute(value=cst.Name(local), attr=cst.Name(atom))
        return None

    def _bare(self, atom: str):
        if self.foreign_star:
            return None
        for _, local in self.froms:
            if atom in local:
                name = local[atom]
                return cst.Name(name) if name not in self.bound else None
        if atom in self.bound or any(atom in local.values() for _, local in self.froms):
            return None
        if self.star:
            return cst.Name(atom)
        if self.froms:
            node = self.froms[0][0]
            names = self.added.setdefault(id(node), [])
            if atom not in names:
                names.append(atom)
            return cst.Name(atom)
        return None

    def import_edits(self) -> dict[int, tuple[cst.ImportFrom, cst.ImportFrom]]:
        """id(original from-import) -> (original, with the added names appended)."""
        out = {}
        for key, names in self.added.items():
            if names:
                node = self._import_nodes[key]
                out[key] = (node, _append_names(node, names))
        return out


def _append_names(node: cst.ImportFrom, names: list[str]) -> cst.ImportFrom:
    """The import with ``names`` added: in order if the names were sorted, else at the end; each
    new name laid out like its neighbours (a trailing comma stays the last one)."""
    old = list(node.names)
    space = cst.Comma(whitespace_after=cst.SimpleWhitespace(" "))
    trailing = old[-1].comma
    inner = next((a.comma for a in reversed(old[:-1]) if isinstance(a.comma, cst.Comma)), space)
    texts = [dotted(a.name) or "" for a in old]
    aliases = list(old)
    for name in names:
        alias = cst.ImportAlias(name=cst.Name(name))
        if texts == sorted(texts):
            at = next((i for i, t in enumerate(texts) if t > name), len(texts))
        else:
            at = len(texts)
        texts.insert(at, name)
        aliases.insert(at, alias)
    kept_commas = {id(a) for a in old[:-1]}  # old names that were not last keep their own layout
    out = []
    for i, alias in enumerate(aliases):
        comma = trailing if i == len(aliases) - 1 else (alias.comma if id(alias) in kept_commas else inner)
        out.append(alias.with_changes(comma=comma))
    return node.with_changes(names=out)


class _Replace(cst.CSTTransformer):
    def __init__(self, replacements: dict[int, cst.CSTNode]):
        self.replacements = replacements

    def on_leave(self, original_node, updated_node):
        return self.replacements.get(id(original_node), updated_node)


def apply(module: cst.Module, replacements: dict[int, cst.CSTNode]) -> cst.Module:
    """The module with each node whose id is a key replaced by its value (no two may nest)."""
    return module.visit(_Replace(replacements))
