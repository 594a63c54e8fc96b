"""Source ranges of a module's nodes (libcst's ``PositionProvider`` ranges), computed once, on first use.

``MetadataWrapper.resolve(PositionProvider)`` runs the provider's code-generation pass and then,
in libcst 1.x, walks the whole tree once more for batched providers even when none are asked for;
on the model fixtures that second walk cost almost as much as the first (cProfile, 373 files:
5.9 s of 13.7 s). ``positions(wrapper)`` runs the provider's pass alone, and only when a range is
first asked for: a file whose recognisers find nothing to place never pays for it. The ranges
are libcst's own (tests/test_positions.py compares them with ``resolve`` on every fixture).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

import libcst as cst
from libcst.metadata import CodeRange, PositionProvider


class Positions(Mapping):
    """A read-only mapping node -> ``CodeRange`` of one module, filled on first lookup."""

    def __init__(self, module: cst.Module):
        self._module = module
        self._ranges: Mapping[cst.CSTNode, CodeRange] | None = None

    def _load(self) -> Mapping[cst.CSTNode, CodeRange]:
        if self._ranges is None:
            self._ranges = _compute(self._module)
        return self._ranges

    def __getitem__(self, node: cst.CSTNode) -> CodeRange:
        return self._load()[node]

    def get(self, node: Any, default: Any = None) -> Any:
        return self._load().get(node, default)

    def __contains__(self, node: object) -> bool:
        return node in self._load()

    def __iter__(self) -> Iterator[cst.CSTNode]:
        return iter(self._load())

    def __len__(self) -> int:
        return len(self._load())


def _compute(module: cst.Module) -> Mapping[cst.CSTNode, CodeRange]:
    provider = PositionProvider()
    try:
        provider._computed = {}
        provider._gen_impl(module)  # the provider's own pass, without resolve's extra tree walk
        return provider._computed
    except AttributeError:  # a libcst without these internals: the public way, slower
        return cst.MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)


def positions(wrapper: cst.MetadataWrapper) -> Mapping[cst.CSTNode, CodeRange]:
    """The ranges of ``wrapper.module``'s nodes, shared by everyone who asks for this wrapper (also
    through ``wrapper.resolve(PositionProvider)``)."""
    store = getattr(wrapper, "_metadata", None)
    if not isinstance(store, dict):
        return wrapper.resolve(PositionProvider)
    found = store.get(PositionProvider)
    if found is None:
        found = store[PositionProvider] = Positions(wrapper.module)
    return found
