"""Nesting: deeply nested source is refused before libcst sees it, and the rest gets a deep stack.

libcst's native parser crashes the whole process (a segmentation fault, not an exception) on
about 10,000 nested brackets or lambdas and takes minutes on a few thousand nested operators, so
CPython's own parser (``ast.parse``: it only parses, nothing is compiled or run) looks first. What
CPython refuses for its nesting limits (more than 200 nested brackets, a parser stack or recursion
overflow) is a syntax error of the file; what it accepts but nests deeper than ``MAX_DEPTH``
levels of syntax (a sum of 1,000 terms written out is 1,000 levels) is not followed.
Below that, the per-file pipeline runs in a thread with a large stack and a raised recursion
limit (``deep_call``), because libcst's code generation, the interpreter and sympy recurse once or
more per level. Any other syntax error is left to libcst, which knows newer grammar than the
running interpreter may (such a file gets no depth check).
"""

from __future__ import annotations

import ast
import contextvars
import sys
import threading
from dataclasses import dataclass

MAX_DEPTH = 1_000             # levels of syntax (module, statement, expression...) optlint follows
STACK_BYTES = 256 * 1024 * 1024  # virtual: pages are only touched as deep as the recursion goes
RECURSION_LIMIT = 30_000       # fits STACK_BYTES even when every frame recurses through C
_CPYTHON_NESTING = ("too many nested parentheses",)


@dataclass(frozen=True)
class Refusal:
    rule: str       # "syntax-error" (CPython refuses the file) or "file-error" (optlint's own limit)
    line: int
    column: int
    message: str


def refusal(text: str) -> Refusal | None:
    """Why ``text`` must not reach libcst, or None."""
    return checked_parse(text)[0]


def checked_parse(text: str) -> tuple[Refusal | None, ast.Module | None]:
    """(why ``text`` must not reach libcst or None, CPython's tree of it or None): the tree also
    places statements for optlint.positions."""
    try:
        tree = ast.parse(text)
    except SyntaxError as exc:
        if exc.msg in _CPYTHON_NESTING:
            return Refusal("syntax-error", exc.lineno or 1, exc.offset or 1,
                           f"file does not parse: {exc.msg}"), None
        return None, None
    except (RecursionError, MemoryError):  # CPython's parser stack or AST construction overflowed
        return Refusal("syntax-error", 1, 1,
                       "file is nested too deeply for Python's own parser; not checked"), None
    except ValueError:  # e.g. a NUL byte: libcst reports it
        return None, None
    depth, node = _deepest(tree)
    if depth > MAX_DEPTH:
        return Refusal("file-error", node.lineno, node.col_offset + 1,
                       f"expression nested more than {MAX_DEPTH} levels deep (each term of a sum "
                       f"written out is a level); optlint does not follow it; file not checked"), None
    return None, tree


def _deepest(tree: ast.AST) -> tuple[int, ast.AST]:
    """(depth of the deepest node, the outermost expression on the way to it). Iterative: the tree
    may be deeper than Python's recursion limit."""
    best, where = 0, tree
    stack: list[tuple[ast.AST, int, ast.AST | None]] = [(tree, 0, None)]
    while stack:
        node, depth, top = stack.pop()
        if top is None and isinstance(node, ast.expr):
            top = node
        if depth > best:
            best, where = depth, top or node
        stack.extend((child, depth + 1, top) for child in ast.iter_child_nodes(node))
    return best, where


def deep_call(fn, *args):
    """``fn(*args)`` in a thread with a large stack and a raised recursion limit, in a copy of the
    caller's context; its exception is re-raised here. Where no such thread can be started, ``fn``
    runs here as it is."""
    box: dict[str, object] = {}
    context = contextvars.copy_context()  # a new thread starts with an empty context otherwise

    def work():
        try:
            box["value"] = fn(*args)
        except BaseException as exc:  # handed to the caller, who decides
            box["error"] = exc

    try:
        previous = threading.stack_size(STACK_BYTES)
    except (ValueError, RuntimeError):
        return fn(*args)
    old_limit = sys.getrecursionlimit()
    # The limit is per interpreter; only the new thread runs while this one waits for it.
    sys.setrecursionlimit(max(old_limit, RECURSION_LIMIT))
    try:
        try:
            thread = threading.Thread(target=context.run, args=(work,), name="optlint-file", daemon=True)
            thread.start()
        except RuntimeError:  # no memory for the stack (strict overcommit): run shallow
            sys.setrecursionlimit(old_limit)
            return fn(*args)
        finally:
            threading.stack_size(previous)
        thread.join()
    finally:
        sys.setrecursionlimit(old_limit)
    if "error" in box:
        raise box["error"]  # type: ignore[misc]
    return box["value"]
