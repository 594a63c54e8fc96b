"""Guards: sign facts the code itself establishes about its data, read from the source.

Real model code checks its weights: ``assert gamma >= 0``, ``if lam < 0: raise ValueError(...)``,
or gives them a literal default (``shrink=0.5``). After such a check the name is known to have that
sign for the rest of the function, and the interpreter rebinds it to data with that sign. Only
plain comparisons of a name (or a dotted attribute) with the literal 0 count; anything else
establishes nothing.
"""

from __future__ import annotations

import libcst as cst

from optlint.names import dotted as _dotted

# (operator, name on the left) -> sign the name has when the comparison holds
_HOLDS_LEFT = {"GreaterThanEqual": "nonnegative", "GreaterThan": "positive",
               "LessThanEqual": "nonpositive", "LessThan": "negative"}
_HOLDS_RIGHT = {"LessThanEqual": "nonnegative", "LessThan": "positive",
                "GreaterThanEqual": "nonpositive", "GreaterThan": "negative"}
_NEGATION = {"nonnegative": "negative", "positive": "nonpositive", "nonpositive": "positive",
             "negative": "nonnegative"}


def _is_zero(node) -> bool:
    from optlint.projections import is_zero

    return isinstance(node, (cst.Integer, cst.Float)) and is_zero(node)  # 0o377 is no float()


def facts(test, holds: bool = True) -> list[tuple[str, str]]:
    """(name, sign) pairs that hold when ``test`` evaluates to ``holds``."""
    if isinstance(test, cst.UnaryOperation) and isinstance(test.operator, cst.Not):
        return facts(test.expression, not holds)
    if isinstance(test, cst.BooleanOperation):
        conj = isinstance(test.operator, cst.And)
        if conj == holds:  # a true `and`, or a false `or`: both sides are known
            return facts(test.left, holds) + facts(test.right, holds)
        return []
    if isinstance(test, cst.Comparison) and len(test.comparisons) == 1:
        op = type(test.comparisons[0].operator).__name__
        left, right = test.left, test.comparisons[0].comparator
        sign = None
        if _is_zero(right) and _dotted(left) is not None:
            name, sign = _dotted(left), _HOLDS_LEFT.get(op)
        elif _is_zero(left) and _dotted(right) is not None:
            name, sign = _dotted(right), _HOLDS_RIGHT.get(op)
        if sign is not None:
            return [(name, sign if holds else _NEGATION[sign])]
    return []


def always_raises(body) -> bool:
    """Whether a block ends by raising (``if bad: raise ...`` guards)."""
    statements = list(body.body) if isinstance(body, cst.IndentedBlock) else [body]
    if not statements:
        return False
    last = statements[-1]
    smalls = last.body if isinstance(last, (cst.SimpleStatementLine, cst.SimpleStatementSuite)) else []
    return bool(smalls) and isinstance(smalls[-1], cst.Raise)


def literal_sign(node) -> str | None:
    """The sign of a numeric literal default (``0.5``, ``-1``), or None."""
    negative = False
    while isinstance(node, cst.UnaryOperation) and isinstance(node.operator, (cst.Minus, cst.Plus)):
        negative ^= isinstance(node.operator, cst.Minus)
        node = node.expression
    if not isinstance(node, (cst.Integer, cst.Float)):
        return None
    try:
        value = float(node.value.replace("_", ""))
    except ValueError:
        return None
    value = -value if negative else value
    if value > 0:
        return "positive"
    if value < 0:
        return "negative"
    return "nonnegative"


# Arrays made of one literal sign: a multiplier initialised with zeros is nonnegative at the start.
CONSTANT_SIGN_CALLS = {
    **{f"{lib}.{fn}": "nonnegative" for lib in ("numpy", "torch", "jax.numpy") for fn in ("zeros", "zeros_like")},
    **{f"{lib}.{fn}": "positive" for lib in ("numpy", "torch", "jax.numpy") for fn in ("ones", "ones_like")},
}


def projection_facts(node) -> list[tuple[str, str]]:
    """(name, sign) after an in-place projection statement: ``lam.clamp_(min=0)``, ``lam.relu_()``,
    ``np.maximum(lam, 0, out=lam)``, ``lam.data.clamp_(min=0)``."""
    from optlint.projections import projection, target_text

    if not isinstance(node, cst.Call) or not isinstance(node.func, cst.Attribute):
        return []
    found = projection(node)
    if found is None:
        return []
    side, inner = found
    name = target_text(inner)
    out = next((a.value for a in node.args if a.keyword is not None and a.keyword.value == "out"), None)
    in_place = node.func.attr.value.endswith("_") or (out is not None and target_text(out) == name)
    if name is None or not in_place or "[" in name:
        return []
    return [(name, "nonnegative" if side > 0 else "nonpositive")]


def assigned_projection(target, value) -> list[tuple[str, str]]:
    """(name, sign) after ``lam = np.maximum(0, ...)`` or ``lam = lam.clamp(min=0)``."""
    from optlint.projections import projection

    found = projection(value) if isinstance(value, cst.Call) else None
    name = _dotted(target)
    if found is None or name is None:
        return []
    return [(name, "nonnegative" if found[0] > 0 else "nonpositive")]


def attribute_writes(fn: cst.FunctionDef, self_name: str) -> list[tuple[str, str | None]]:
    """(attribute, sign or None) for each ``self.attr = value`` / ``self.attr += ...`` in a method:
    the sign of a literal value, or of a name a guard earlier in the method establishes."""
    out: list[tuple[str, str | None]] = []
    known: dict[str, str] = {}
    stack = [list(fn.body.body) if isinstance(fn.body, cst.IndentedBlock) else []]
    while stack:
        body = stack.pop()
        for stmt in body:
            if isinstance(stmt, cst.If):
                if stmt.orelse is None and always_raises(stmt.body):
                    known.update(facts(stmt.test, False))
                stack.append(list(stmt.body.body) if isinstance(stmt.body, cst.IndentedBlock) else [])
                continue
            if not isinstance(stmt, cst.SimpleStatementLine):
                for attr in ("body", "orelse", "finalbody"):
                    part = getattr(stmt, attr, None)
                    inner = getattr(part, "body", None)
                    if isinstance(inner, cst.IndentedBlock):
                        stack.append(list(inner.body))
                    elif isinstance(inner, (list, tuple)):
                        stack.append(list(inner))
                continue
            for small in stmt.body:
                if isinstance(small, cst.Assert):
                    known.update(facts(small.test, True))
                targets, value = [], None
                if isinstance(small, cst.Assign):
                    targets, value = [t.target for t in small.targets], small.value
                elif isinstance(small, (cst.AugAssign, cst.AnnAssign)):
                    targets = [small.target]
                for t in targets:
                    if isinstance(t, cst.Attribute) and isinstance(t.value, cst.Name) and t.value.value == self_name:
                        sign = None
                        if value is not None:
                            sign = literal_sign(value) or (known.get(value.value) if isinstance(value, cst.Name)
                                                           else None)
                        out.append((t.attr.value, sign))
    return out
