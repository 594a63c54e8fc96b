"""Source ranges of a module's nodes (libcst's ``PositionProvider`` ranges), computed as late and as
locally as possible.

``MetadataWrapper.resolve(PositionProvider)`` generates the code of the whole module to place
every node, and in libcst 1.x then walks the whole tree once more for batched providers even when
none are asked for. On the model fixtures that was a fifth of the run (cProfile, 373 files: 13.7 s
of 64 s), though the interpreter needs only the lines of the statements it runs and the ranges of
the few expressions that become model parts. So:

- the start line of a statement comes from CPython's ``ast`` tree of the same text (parsed anyway
  by the nesting check): statements are paired with ``ast`` statements by a walk over the
  statement structure alone (``_pair``);
- the range of any other node comes from generating the code of one statement that contains it
  (the innermost of the statements the caller says are running), with the indentation that
  statement has in the file and its lines shifted to where ``ast`` puts it: a statement's code is
  one contiguous piece of the file, so every range inside it is exact;
- anything else (a node outside those statements, a file with carriage returns or form feeds,
  whose line counting differs between tools, or a statement structure the pairing does not
  follow) falls back to the one whole-module pass, run once.

tests/test_positions.py checks every range against libcst's own ``resolve`` on every fixture, on
real files of the standard library and on a file of odd layouts.
"""

from __future__ import annotations

import ast
from collections.abc import Iterator, Mapping, Sequence
from typing import Any

import libcst as cst
from libcst.metadata import CodePosition, CodeRange, PositionProvider

try:  # libcst's code-generation state that records positions (not exported; see _compute)
    from libcst.metadata.position_provider import PositionProvidingCodegenState
except ImportError:  # pragma: no cover - a libcst that moved it: whole-module pass only
    PositionProvidingCodegenState = None


class Positions(Mapping):
    """A read-only mapping node -> ``CodeRange`` of one module, filled on demand."""

    def __init__(self, module: cst.Module, text: str | None = None, tree: ast.Module | None = None):
        self._module = module
        self._ranges: Mapping[cst.CSTNode, CodeRange] | None = None
        self._text, self._tree = text, tree
        # id(statement) -> (start line, its indentation, or None where its code is not generated alone)
        self._starts: dict[int, tuple[int, str | None]] | None = None
        self._local: dict[cst.CSTNode, CodeRange] = {}
        self._generated: set[int] = set()  # ids of statements whose code was generated locally

    # -- the whole-module pass ----------------------------------------------------------------
    def _load(self) -> Mapping[cst.CSTNode, CodeRange]:
        if self._ranges is None:
            self._ranges = _compute(self._module)
        return self._ranges

    def __getitem__(self, node: cst.CSTNode) -> CodeRange:
        found = self._local.get(node)
        return found if found is not None else self._load()[node]

    def get(self, node: Any, default: Any = None) -> Any:
        found = self._local.get(node)
        return found if found is not None else self._load().get(node, default)

    def __contains__(self, node: object) -> bool:
        return node in self._local or node in self._load()

    def __iter__(self) -> Iterator[cst.CSTNode]:
        return iter(self._load())

    def __len__(self) -> int:
        return len(self._load())

    # -- local answers ------------------------------------------------------------------------
    def _index(self) -> dict[int, tuple[int, str | None]]:
        if self._starts is None:
            self._starts = {}
            text, tree = self._text, self._tree
            if text is not None and tree is not None and "\r" not in text and "\f" not in text:
                lines = text.split("\n")
                try:
                    _pair(self._module.body, tree.body, lines, self._starts)
                except _Mismatch:
                    self._starts = {}
        return self._starts

    def statement_line(self, node: Any) -> int | None:
        """The line a statement of this module starts on, from ``ast`` (no code generated); None
        for other nodes or when the statements could not be paired."""
        found = self._index().get(id(node))
        return None if found is None else found[0]

    def within(self, node: cst.CSTNode, running: Sequence[Any]) -> CodeRange | None:
        """The range of ``node``, generating the code of the innermost statement of ``running``
        (outermost first) that contains it; else the whole-module answer (None if not a node of
        this module)."""
        found = self._local.get(node)
        if found is not None or self._ranges is not None:
            return found if found is not None else self._ranges.get(node)
        index = self._index()
        for stmt in reversed(running):
            where = index.get(id(stmt))
            if where is None or where[1] is None or id(stmt) in self._generated:
                continue
            self._generate(stmt, *where)
            found = self._local.get(node)
            if found is not None:
                return found
        return self._load().get(node)

    def _generate(self, stmt: cst.CSTNode, line: int, indent: str) -> int | None:
        """Generate ``stmt``'s code and keep its nodes' ranges; returns how far the lines had to
        be moved afterwards (0: ``_lines_before`` was right), None when nothing was kept."""
        self._generated.add(id(stmt))
        if PositionProvidingCodegenState is None:
            return None
        provider = PositionProvider()
        provider._computed = {}
        state = PositionProvidingCodegenState(default_indent=self._module.default_indent,
                                              default_newline=self._module.default_newline,
                                              provider=provider)
        state.indent_tokens = [indent] if indent else []
        state.line = line - _lines_before(stmt)  # where the statement's own code begins
        stmt._codegen(state)
        ranges = provider._computed
        anchor = _anchor(stmt)
        if anchor not in ranges:
            return None
        shift = line - ranges[anchor].start.line  # 0 unless a leading line spans two (never seen)
        local = self._local
        if not shift:
            local.update(ranges)
            return 0
        for n, r in ranges.items():
            local[n] = CodeRange(CodePosition(r.start.line + shift, r.start.column),
                                 CodePosition(r.end.line + shift, r.end.column))
        return shift


