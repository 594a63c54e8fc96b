"""optlint.positions gives libcst's own PositionProvider ranges (the oracle: libcst's
``MetadataWrapper.resolve``) for every node, whichever way it answers: the statement lines it
takes from CPython's ``ast``, the ranges it takes from generating one statement's code, and the
whole-module pass it falls back to. Checked on every fixture, on real files of the standard
library and on a file of odd layouts."""

from __future__ import annotations

import ast
import sysconfig
import textwrap
from pathlib import Path

import libcst as cst
import pytest
from libcst.metadata import PositionProvider

from optlint.positions import Positions, install, positions

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = sorted(p for p in (ROOT / "fixtures").rglob("*.py") if "broken" not in p.name)
STDLIB = Path(sysconfig.get_paths()["stdlib"])
REAL = [p for p in (STDLIB / name for name in ("textwrap.py", "fractions.py", "contextlib.py",
                                               "json/decoder.py", "dataclasses.py")) if p.exists()]

ODD = textwrap.dedent('''\
    # a header comment
    import os; import sys
    x = 1 ; y = (2 +
                 3)
    z = x + \\
        y


    @staticmethod
    @property
    def first(a, *, b=lambda q: q + 1):
        """doc"""
        if a: b = 1; a = 2
        elif b:
            pass
        elif a > b:  # comment
            a = [i for i in
                 range(3)]
        else:
            a = {k: v for k, v in {}.items()}
        for i in range(3):
            continue
        else:
            a = 0
        while a:
            break
        else:
            pass
        try:
            a = 1
        except (ValueError, TypeError) as e:
            raise
        except Exception:
            pass
        else:
            a = 2
        finally:
            a = 3
        with open(a) as f, open(b) as g:
            return f
        match a:
            case [1, 2]:
                a = 1
            case {"k": v} if v:
                a = 2
            case _:
                pass


    class Outer(object):
        class Inner:
            x: int = 0

            async def go(self):
                async with self as s:
                    async for t in s:
                        await t
        def method(self): return self
    if True: first(1)
    ''')


def _nodes(node):
    yield node
    for child in node.children:
        yield from _nodes(child)


def _check(text: str) -> int:
    """Compare every answer with libcst's; returns how many statements answered locally."""
    module = cst.parse_module(text)
    full = cst.MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)
    tree = ast.parse(text)
    ours = Positions(module, text, tree)
    index = ours._index()
    local = 0
    for node in _nodes(module):
        line = ours.statement_line(node)
        if line is not None:
            assert line == full[node].start.line, (type(node).__name__, module.code_for_node(node)[:60])
        where = index.get(id(node))
        if where is None or where[1] is None:
            continue
        fresh = Positions(module, text, tree)
        fresh._starts = index
        assert fresh._generate(node, *where) == 0  # its code generated at the right lines at once
        for inner in _nodes(node):
            if inner not in full:
                continue  # a node libcst's code generation never places (unused whitespace)
            assert fresh.within(inner, [node]) == full[inner], (type(inner).__name__, module.code_for_node(inner)[:60])
        assert fresh._ranges is None  # every answer came from the statement's own code
        local += 1
    assert ours._ranges is None
    for node, rng in full.items():  # and the whole-module pass agrees too
        assert ours[node] == rng
    return local


@pytest.mark.parametrize("path", FIXTURES + REAL, ids=lambda p: p.name)
def test_same_ranges_as_libcst(path):
    assert _check(path.read_text(encoding="utf-8")) > 0


def test_odd_layouts():
    assert _check(ODD) > 20
    assert _check(ODD.replace("    ", "\t")) > 20  # tab indentation


def test_carriage_returns_fall_back_to_the_whole_module():
    text = "x = 1\r\nif x:\r\n    y = (x +\r\n         2)\r\n"
    module = cst.parse_module(text)
    full = cst.MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)
    ours = Positions(module, text, ast.parse(text))
    stmt = module.body[1]
    assert ours.statement_line(stmt) is None
    inner = stmt.body.body[0]
    assert ours.within(inner, [stmt]) == full[inner] and ours._ranges is not None


def test_a_node_outside_the_running_statements_is_still_placed():
    text = "f = lambda v: v * 2\n\ny = f(3)\n"
    module = cst.parse_module(text)
    full = cst.MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)
    ours = Positions(module, text, ast.parse(text))
    body = module.body[0].body[0].value.body  # v * 2, asked for while line 3 runs
    assert ours.within(body, [module.body[1]]) == full[body]
    assert ours.within(cst.Name("elsewhere"), [module.body[1]]) is None  # not of this module


def test_lazy_until_asked_and_shared_by_the_wrapper():
    text = "x = 1\n\ny = (x +\n     2)\n"
    wrapper = cst.MetadataWrapper(cst.parse_module(text), unsafe_skip_copy=True)
    install(wrapper, text, ast.parse(text))
    first = positions(wrapper)
    assert isinstance(first, Positions) and first._ranges is None  # nothing computed yet
    assert positions(wrapper) is first and wrapper.resolve(PositionProvider) is first
    stmt = wrapper.module.body[1]
    assert first.statement_line(stmt) == 3 and first._ranges is None
    rng = first[stmt]
    assert (rng.start.line, rng.start.column, rng.end.line, rng.end.column) == (3, 0, 4, 7)
    assert first.get(object()) is None and stmt in first
