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
# try block), `import a, cvxpy` and `from cvxpy.atoms import norm` all match, also on a first line
# behind a UTF-8 byte order mark and after a form feed (both allowed by Python's tokenizer).
def _imports(library: bytes) -> re.Pattern[bytes]:
    return re.compile(rb"^(?:\xef\xbb\xbf)?[ \t\f]*(?:from[ \t]+" + library + rb"\b|import[ \t]+[^\n#]*\b"
                      + library + rb"\b)", re.MULTILINE)


class _Lagrangian:
    """Array or modelling code with a statement shaped like a multiplier update (``lam = lam + eta *
    g``, ``lam += rho * r``, ``lam.add_(...)``) or a minimiser/optimizer call; line by line, so a
    10 MB one-line file costs one pass, not a quadratic regular-expression search."""

    imports = re.compile(rb"^[ \t]*(?:from[ \t]+(?:numpy|torch|jax|cvxpy|scipy)\b|import[ \t]+[^\n#]*"
                         rb"\b(?:numpy|torch|jax|cvxpy|scipy)\b)", re.MULTILINE)
    head = re.compile(rb"[ \t]*([A-Za-z_][\w.]*)(?:\[[^\]\n]*\])?[ \t]*([-+]?)=(?!=)")

    def search(self, data: bytes) -> bool:
        if not self.imports.search(data):
            return False
        if b"optim." in data or b"minimize" in data or b".add_(" in data or b".sub_(" in data:
            return True
        for line in data.splitlines():
            if b"*" not in line or b"=" not in line or len(line) > 500:
                continue
            m = self.head.match(line)
            if m is None:
                continue
            if m.group(2) or re.search(rb"\b" + re.escape(m.group(1).split(b".")[0]) + rb"\b", line[m.end():]):
                return True
        return False


class _AlsoNames:
    """An import signature that also needs a word in the file: the scipy dialect reads only
    scipy.optimize, which any use must spell out (``from scipy import optimize``, ``import
    scipy.optimize``, ``scipy.optimize.minimize``), so files using only scipy.linalg, scipy.stats or
    scipy.signal are skipped without parsing."""

    def __init__(self, pattern: re.Pattern[bytes], word: bytes):
        self.pattern, self.word = pattern, word

    def search(self, data: bytes) -> bool:
        return self.word in data and self.pattern.search(data) is not None


SIGNATURES: dict = {
    "dsl": _imports(rb"cvxpy"),
    "algebraic": _imports(rb"pyomo"),
    "scipy": _AlsoNames(_imports(rb"scipy"), b"optimize"),
    "casadi": _imports(rb"casadi"),
    "losses": _imports(rb"torch"),
    "pulp": _imports(rb"pulp"),
    "lagrangian": _Lagrangian(),
}


# The library name each signature needs: a notebook without any of them is skipped unparsed.
WORDS: dict[str, bytes] = {"dsl": b"cvxpy", "algebraic": b"pyomo", "scipy": b"scipy", "casadi": b"casadi",
                           "losses": b"torch", "pulp": b"pulp", "lagrangian": b"import"}


def dialects_in(data: bytes) -> tuple[str, ...]:
    return tuple(name for name, sig in SIGNATURES.items() if WORDS[name] in data and sig.search(data))


def scan_dialects(path: str, data: bytes) -> tuple[str, ...]:
    """Dialects a file may hold, from its bytes (a notebook: from its code cells only; one that is
    not a notebook's JSON, e.g. with merge-conflict markers, by the library names alone, so that
    the reader reports it instead of the run skipping it)."""
    if path.endswith(".ipynb"):
        if not any(word in data for word in WORDS.values()):
            return ()
        code = notebook_code(data)
        if code is None:
            return tuple(name for name, word in WORDS.items() if word in data)
        return dialects_in(code)
    return dialects_in(data)


def notebook_code(data: bytes) -> bytes | None:
    """The code cells of a notebook, joined, for the byte scan (None when the JSON is not a notebook)."""
    try:
        nb = json.loads(data)
    except (ValueError, UnicodeDecodeError, RecursionError):
        return None
    cells = nb.get("cells") if isinstance(nb, dict) else None
    if not isinstance(cells, list):
        return None
    parts = []
    for cell in cells:
        if isinstance(cell, dict) and cell.get("cell_type") == "code":
            src = cell.get("source", "")
            if isinstance(src, list):
                src = "".join(s for s in src if isinstance(s, str))
            if isinstance(src, str):
                parts.append(src)
    return "\n".join(parts).encode("utf-8", "replace")
