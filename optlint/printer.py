"""Print model expressions the way a modeller would write them, for messages.

``pnorm(w, 2)`` prints as ``norm(w, 2)``, ``index(x, t)`` as ``x[t]``, ``matmul(A, x)`` as ``A @ x``
and fresh index symbols (``t#3``) as their source name. Long expressions are shortened with an
ellipsis so that a message stays one readable line.
"""

from __future__ import annotations

import re

import sympy
from sympy.printing.str import StrPrinter

from optlint.calculus.functions import ModelFunction

MAX_LEN = 120
_FRESH = re.compile(r"#\d+")


class ModelPrinter(StrPrinter):
    def _print_Function(self, expr):
        cls = type(expr)
        if isinstance(expr, ModelFunction):
            name = cls.__name__
            args = [self._print(a) for a in expr.args]
            if name == "index":
                return f"{self.parenthesize(expr.args[0], 100)}[{args[1]}]"
            if name == "matmul":
                return f"{self.parenthesize(expr.args[0], 60)} @ {self.parenthesize(expr.args[1], 60)}"
            if name == "transpose":
                return f"{self.parenthesize(expr.args[0], 100)}.T"
            if name == "pnorm" and expr.args[1] == sympy.oo:
                return f"norm({args[0]}, inf)"
            if name == "power":
                return f"power({args[0]}, {args[1]})"
            return f"{cls.dsl_name}({', '.join(args)})"
        if cls.__name__ == "slice":
            parts = ["" if a == sympy.Symbol("_") else self._print(a) for a in expr.args]
            while len(parts) > 2 and parts[-1] == "":
                parts.pop()
            return ":".join(parts)
        if cls.__name__ == "ix":
            return ", ".join(self._print(a) for a in expr.args)
        return super()._print_Function(expr)

    def _print_Symbol(self, expr):
        return _FRESH.sub("", expr.name)

    def _print_Dummy(self, expr):
        return expr.name

    def _print_Float(self, expr):
        value = float(expr)
        return repr(int(value)) + ".0" if value.is_integer() and abs(value) < 1e15 else f"{value:.6g}"

    def _print_Exp1(self, expr):
        return "e"


_PRINTER = ModelPrinter({"order": "none"})


def show(expr, limit: int = MAX_LEN) -> str:
    try:
        text = _PRINTER.doprint(expr)
    except (RecursionError, TypeError, ValueError, AttributeError):
        text = type(expr).__name__
    if len(text) > limit:
        text = text[: limit - 1] + "…"
    return text
