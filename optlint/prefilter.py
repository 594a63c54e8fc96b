"""Prefilter: decide from raw bytes, before any decoding or parsing, which dialects a file may hold.

A file that imports none of the supported modelling libraries cannot contain a model that optlint
recognises, so it is never parsed: most files of most repositories end here at the cost of one
regular-expression scan. The scan is deliberately generous (a signature inside a string or a comment
still passes the file on); the recognisers decide for real. For notebooks only the code cells are
scanned: solver logs and tracebacks in outputs mention library names without being code.
"""

from __future__ import annotations

import json
import re

# One import signature per dialect. A module-level import, an indented one (inside a function or
# try block), `import a, cvxpy` and `from cvxpy.atoms import norm` all match.
def _imports(library: bytes) -> re.Pattern[bytes]:
    return re.compile(rb"^[ \t]*(?:from[ \t]+" + library + rb"\b|import[ \t]+[^\n#]*\b" + library + rb"\b)",
                      re.MULTILINE)


SIGNATURES: dict[str, re.Pattern[bytes]] = {
    "dsl": _imports(rb"cvxpy"),
    "algebraic": _imports(rb"pyomo"),
    "scipy": _imports(rb"scipy"),
    "casadi": _imports(rb"casadi"),
    "losses": _imports(rb"torch"),
    "pulp": _imports(rb"pulp"),
}


# The library name each signature needs: a notebook without any of them is skipped unparsed.
WORDS: dict[str, bytes] = {"dsl": b"cvxpy", "algebraic": b"pyomo", "scipy": b"scipy", "casadi": b"casadi",
                           "losses": b"torch", "pulp": b"pulp"}


def dialects_in(data: bytes) -> tuple[str, ...]:
    return tuple(name for name, sig in SIGNATURES.items() if WORDS[name] in data and sig.search(data))


def scan_dialects(path: str, data: bytes) -> tuple[str, ...]:
    """Dialects a file may hold, from its bytes (a notebook: from its code cells only)."""
    if path.endswith(".ipynb"):
        if not any(word in data for word in WORDS.values()):
            return ()
        return dialects_in(notebook_code(data))
    return dialects_in(data)


def notebook_code(data: bytes) -> bytes:
    """The code cells of a notebook, joined, for the byte scan (b"" when the JSON is not a notebook)."""
    try:
        nb = json.loads(data)
    except (ValueError, UnicodeDecodeError, RecursionError):
        return b""
    cells = nb.get("cells") if isinstance(nb, dict) else None
    if not isinstance(cells, list):
        return b""
    parts = []
    for cell in cells:
        if isinstance(cell, dict) and cell.get("cell_type") == "code":
            src = cell.get("source", "")
            if isinstance(src, list):
                src = "".join(s for s in src if isinstance(s, str))
            if isinstance(src, str):
                parts.append(src)
    return "\n".join(parts).encode("utf-8", "replace")
