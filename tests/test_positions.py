"""optlint.positions gives libcst's own PositionProvider ranges (the oracle: libcst's
``MetadataWrapper.resolve``), for every node of every fixture and of a sample of real files."""

from __future__ import annotations

import sysconfig
from pathlib import Path

import libcst as cst
import pytest
from libcst.metadata import PositionProvider

from optlint.positions import Positions, positions

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = sorted(p for p in (ROOT / "fixtures").rglob("*.py") if "broken" not in p.name)
STDLIB = Path(sysconfig.get_paths()["stdlib"])
REAL = [STDLIB / name for name in ("textwrap.py", "fractions.py", "statistics.py", "json/decoder.py")]


def _ranges(text: str):
    module = cst.parse_module(text)
    ours = positions(cst.MetadataWrapper(module, unsafe_skip_copy=True))
    theirs = cst.MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)
    return module, ours, theirs


@pytest.mark.parametrize("path", FIXTURES + [p for p in REAL if p.exists()], ids=lambda p: p.name)
def test_same_ranges_as_libcst(path):
    module, ours, theirs = _ranges(path.read_text(encoding="utf-8"))
    assert len(ours) == len(theirs) > 0
    for node, rng in theirs.items():
        assert ours[node] == rng, (type(node).__name__, rng, ours[node])


def test_lazy_until_asked_and_shared_by_the_wrapper():
    wrapper = cst.MetadataWrapper(cst.parse_module("x = 1\n\ny = (x +\n     2)\n"), unsafe_skip_copy=True)
    first = positions(wrapper)
    assert isinstance(first, Positions) and first._ranges is None  # nothing computed yet
    assert positions(wrapper) is first and wrapper.resolve(PositionProvider) is first
    stmt = wrapper.module.body[1]
    rng = first[stmt]
    assert (rng.start.line, rng.start.column, rng.end.line, rng.end.column) == (3, 0, 4, 7)
    assert first.get(object()) is None and stmt in first
