"""Elide: replace huge numeric literals by a placeholder before libcst parses a file.

libcst builds a Python object per token, so a data table pasted into a model file (a 1,000 x
1,000 matrix of numbers) costs minutes to parse although it holds no model structure. For large
files, CPython's own parser (``ast.parse``: it only parses, nothing is compiled or run) locates
literals made only of numbers whose count passes a limit; their text is replaced by a
parenthesised placeholder name padded with spaces, every newline kept, so every other line and
column of the file is exactly where it was. The model then sees that table as data of unknown
value, which is all a table of that size could tell the analysis anyway (literal matrices up to
the limit are still read exactly).
"""

from __future__ import annotations

import ast

PLACEHOLDER = "__large_literal__"
MIN_TEXT = 200_000          # smaller files are parsed as they are
MAX_NUMBERS = 10_000        # a literal with more numbers than this is elided


def _count_numbers(node) -> int | None:
    """Numbers in a literal made only of numbers (nested lists/tuples, unary signs), else None."""
    total = 0
    stack = [node]
    while stack:
        n = stack.pop()
        if isinstance(n, (ast.List, ast.Tuple, ast.Set)):
            stack.extend(n.elts)
        elif isinstance(n, ast.UnaryOp) and isinstance(n.op, (ast.USub, ast.UAdd)):
            stack.append(n.operand)
        elif isinstance(n, ast.Constant) and isinstance(n.value, (int, float, complex)) and not isinstance(n.value, bool):
            total += 1
        else:
            return None
    return total


def _char_col(line: str, byte_col: int) -> int:
    return len(line.encode("utf-8")[:byte_col].decode("utf-8", "replace"))


def elide_large_literals(text: str) -> tuple[str, int]:
    """(text with large numeric literals replaced, number of literals replaced)."""
    if len(text) < MIN_TEXT or text.count(",") < MAX_NUMBERS:
        return text, 0
    try:
        tree = ast.parse(text)
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return text, 0  # libcst will report what is wrong with it
    spans = []
    stack = [tree]
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.List, ast.Tuple, ast.Set)) and getattr(node, "end_lineno", None):
            count = _count_numbers(node)
            if count is not None and count > MAX_NUMBERS:
                spans.append((node.lineno, node.col_offset, node.end_lineno, node.end_col_offset))
                continue
        stack.extend(ast.iter_child_nodes(node))
    if not spans:
        return text, 0
    lines = text.splitlines(keepends=True)
    for l0, c0, l1, c1 in sorted(spans, reverse=True):
        first, last = lines[l0 - 1], lines[l1 - 1]
        a, b = _char_col(first, c0), _char_col(last, c1)
        # Blank the span (newlines stay), then write "(" and ")" at its ends and the name inside.
        for i in range(l0 - 1, l1):
            line = lines[i]
            start = a if i == l0 - 1 else 0
            end = b if i == l1 - 1 else len(line.rstrip("\r\n"))
            lines[i] = line[:start] + " " * (end - start) + line[end:]
        room = [(i, (a if i == l0 - 1 else 0), (b if i == l1 - 1 else len(lines[i].rstrip("\r\n"))))
                for i in range(l0 - 1, l1)]
        placed = False
        for i, start, end in room:
            need = len(PLACEHOLDER) + (2 if (i == l0 - 1 and i == l1 - 1) else 1 if i in (l0 - 1, l1 - 1) else 0)
            if end - start >= need + (0 if i == l0 - 1 else 0):
                line = lines[i]
                offset = start + (1 if i == l0 - 1 else 0)
                lines[i] = line[:offset] + PLACEHOLDER + line[offset + len(PLACEHOLDER):]
                placed = True
                break
        if not placed:
            continue  # no room to write a name (cannot happen for a literal of this size)
        line = lines[l0 - 1]
        lines[l0 - 1] = line[:a] + "(" + line[a + 1:]
        line = lines[l1 - 1]
        lines[l1 - 1] = line[:b - 1] + ")" + line[b:]
    return "".join(lines), len(spans)
