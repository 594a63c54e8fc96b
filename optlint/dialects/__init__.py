"""Dialects: one recogniser module per modelling style, each turning a parsed file into Model IR.

A dialect module provides ``NAME`` and ``recognise(wrapper, path) -> list[Model]``. Its import
signature (for the byte prefilter) lives in ``optlint.prefilter.SIGNATURES`` under the same name,
so the prefilter can run without importing any dialect.
"""

from __future__ import annotations

import importlib

DIALECT_MODULES = {
    "dsl": "optlint.dialects.dsl",
    "algebraic": "optlint.dialects.algebraic",
    "scipy": "optlint.dialects.scipy_opt",
    "casadi": "optlint.dialects.casadi_opti",
    "losses": "optlint.dialects.losses",
    "pulp": "optlint.dialects.pulp_lp",
    "lagrangian": "optlint.dialects.lagrangian",
}


def load(name: str):
    return importlib.import_module(DIALECT_MODULES[name])