class _Mismatch(Exception):
    pass


def _anchor(stmt: cst.CSTNode) -> cst.CSTNode:
    """The node of a statement whose start line ``ast`` gives as the statement's ``lineno``."""
    if isinstance(stmt, cst.SimpleStatementLine):
        return stmt.body[0]
    if isinstance(stmt, (cst.FunctionDef, cst.ClassDef)):
        return stmt.name  # on the `def`/`class` line, where ast and libcst start a definition
    return stmt


def _lines_before(stmt: cst.CSTNode) -> int:
    """Lines a statement's code holds before its anchor's line: its leading blank and comment
    lines (one line each), and for a decorated definition its decorators."""
    n = len(getattr(stmt, "leading_lines", ()))
    for dec in getattr(stmt, "decorators", ()):
        n += len(dec.leading_lines) + 1 + _newlines(dec.decorator)
    if getattr(stmt, "decorators", ()):
        n += len(stmt.lines_after_decorators)
    return n


def _newlines(node: cst.CSTNode) -> int:
    return cst.Module(body=[]).code_for_node(node).count("\n")


def _indent(lines: list[str], lineno: int) -> str:
    text = lines[lineno - 1]
    return text[: len(text) - len(text.lstrip(" \t"))]


_COMPOUND = {
    cst.FunctionDef: (ast.FunctionDef, ast.AsyncFunctionDef),
    cst.ClassDef: (ast.ClassDef,),
    cst.If: (ast.If,),
    cst.For: (ast.For, ast.AsyncFor),
    cst.While: (ast.While,),
    cst.With: (ast.With, ast.AsyncWith),
    cst.Try: (ast.Try,),
}
if hasattr(cst, "TryStar") and hasattr(ast, "TryStar"):
    _COMPOUND[cst.TryStar] = (ast.TryStar,)
if hasattr(cst, "Match") and hasattr(ast, "Match"):
    _COMPOUND[cst.Match] = (ast.Match,)


def _block(body) -> Sequence[Any]:
    return body.body  # IndentedBlock.body (statements) or SimpleStatementSuite.body (small statements)


