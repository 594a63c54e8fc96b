"""An evaluator for the string form of a witness expression, independent of optlint and sympy.

It walks Python's ``ast`` of the string with a whitelist of node types and function names (never
eval): numbers, the listed variables, + - * / **, unary minus, comparisons, & and |, and the
elementary functions a witness may use. Values are numpy floats; meanings are numpy's and the
textbook definitions (Max/Min of the arguments, Piecewise: the first pair whose condition holds).
"""

from __future__ import annotations

import ast

import numpy as np

_FUNCS = {
    "exp": np.exp, "log": np.log, "sqrt": np.sqrt, "Abs": np.abs, "sin": np.sin, "cos": np.cos,
    "tan": np.tan, "tanh": np.tanh, "sinh": np.sinh, "cosh": np.cosh, "atan": np.arctan, "sign": np.sign,
    "Max": lambda *a: float(np.max(a)), "Min": lambda *a: float(np.min(a)),
}
_CONST = {"pi": np.pi, "E": np.e, "oo": np.inf, "True": True, "False": False}
_BIN = {ast.Add: np.add, ast.Sub: np.subtract, ast.Mult: np.multiply, ast.Div: np.divide,
        ast.Pow: np.power, ast.BitAnd: np.logical_and, ast.BitOr: np.logical_or}
_CMP = {ast.Lt: np.less, ast.LtE: np.less_equal, ast.Gt: np.greater, ast.GtE: np.greater_equal,
        ast.Eq: np.equal, ast.NotEq: np.not_equal}


def evaluate(text: str, values: dict[str, float]) -> float:
    tree = ast.parse(text, mode="eval")
    with np.errstate(all="ignore"):
        return float(_eval(tree.body, values))


def _eval(node, env):
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
        return float(node.value)
    if isinstance(node, ast.Name):
        if node.id in env:
            return env[node.id]
        if node.id in _CONST:
            return _CONST[node.id]
        raise ValueError(f"unknown name {node.id}")
    if isinstance(node, ast.BinOp) and type(node.op) in _BIN:
        return _BIN[type(node.op)](_eval(node.left, env), _eval(node.right, env))
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        v = _eval(node.operand, env)
        return -v if isinstance(node.op, ast.USub) else v
    if isinstance(node, ast.Compare) and len(node.ops) == 1 and type(node.ops[0]) in _CMP:
        return _CMP[type(node.ops[0])](_eval(node.left, env), _eval(node.comparators[0], env))
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and not node.keywords:
        name = node.func.id
        if name == "Piecewise":
            for pair in node.args:
                if not isinstance(pair, ast.Tuple) or len(pair.elts) != 2:
                    raise ValueError("Piecewise pair")
                if bool(_eval(pair.elts[1], env)):
                    return _eval(pair.elts[0], env)
            return np.nan
        if name in ("Eq", "Ne"):
            a, b = (_eval(x, env) for x in node.args)
            return a == b if name == "Eq" else a != b
        if name in _FUNCS:
            return _FUNCS[name](*[_eval(a, env) for a in node.args])
    raise ValueError(f"node not allowed: {ast.dump(node)[:80]}")
