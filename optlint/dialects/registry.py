"""Registry: collects what the interpreter meets (objectives, constraints, notices) into a Model.

One source site is one IR entry, however often the interpreter reaches it (loops, inlined helpers,
branches); each distinct expression met there is kept as a variant, so a finding can say which
branch or which call made the model non-convex.
"""

from __future__ import annotations

import libcst as cst
import sympy

from optlint.ir import Constraint, Declaration, Model, Notice, Objective, Variant

MAX_VARIANTS = 12


class Registry:
    def __init__(self, path: str, dialect: str):
        self.model = Model(path=path, dialect=dialect)
        self._objectives: dict[tuple, Objective] = {}
        self._constraints: dict[tuple, Constraint] = {}
        self.skipped_sites: set[tuple] = set()
        self._canonical: dict = {}
        self._canonical_of: dict = {}  # expression -> its canonical form; cleared when _canonical changes

    # -- declarations ------------------------------------------------------------------------

    def declare(self, decl: Declaration, where: tuple[int, int]) -> None:
        """Record a declaration; ``where`` (line, column) identifies its source site."""
        self.model.declarations[decl.symbol] = decl
        self._canonical[decl.symbol] = sympy.Symbol(f"{decl.name}@{where[0]}:{where[1]}")
        self._canonical_of.clear()

    def alias(self, symbol, variable, tag: str) -> None:
        """``symbol`` stands for ``variable`` at the place ``tag`` (a DSL written operation): variants
        that differ only in such aliases of one place are one variant."""
        self._canonical[symbol] = sympy.Symbol(f"{self._canonical.get(variable, variable)}~{tag}")
        self._canonical_of.clear()

    def _same_up_to_renaming(self, a, b) -> bool:
        """Variants equal once each declared symbol is replaced by one symbol for its site."""
        if a == b:
            return True
        try:
            return self._canonical_form(a) == self._canonical_form(b)
        except (AttributeError, TypeError):
            return False

    def _canonical_form(self, e):
        """``e`` with every declared symbol renamed for its site (memoised: each new variant is
        compared with every earlier one)."""
        found = self._canonical_of.get(e)
        if found is None:
            found = self._canonical_of[e] = e.xreplace(self._canonical)
        return found

    # -- model parts -------------------------------------------------------------------------

    def objective(self, interp, node: cst.CSTNode, sense: str, expr, branch: tuple[str, ...]) -> tuple:
        site = interp.site(node)
        key = ("objective", site.line, site.column)
        obj = self._objectives.get(key)
        if obj is None:
            obj = Objective(sense=sense, variants=[], site=site, dialect=self.model.dialect, code=interp.code(node))
            self._objectives[key] = obj
            self.model.objectives.append(obj)
        if len(obj.variants) < MAX_VARIANTS and not any(self._same_up_to_renaming(v.expr, expr) for v in obj.variants):
            obj.variants.append(Variant(expr, branch))
        return key

    def constraint(self, interp, node: cst.CSTNode, part: cst.CSTNode | None, relation: str, left, right,
                   branch: tuple[str, ...], origin: str = "comparison") -> tuple:
        site = interp.site(node)
        part_pos = interp.position(part).start if part is not None else None
        key = ("constraint", site.line, site.column, part_pos.line if part_pos else 0,
               part_pos.column if part_pos else 0, relation)
        con = self._constraints.get(key)
        if con is None:
            con = Constraint(relation=relation, variants=[], site=site, dialect=self.model.dialect,
                             code=interp.code(node), origin=origin, in_loop=interp.loop_depth > 0)
            self._constraints[key] = con
            self.model.constraints.append(con)
            con.instances = interp.instances() if interp.loop_depth > 0 else 1
        elif con.instances != (interp.instances() if interp.loop_depth > 0 else 1):
            con.instances = None  # reached from places with different counts: say only "many"
        con.in_loop = con.in_loop or interp.loop_depth > 0
        if len(con.variants) < MAX_VARIANTS and not any(
                self._same_up_to_renaming(l, left) and self._same_up_to_renaming(r, right) for l, r, _ in con.variants):
            con.variants.append((left, right, branch))
        return key

    def constraint_for(self, key) -> Constraint | None:
        """The constraint registered under ``key`` (a key a ``constraint`` call returned)."""
        return self._constraints.get(key)

    def psd(self, interp, node, left, right) -> tuple:
        return self.constraint(interp, node, None, "psd", left, right, (), origin="semidefinite")

    def notice(self, notice: Notice) -> None:
        if all((n.rule, n.site) != (notice.rule, notice.site) for n in self.model.notices):
            self.model.notices.append(notice)

    def note_budget(self, path: str) -> None:
        self.model.truncated = True

    def skip(self, keys: list[tuple]) -> None:
        self.skipped_sites.update(keys)

    def finish(self) -> Model:
        skipped_obj = {k for k in self.skipped_sites if k[0] == "objective"}
        skipped_con = {k for k in self.skipped_sites if k[0] == "constraint"}
        self.model.objectives = [o for k, o in self._objectives.items() if k not in skipped_obj]
        self.model.constraints = [c for k, c in self._constraints.items() if k not in skipped_con]
        return self.model


def run_dialect(wrapper: cst.MetadataWrapper, path: str, hooks, registry: Registry, finish=None) -> list[Model]:
    """Run the shared interpreter with a dialect's hooks; the file's model, or [] when it has none."""
    from optlint.interp import Interpreter

    interp = Interpreter(wrapper, path, hooks, registry)
    interp.run()
    model = (finish or registry.finish)()
    model.dependencies = interp.files_read
    if not (model.objectives or model.constraints or model.notices):
        return []
    return [model]
