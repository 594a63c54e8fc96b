"""Sources: read a file's bytes and turn them into Python text for the parser, never executing it.

A ``.py`` file is decoded with the encoding Python itself would use (PEP 263 coding line, UTF-8
BOM, UTF-8 by default). A notebook's code cells are joined into one text, with IPython magics and
shell escapes blanked out (they are not Python), and a line map back to (cell, line in cell), so
findings can name the cell.
"""

from __future__ import annotations

import io
import json
import tokenize
from dataclasses import dataclass, field


class SourceError(Exception):
    """The file cannot be turned into Python text; ``line`` is where, when known."""

    def __init__(self, message: str, line: int = 1, column: int = 1):
        super().__init__(message)
        self.line = line
        self.column = column


@dataclass
class Source:
    path: str
    text: str
    cell_map: list[tuple[int, int]] | None = None  # per text line (0-based index): (cell, line in cell)
    lines: list[str] = field(default_factory=list)

    def __post_init__(self):
        self.lines = self.text.splitlines()

    def locate(self, line: int) -> tuple[int | None, int]:
        """(notebook cell or None, line to show) for a 1-based line of ``text``."""
        if self.cell_map is None or not (1 <= line <= len(self.cell_map)):
            return None, line
        return self.cell_map[line - 1]


def decode_python(data: bytes) -> str:
    if b"\x00" in data:
        raise SourceError("file contains NUL bytes: not Python source")
    try:
        encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)
    except SyntaxError as exc:
        raise SourceError(f"cannot determine the source encoding: {exc.msg if hasattr(exc, 'msg') else exc}")
    try:
        return data.decode(encoding)
    except (UnicodeDecodeError, LookupError) as exc:
        position = exc.start if isinstance(exc, UnicodeDecodeError) else 0
        line = data.count(b"\n", 0, position) + 1
        raise SourceError(f"cannot decode the file as {encoding}: invalid byte at offset {position}", line)


def _is_magic(line: str) -> bool:
    stripped = line.lstrip()
    return stripped.startswith(("%", "!")) or (stripped.endswith("?") and not stripped.startswith("#"))


def notebook_source(path: str, data: bytes) -> Source:
    try:
        nb = json.loads(data.decode("utf-8-sig"))
    except (UnicodeDecodeError, ValueError, RecursionError) as exc:
        raise SourceError(f"notebook is not valid JSON: {exc}", getattr(exc, "lineno", 1), getattr(exc, "colno", 1))
    cells = nb.get("cells") if isinstance(nb, dict) else None
    if not isinstance(cells, list):
        raise SourceError("notebook has no list of cells")
    out: list[str] = []
    cell_map: list[tuple[int, int]] = []
    for number, cell in enumerate(cells, start=1):
        if not isinstance(cell, dict) or cell.get("cell_type") != "code":
            continue
        src = cell.get("source", "")
        if isinstance(src, list):
            if not all(isinstance(s, str) for s in src):
                raise SourceError(f"cell {number} has a source that is not text")
            src = "".join(src)
        if not isinstance(src, str):
            raise SourceError(f"cell {number} has a source that is not text")
        cell_lines = src.splitlines()
        blank_all = bool(cell_lines) and cell_lines[0].lstrip().startswith("%%")
        for i, line in enumerate(cell_lines, start=1):
            out.append("" if blank_all or _is_magic(line) else line)
            cell_map.append((number, i))
        out.append("")
        cell_map.append((number, len(cell_lines) + 1))
    return Source(path, "\n".join(out) + "\n", cell_map)


def read_source(path: str, data: bytes) -> Source:
    if path.endswith(".ipynb"):
        return notebook_source(path, data)
    return Source(path, decode_python(data))