def _pair(cst_body: Sequence[Any], ast_body: Sequence[ast.stmt], lines: list[str],
          out: dict[int, tuple[int, str | None]]) -> None:
    """Pair a libcst statement list with an ast one: ``out[id(statement)] = (line, indentation)``
    where the line is libcst's start line of the statement. Raises _Mismatch when the two differ."""
    i = 0
    for st in cst_body:
        if isinstance(st, cst.BaseSmallStatement):  # inside a one-line suite
            if i >= len(ast_body):
                raise _Mismatch
            out[id(st)] = (ast_body[i].lineno, None)
            i += 1
            continue
        if isinstance(st, cst.SimpleStatementLine):
            if i + len(st.body) > len(ast_body) or not st.body:
                raise _Mismatch
            first = ast_body[i].lineno
            out[id(st)] = (first, _indent(lines, first))
            for small in st.body:
                out[id(small)] = (ast_body[i].lineno, None)
                i += 1
            continue
        kinds = _COMPOUND.get(type(st))
        if kinds is None or i >= len(ast_body) or not isinstance(ast_body[i], kinds):
            raise _Mismatch
        a = ast_body[i]
        i += 1
        if isinstance(st, (cst.FunctionDef, cst.ClassDef)) and len(a.decorator_list) != len(st.decorators):
            raise _Mismatch
        out[id(st)] = (a.lineno, _indent(lines, a.lineno))  # libcst too starts a definition at `def`
        _pair_children(st, a, lines, out)
    if i != len(ast_body):
        raise _Mismatch


def _pair_children(st, a, lines, out) -> None:
    if isinstance(st, cst.If):
        _pair(_block(st.body), a.body, lines, out)
        orelse = st.orelse
        if isinstance(orelse, cst.If):  # elif: the ast has it as the only statement of orelse
            if len(a.orelse) != 1 or not isinstance(a.orelse[0], ast.If):
                raise _Mismatch
            out[id(orelse)] = (a.orelse[0].lineno, None)  # its code alone would read `if`, not `elif`
            _pair_children(orelse, a.orelse[0], lines, out)
        elif orelse is not None:
            _pair(_block(orelse.body), a.orelse, lines, out)
        elif a.orelse:
            raise _Mismatch
        return
    if isinstance(st, (cst.For, cst.While)):
        _pair(_block(st.body), a.body, lines, out)
        _pair(_block(st.orelse.body) if st.orelse is not None else (), a.orelse, lines, out)
        return
    if isinstance(st, (cst.FunctionDef, cst.ClassDef, cst.With)):
        _pair(_block(st.body), a.body, lines, out)
        return
    if isinstance(st, cst.Try) or type(st).__name__ == "TryStar":
        _pair(_block(st.body), a.body, lines, out)
        if len(st.handlers) != len(a.handlers):
            raise _Mismatch
        for h, ah in zip(st.handlers, a.handlers):
            out[id(h)] = (ah.lineno, None)
            _pair(_block(h.body), ah.body, lines, out)
        _pair(_block(st.orelse.body) if st.orelse is not None else (), a.orelse, lines, out)
        _pair(_block(st.finalbody.body) if st.finalbody is not None else (), a.finalbody, lines, out)
        return
    if type(st).__name__ == "Match":
        if len(st.cases) != len(a.cases):
            raise _Mismatch
        for c, ac in zip(st.cases, a.cases):
            _pair(_block(c.body), ac.body, lines, out)
        return
    raise _Mismatch


def _compute(module: cst.Module) -> Mapping[cst.CSTNode, CodeRange]:
    provider = PositionProvider()
    try:
        provider._computed = {}
        provider._gen_impl(module)  # the provider's own pass, without resolve's extra tree walk
        return provider._computed
    except AttributeError:  # a libcst without these internals: the public way, slower
        return cst.MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)


def positions(wrapper: cst.MetadataWrapper) -> Positions | Mapping[cst.CSTNode, CodeRange]:
    """The ranges of ``wrapper.module``'s nodes, shared by everyone who asks for this wrapper (also
    through ``wrapper.resolve(PositionProvider)``)."""
    store = getattr(wrapper, "_metadata", None)
    if not isinstance(store, dict):
        return wrapper.resolve(PositionProvider)
    found = store.get(PositionProvider)
    if found is None:
        found = store[PositionProvider] = Positions(wrapper.module)
    return found


def install(wrapper: cst.MetadataWrapper, text: str, tree: ast.Module | None) -> None:
    """Give the wrapper a ``Positions`` that may answer from ``tree`` (``ast.parse(text)``, where
    ``text`` is exactly what libcst parsed)."""
    store = getattr(wrapper, "_metadata", None)
    if isinstance(store, dict) and PositionProvider not in store:
        store[PositionProvider] = Positions(wrapper.module, text, tree)
