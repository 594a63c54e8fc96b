"""Interpret: a small abstract evaluator that follows how model-building code assembles its values.

It walks a module's statements in order, the way the code would run, but computes *symbolic*
values: sympy expressions for model terms, lists of constraints, objectives, problems, functions.
It never runs user code and never imports anything; calls it does not understand become data (when
no decision variable flows into them) or unknown functions (when one does).

How it follows the code:
- names are flow-sensitive: ``x = a; x = x + b`` is ``a + b``;
- ``if``/``else``, ``try``/``except`` and ``match`` are run branch by branch and their environments
  merged, so a name may have several *alternatives*; each alternative carries the branch labels
  ("`risk` as assigned on line 14") that a finding reports;
- loops run their body twice with fresh index symbols (catches sign flips in accumulations such as
  ``obj = -obj + ...``); comprehensions bind their targets to fresh index symbols;
- helper functions of the same module are inlined at their call sites (depth- and size-bounded);
  every function is also run on its own with its parameters as data, so models built inside
  functions are found even if nothing calls them;
- objects: calling a class of the module makes an instance (its ``__init__`` inlined with ``self``
  bound); ``self.attr = value`` sets the instance's attribute, ``self.method(...)`` inlines the
  method; a method run on its own gets an instance on which ``__init__`` has run first;
- ``functools.partial`` and decorators a dialect understands (``@model.Constraint(...)``) are followed;
- a helper imported from a sibling module of the same repository is parsed on demand (size-bounded,
  its top level bound but never executed) and inlined like a local one; what happens inside it is
  reported at the call site in the analysed file.

A dialect supplies ``DialectHooks``: how its library calls (resolved by qualified name) build values.
The interpreter registers objectives and constraints with the hooks' ``Registry`` as it meets them.
"""

from __future__ import annotations

import itertools
from contextvars import ContextVar
from dataclasses import dataclass, field
from typing import Any

import libcst as cst
import sympy
from libcst.metadata import QualifiedNameSource

from optlint.calculus import functions as F
from optlint.ir import Site
from optlint import guards
from optlint.names import QualifiedNames
from optlint.names import dotted as _dotted
from optlint.lift import DataSymbol, data, involves, is_expr, number_from_literal, safe_pow
from optlint.positions import positions
from optlint.lift import maximum as _maximum, minimum as _minimum

# The run's configuration (engine.Options) while a file is recognised; set by the engine.
OPTIONS: ContextVar = ContextVar("optlint_options", default=None)

MAX_ALTS = 12          # alternatives kept per evaluated expression
MAX_INLINE_DEPTH = 6   # nested helper inlining
MAX_STATEMENTS = 20000  # statements executed per file (loops, inlining) before giving up quietly
MAX_FOREIGN_BYTES = 256 * 1024  # a sibling module larger than this is not parsed for its helpers
MAX_FOREIGN_MODULES = 16  # sibling modules parsed per analysed file


# ---------------------------------------------------------------------------------------------
# Values

@dataclass
class Alt:
    value: Any
    branch: tuple[str, ...] = ()
    line: int = 0  # line of the assignment that produced it (for branch labels)


_NO_GRAD = ("torch.no_grad", "torch.inference_mode")


class Opaque:
    """A Python value the interpreter does not model; lifts to a DataSymbol named by its text."""

    __slots__ = ("text",)

    def __init__(self, text: str):
        self.text = text


@dataclass
class GlobalRef:
    """Something imported or built in, by qualified name (``cvxpy.Minimize``, ``builtins.sum``)."""

    qualname: str


@dataclass
class ListVal:
    items: list[Any]
    from_comprehension: bool = False


@dataclass
class DictVal:
    items: dict[Any, Any]
    node: Any = None  # the dict display, when it came from one (dialects report sites there)
    default: Any = None  # a dict comprehension's representative value, for keys not known


@dataclass
class FuncVal:
    node: Any  # cst.FunctionDef | cst.Lambda
    closure: "Env"
    name: str
    owner: Any = None  # the ClassVal a method belongs to (for ``super()``)


@dataclass
class BoundMethod:
    base: Any
    name: str
    base_text: str


@dataclass
class ConsVal:
    """The value of a constraint expression: the keys under which the registry recorded it."""

    keys: tuple[Any, ...]


@dataclass
class ObjVal:
    key: Any


@dataclass
class ProbVal:
    objective: Any
    constraints: Any
    site: Site


@dataclass
class ClassVal:
    name: str
    methods: dict[str, FuncVal] = field(default_factory=dict)
    bases: tuple[str, ...] = ()  # qualified names of imported bases, names of local ones
    attrs: dict[str, list[Alt]] = field(default_factory=dict)  # class-level assignments
    parents: tuple["ClassVal", ...] = ()  # base classes defined in the analysed code

    def find_method(self, name: str) -> "FuncVal | None":
        if name in self.methods:
            return self.methods[name]
        for parent in self.parents:
            found = parent.find_method(name)
            if found is not None:
                return found
        return None

    def all_bases(self) -> tuple[str, ...]:
        out = list(self.bases)
        for parent in self.parents:
            out.extend(parent.all_bases())
        return tuple(out)


@dataclass(eq=False)
class InstanceVal:
    """An object: an instance of a class of the analysed code, or a library object a dialect models
    (``kind`` names it, e.g. an algebraic model); attributes assigned on it live in ``attrs``."""

    cls: ClassVal | None
    attrs: dict[str, list[Alt]] = field(default_factory=dict)
    kind: str = ""
    data: dict[str, Any] = field(default_factory=dict)  # dialect-private state


@dataclass
class BoundFunc:
    """A method of a local class bound to its instance (``self`` is the first argument)."""

    func: FuncVal
    self_value: Any


@dataclass
class SuperVal:
    """``super()`` inside a method: attribute lookups start at the owner's base classes."""

    owner: "ClassVal"
    self_value: Any


@dataclass
class PartialVal:
    """``functools.partial(func, *args, **kwargs)``."""

    func: Any
    args: list[Any]
    kwargs: dict[str, Any]


NONE = Opaque("None")


class Env:
    __slots__ = ("vars", "parent")

    def __init__(self, parent: "Env | None" = None, vars: dict | None = None):
        self.vars: dict[str, list[Alt]] = vars if vars is not None else {}
        self.parent = parent

    def lookup(self, name: str) -> list[Alt] | None:
        env = self
        while env is not None:
            if name in env.vars:
                return env.vars[name]
            env = env.parent
        return None

    def copy(self) -> "Env":
        return Env(self.parent, dict(self.vars))


def merge_envs(base: Env, branches: list[Env], labels: list[str]) -> None:
    """Merge branch environments into ``base`` (in place), labelling differing alternatives."""
    names: list[str] = []
    for b in branches:
        for n in b.vars:
            if n not in names:
                names.append(n)
    for name in names:
        per_branch = [b.vars.get(name) for b in branches]
        if all(p is per_branch[0] for p in per_branch):
            if per_branch[0] is not None:
                base.vars[name] = per_branch[0]
            continue
        merged: list[Alt] = []
        seen: set[int] = set()
        for alts, label in zip(per_branch, labels):
            if alts is None:
                alts = base.lookup(name)
                if alts is None:
                    continue
            for alt in alts:
                if id(alt) in seen:
                    continue
                seen.add(id(alt))
                tag = f"`{name}` as assigned on line {alt.line}" if alt.line else f"`{name}` ({label})"
                merged.append(Alt(alt.value, tuple(sorted(set(alt.branch) | {tag})), alt.line))
        base.vars[name] = merged[:MAX_ALTS]


class _StopRun(Exception):
    """Raised internally when a file exceeds the statement budget; never escapes ``run``."""


# ---------------------------------------------------------------------------------------------
# Hooks a dialect implements


class DialectHooks:
    """Dialect-specific behaviour. Subclasses override what their library needs."""

    def call(self, interp: "Interpreter", qualname: str, args: list[Any], kwargs: dict[str, Any],
             node: cst.Call) -> Any:
        """Value of a call to an imported function; return ``NotImplemented`` when not ours."""
        return NotImplemented

    def method(self, interp: "Interpreter", base: Any, name: str, args: list[Any],
               kwargs: dict[str, Any], node: cst.Call) -> Any:
        return NotImplemented

    def attribute(self, interp: "Interpreter", base: Any, name: str, node: cst.Attribute) -> Any:
        return NotImplemented

    def star_import_name(self, module: str, name: str) -> str | None:
        """Qualified name for ``name`` when the file did ``from module import *`` (else None)."""
        return None

    def call_value(self, interp: "Interpreter", func: Any, args: list[Any], kwargs: dict[str, Any],
                   node: cst.Call) -> Any:
        """Value of calling a value that is not a function of the module (an opaque parameter, an
        instance, a dialect's own object); ``NotImplemented`` when not ours."""
        return NotImplemented

    def subscript(self, interp: "Interpreter", base: Any, index: Any, node: cst.Subscript) -> Any:
        return NotImplemented

    def augassign(self, interp: "Interpreter", op: str, target: Any, value: Any, node: cst.AugAssign) -> Any:
        """Value of ``target op= value`` (e.g. adding to a problem object); ``NotImplemented`` if not ours."""
        return NotImplemented

    def bind_attribute(self, interp: "Interpreter", owner: "InstanceVal", name: str, value: Any, node) -> Any:
        """Value stored by ``owner.name = value`` (a model component learning its model)."""
        return NotImplemented

    def decorate(self, interp: "Interpreter", decorator: Any, func: "FuncVal", node: cst.FunctionDef) -> Any:
        """Value bound to a decorated function's name; ``NotImplemented`` keeps the plain function."""
        return NotImplemented

    def arithmetic(self, interp: "Interpreter", op: str, left: Any, right: Any, node: cst.CSTNode) -> Any:
        """Value of ``left * right`` or ``left / right`` of two lifted operands (a library that rejects
        some products as written can mark them); ``NotImplemented`` for plain arithmetic."""
        return NotImplemented


# ---------------------------------------------------------------------------------------------
# The interpreter


class Interpreter:
    def __init__(self, wrapper: cst.MetadataWrapper, path: str, hooks: DialectHooks, registry):
        self.wrapper = wrapper
        self.module = wrapper.module
        self.path = path
        self.hooks = hooks
        self.registry = registry
        self.positions = positions(wrapper)  # computed on first use (optlint/positions.py)
        self.qualnames = QualifiedNames(wrapper.module)  # imports resolved cheaply; see optlint/names.py
        self.star_modules = self._star_imports()
        self.variables: set[sympy.Symbol] = set()
        self.loop_depth = 0
        self.condition_depth = 0
        self.inline_stack: list[Any] = []
        self.returns: list[list[Alt]] = []
        self.statements = 0
        self.fresh_counter = itertools.count(1)
        self.ran_functions: set[int] = set()
        self.current_hint: str | None = None
        self.current_branch: tuple[str, ...] = ()  # branch labels of the call being evaluated
        self.options = OPTIONS.get()  # the run's engine.Options (declared atoms, assumptions), or None
        self.branch_depth = 0  # inside if/try/match bodies: attribute writes keep older values too
        self.no_grad_depth = 0  # inside `with torch.no_grad():` (values assigned there carry no gradient)
        self.trip_counts: list[int | None] = []  # per enclosing loop: how often it runs, when known
        self.anchors: list[cst.CSTNode] = []  # call sites in this file that entered a sibling module
        self.foreign_names: dict[Any, tuple[Any, tuple[str, ...]]] = {}  # node -> (qualnames, star modules)
        self.foreign_modules: dict[str, Env | None] = {}  # sibling module path -> its top-level names
        self.methods: list[tuple[Any, Any]] = []  # (owner class, self) of the methods being run
        self.running: list[Any] = []  # the statements being executed, outermost first (for positions)

    # -- entry -----------------------------------------------------------------------------

    def run(self) -> None:
        module_env = Env()
        try:
            self.exec_block(self.module.body, module_env)
            for fn, closure, cls in self._all_functions(self.module.body, module_env):
                if id(fn) in self.ran_functions:
                    continue
                self.ran_functions.add(id(fn))
                self.run_function_standalone(fn, closure, cls)
        except _StopRun:
            self.registry.note_budget(self.path)

    def _all_functions(self, body, env, cls=None):
        for stmt in body:
            if isinstance(stmt, cst.FunctionDef):
                yield stmt, env, cls
                yield from self._all_functions(_block_body(stmt.body), env, None)
            elif isinstance(stmt, cst.ClassDef):
                found = env.lookup(stmt.name.value)
                value = found[0].value if found else None
                yield from self._all_functions(_block_body(stmt.body), env,
                                               value if isinstance(value, ClassVal) else None)
            elif isinstance(stmt, (cst.If, cst.Try, cst.With, cst.For, cst.While)):
                for block in _sub_blocks(stmt):
                    yield from self._all_functions(block, env, cls)

    def run_function_standalone(self, fn: cst.FunctionDef, closure: Env, cls: "ClassVal | None") -> None:
        env = Env(parent=closure)
        params = fn.params
        positional = list(params.posonly_params) + list(params.params)
        for p in positional + list(params.kwonly_params):
            sign = guards.literal_sign(p.default) if p.default is not None else None
            # A literal default is the sign the author had in mind: evidence for the weight rules.
            env.vars[p.name.value] = [Alt(data(p.name.value, **{sign: True}) if sign else Opaque(p.name.value))]
        for star in (params.star_arg, params.star_kwarg):
            if isinstance(star, cst.Param):
                env.vars[star.name.value] = [Alt(Opaque(star.name.value))]
        owner = None
        if cls is not None and positional and not _decorated(fn, ("staticmethod", "classmethod")):
            # A method analysed on its own sees the attributes its class's __init__ sets.
            inst = self.new_instance(cls, [], {}, fn, run_init=fn.name.value != "__init__")
            self.widen_reassigned(cls, inst, fn)
            env.vars[positional[0].name.value] = [Alt(inst)]
            owner = (cls, inst)
        self.returns.append([])
        self.methods.append(owner or (None, None))
        try:
            self.exec_block(_block_body(fn.body), env)
        finally:
            self.returns.pop()
            self.methods.pop()

    def widen_reassigned(self, cls: ClassVal, inst: InstanceVal, analysed: cst.FunctionDef) -> None:
        """Soundness for a method analysed on its own: an attribute that another method of the class
        may reassign (``def set_risk(self, v): self.risk = v``) can hold that value too, with the
        sign that method establishes (a literal, or a guard on the assigned name), else unknown."""
        seen, stack, methods = set(), [cls], []
        while stack:
            c = stack.pop()
            if id(c) in seen:
                continue
            seen.add(id(c))
            methods.extend(m for name, m in c.methods.items() if name != "__init__" and m.node is not analysed)
            stack.extend(c.parents)
        for method in methods:
            node = method.node
            if not isinstance(node, cst.FunctionDef):
                continue
            params = list(node.params.posonly_params) + list(node.params.params)
            if not params:
                continue
            for attr, sign in guards.attribute_writes(node, params[0].name.value):
                if attr in inst.attrs:
                    text = f"self.{attr}"
                    inst.attrs[attr] = list(inst.attrs[attr]) + [
                        Alt(data(text, **{sign: True}) if sign else Opaque(text))]

    def new_instance(self, cls: ClassVal, args, kwargs, node, run_init: bool = True) -> InstanceVal:
        inst = InstanceVal(cls)
        init = cls.find_method("__init__")
        if run_init and init is not None:
            self.inline(init, [inst] + list(args), kwargs, node)
        return inst

    # -- positions and text ------------------------------------------------------------------

    def position(self, node: cst.CSTNode):
        """Source range of a node of this file; a node of a sibling module is placed at the call in
        this file that led into it."""
        within = getattr(self.positions, "within", None)  # one statement's code, not the module's
        rng = within(node, self.running) if within else self.positions.get(node)
        if rng is None:
            for anchor in self.anchors:
                rng = within(anchor, self.running) if within else self.positions.get(anchor)
                if rng is not None:
                    break
        if rng is None:
            rng = self.positions[self.module]
        return rng

    def site(self, node: cst.CSTNode) -> Site:
        rng = self.position(node)
        return Site(self.path, rng.start.line, rng.start.column + 1, rng.end.line, rng.end.column + 1)

    def line(self, node: cst.CSTNode) -> int:
        statement_line = getattr(self.positions, "statement_line", None)
        found = statement_line(node) if statement_line else None
        return found if found is not None else self.position(node).start.line

    def code(self, node: cst.CSTNode) -> str:
        text = self.module.code_for_node(node)
        return " ".join(text.split())

    def fresh_index(self, hint: str, assumptions: dict | None = None) -> DataSymbol:
        """A new data symbol for one run of a loop target (an index unless ``assumptions`` say)."""
        return data(f"{hint}#{next(self.fresh_counter)}", **(assumptions if assumptions is not None else {"integer": True}))

    # -- statements -------------------------------------------------------------------------

    def tick(self) -> None:
        self.statements += 1
        if self.statements > MAX_STATEMENTS:
            raise _StopRun

    def exec_block(self, body, env: Env) -> None:
        for stmt in body:
            self.exec_stmt(stmt, env)

    def exec_stmt(self, stmt, env: Env) -> None:
        self.tick()
        self.running.append(stmt)
        try:
            self._exec_stmt(stmt, env)
        finally:
            self.running.pop()

    def _exec_stmt(self, stmt, env: Env) -> None:
        if isinstance(stmt, (cst.SimpleStatementLine, _SuiteLine)):
            for small in stmt.body:
                self.exec_small(small, env)
        elif isinstance(stmt, cst.If):
            self.exec_if(stmt, env)
        elif isinstance(stmt, (cst.For, cst.While)):
            self.exec_loop(stmt, env)
        elif isinstance(stmt, cst.Try) or type(stmt).__name__ == "TryStar":
            self.exec_try(stmt, env)
        elif isinstance(stmt, cst.With):
            no_grad = False
            for item in stmt.items:
                alts = self.evaluate(item.item, env)
                if item.asname is not None:
                    self.bind(item.asname.name, alts, env, self.line(stmt))
                call = item.item.func if isinstance(item.item, cst.Call) else item.item
                no_grad |= any(q.name in _NO_GRAD for q in self.qualnames.get(call, ()))
            self.no_grad_depth += no_grad
            try:
                self.exec_block(_block_body(stmt.body), env)
            finally:
                self.no_grad_depth -= no_grad
        elif isinstance(stmt, cst.FunctionDef):
            env.vars[stmt.name.value] = self.exec_def(stmt, env)
        elif isinstance(stmt, cst.ClassDef):
            self.exec_class(stmt, env)
        elif isinstance(stmt, cst.Match):
            branches, labels = [], []
            self.evaluate(stmt.subject, env)
            self.branch_depth += 1
            try:
                for case in stmt.cases:
                    b = env.copy()
                    self.exec_block(_block_body(case.body), b)
                    branches.append(b)
                    labels.append(f"case on line {self.line(case)}")
            finally:
                self.branch_depth -= 1
            branches.append(env.copy())
            labels.append("no case matched")
            merge_envs(env, branches, labels)

    def exec_def(self, stmt: cst.FunctionDef, env: Env) -> list[Alt]:
        func = FuncVal(stmt, env, stmt.name.value)
        value: Any = func
        for dec in reversed(stmt.decorators):
            if not isinstance(dec.decorator, (cst.Call, cst.Attribute)):
                continue  # @staticmethod, @property, ...: the function itself is what matters
            for alt in self.evaluate(dec.decorator, env)[:1]:
                result = self.hooks.decorate(self, alt.value, func, stmt)
                if result is not NotImplemented:
                    value = result
        return [Alt(value, (), self.line(stmt))]

    def exec_class(self, stmt: cst.ClassDef, env: Env) -> None:
        bases, parents = [], []
        for arg in stmt.bases:
            for alt in self.evaluate(arg.value, env)[:1]:
                if isinstance(alt.value, GlobalRef):
                    bases.append(alt.value.qualname)
                elif isinstance(alt.value, ClassVal):
                    parents.append(alt.value)
        cls = ClassVal(stmt.name.value, bases=tuple(bases), parents=tuple(parents))
        class_env = Env(parent=env)
        for inner in _block_body(stmt.body):
            if isinstance(inner, cst.FunctionDef):
                cls.methods[inner.name.value] = FuncVal(inner, env, inner.name.value, cls)
            elif isinstance(inner, (cst.SimpleStatementLine, _SuiteLine)):
                self.exec_stmt(inner, class_env)
        cls.attrs = dict(class_env.vars)
        env.vars[stmt.name.value] = [Alt(cls, (), self.line(stmt))]

    def exec_small(self, small, env: Env) -> None:
        if isinstance(small, cst.Assign):
            alts = self.evaluate(small.value, env, hint=_target_hint(small.targets[0].target))
            for target in small.targets:
                self.bind(target.target, alts, env, self.line(small))
            if len(small.targets) == 1:  # lam = np.maximum(0, ...): data of that sign from here on
                self.learn_signs(guards.assigned_projection(small.targets[0].target, small.value), env)
        elif isinstance(small, cst.AnnAssign):
            if small.value is not None:
                alts = self.evaluate(small.value, env, hint=_target_hint(small.target))
                self.bind(small.target, alts, env, self.line(small))
        elif isinstance(small, cst.AugAssign):
            self.exec_augassign(small, env)
        elif isinstance(small, cst.Expr):
            self.evaluate(small.value, env)
            self.learn_signs(guards.projection_facts(small.value), env)  # lam.clamp_(min=0)
        elif isinstance(small, cst.Return):
            alts = self.evaluate(small.value, env) if small.value is not None else [Alt(NONE)]
            if self.returns:
                self.returns[-1].extend(alts)
        elif isinstance(small, cst.Assert):
            self.condition_depth += 1
            try:
                self.evaluate(small.test, env)
            finally:
                self.condition_depth -= 1
            self.learn_signs(guards.facts(small.test, True), env)

    def exec_augassign(self, small: cst.AugAssign, env: Env) -> None:
        op = type(small.operator).__name__.replace("Assign", "")
        target_alts = self.evaluate(small.target, env)
        value_alts = self.evaluate(small.value, env)
        out: list[Alt] = []
        for t, v in self.product(target_alts, value_alts):
            hooked = self.hooks.augassign(self, op, t.value, v.value, small)
            if hooked is not NotImplemented:
                out.append(Alt(hooked, _join(t.branch, v.branch)))
            elif isinstance(t.value, ListVal) and op == "Add":
                t.value.items.extend(self.iterate(v.value))
                out.append(Alt(t.value, _join(t.branch, v.branch)))
            else:
                out.append(Alt(self.binop(op, t.value, v.value, small), _join(t.branch, v.branch)))
        self.bind(small.target, out, env, self.line(small))

    def exec_if(self, stmt: cst.If, env: Env) -> None:
        self.condition_depth += 1
        try:
            self.evaluate(stmt.test, env)
        finally:
            self.condition_depth -= 1
        then_env = env.copy()
        self.branch_depth += 1
        try:
            self.exec_block(_block_body(stmt.body), then_env)
            else_env = env.copy()
            if isinstance(stmt.orelse, cst.If):
                self.exec_if(stmt.orelse, else_env)
            elif isinstance(stmt.orelse, cst.Else):
                self.exec_block(_block_body(stmt.orelse.body), else_env)
        finally:
            self.branch_depth -= 1
        line = self.line(stmt)
        merge_envs(env, [then_env, else_env], [f"if branch on line {line}", f"else branch of line {line}"])
        if stmt.orelse is None and guards.always_raises(stmt.body):
            self.learn_signs(guards.facts(stmt.test, False), env)  # `if lam < 0: raise ...`

    def learn_signs(self, facts: list[tuple[str, str]], env: Env) -> None:
        """After a guard, a data name is rebound to data of the sign the guard establishes."""
        for name, sign in facts:
            alts = env.lookup(name)
            if alts is None or not all(_is_plain_data(a.value) and not self.involves(a.value) for a in alts):
                continue
            env.vars[name] = [Alt(data(name, **{sign: True}), a.branch, a.line) for a in alts[:1]]

    def exec_loop(self, stmt, env: Env) -> None:
        if isinstance(stmt, cst.For):
            iter_alts = self.evaluate(stmt.iter, env)
        else:
            self.condition_depth += 1
            try:
                self.evaluate(stmt.test, env)
            finally:
                self.condition_depth -= 1
            iter_alts = []
        self.loop_depth += 1
        self.trip_counts.append(self.trip_count(stmt.iter, iter_alts, env) if isinstance(stmt, cst.For) else None)
        try:
            for _ in range(2):
                if isinstance(stmt, cst.For):
                    self.bind_loop_target(stmt.target, iter_alts, env, self.line(stmt), stmt.iter)
                self.exec_block(_block_body(stmt.body), env)
        finally:
            self.loop_depth -= 1
            self.trip_counts.pop()
        if stmt.orelse is not None:
            self.exec_block(_block_body(stmt.orelse.body), env)

    def exec_try(self, stmt, env: Env) -> None:
        self.branch_depth += 1
        try:
            self._exec_try(stmt, env)
        finally:
            self.branch_depth -= 1

    def _exec_try(self, stmt, env: Env) -> None:
        body_env = env.copy()
        self.exec_block(_block_body(stmt.body), body_env)
        branches, labels = [body_env], [f"try block on line {self.line(stmt)}"]
        for handler in stmt.handlers:
            h_env = body_env.copy()
            self.exec_block(_block_body(handler.body), h_env)
            branches.append(h_env)
            labels.append(f"except block on line {self.line(handler)}")
        if stmt.orelse is not None:
            self.exec_block(_block_body(stmt.orelse.body), body_env)
        merge_envs(env, branches, labels)
        if stmt.finalbody is not None:
            self.exec_block(_block_body(stmt.finalbody.body), env)

    # -- binding ----------------------------------------------------------------------------

    def bind(self, target, alts: list[Alt], env: Env, line: int) -> None:
        if self.no_grad_depth:  # under torch.no_grad() no gradient flows: what is assigned is data
            alts = [Alt(Opaque(self.code(target)), a.branch, line) if self.involves(self.to_expr(a.value, None))
                    else a for a in alts]
        alts = [Alt(a.value, a.branch, line) for a in alts]
        if isinstance(target, cst.Name):
            env.vars[target.value] = alts
        elif isinstance(target, (cst.Tuple, cst.List)):
            elements = target.elements
            for i, el in enumerate(elements):
                sub: list[Alt] = []
                for a in alts:
                    items = a.value.items if isinstance(a.value, ListVal) else None
                    if items is not None and len(items) == len(elements) and not isinstance(el, cst.StarredElement):
                        sub.append(Alt(items[i], a.branch, line))
                    else:
                        sub.append(Alt(Opaque(self.code(el.value)), a.branch, line))
                self.bind(el.value, sub, env, line)
        elif isinstance(target, cst.Attribute):
            owners = ([a.value for a in self.evaluate(target.value, env)]
                      if isinstance(target.value, (cst.Name, cst.Attribute)) else [])
            instances = [o for o in owners if isinstance(o, InstanceVal)]
            if instances:
                name = target.attr.value
                for inst in instances:
                    stored = []
                    for a in alts:
                        hooked = self.hooks.bind_attribute(self, inst, name, a.value, target)
                        stored.append(a if hooked is NotImplemented else Alt(hooked, a.branch, a.line))
                    old = inst.attrs.get(name, []) if self.branch_depth else []
                    new = [a for a in stored if all(a.value is not o.value for o in old)]
                    inst.attrs[name] = (old + new)[:MAX_ALTS]
                return
            key = _dotted(target)
            if key is not None:
                env.vars[key] = alts
        elif isinstance(target, cst.StarredElement):
            self.bind(target.value, [Alt(Opaque(self.code(target.value)))], env, line)

    def bind_loop_target(self, target, iter_alts: list[Alt], env: Env, line: int, iter_node=None) -> None:
        """Bind a loop target. A target is integer data only where the iterable says so (``range``,
        the count of ``enumerate``): a float loop variable taken as an integer would let sympy
        simplify sin(pi*k) to 0."""
        callee = iter_node.func.value if (isinstance(iter_node, cst.Call)
                                          and isinstance(iter_node.func, cst.Name)) else None
        integer = {"integer": True} if callee == "range" else {"real": True}
        if isinstance(target, (cst.Tuple, cst.List)):
            for k, el in enumerate(target.elements):
                sub = cst.Call(cst.Name("range"), []) if callee == "enumerate" and k == 0 else None
                self.bind_loop_target(el.value, [], env, line, sub)
            return
        items = []
        for a in iter_alts:
            if isinstance(a.value, ListVal) and a.value.items and not a.value.from_comprehension:
                items.extend(a.value.items)
        if isinstance(target, cst.Name):
            if items and all(isinstance(i, FuncVal) or isinstance(i, ConsVal) for i in items):
                env.vars[target.value] = [Alt(i, (), line) for i in items[:MAX_ALTS]]
            elif items and all(isinstance(i, sympy.Number) for i in items):
                env.vars[target.value] = [Alt(self.fresh_index(target.value, _common_sign(items)), (), line)]
            else:
                env.vars[target.value] = [Alt(self.fresh_index(target.value, dict(integer)), (), line)]
        else:
            self.bind(target, [Alt(Opaque(self.code(target)))], env, line)

    # -- expressions ------------------------------------------------------------------------

    def product(self, *alt_lists: list[Alt]):
        for combo in itertools.islice(itertools.product(*alt_lists), MAX_ALTS):
            yield combo

    def evaluate(self, node, env: Env, hint: str | None = None) -> list[Alt]:
        if isinstance(node, cst.Call):
            return self.eval_Call(node, env, hint)
        method = getattr(self, "eval_" + type(node).__name__, None)
        if method is None:
            return [Alt(Opaque(self.code(node)))]
        return method(node, env)

    def eval_one(self, node, env: Env):
        return self.evaluate(node, env)[0].value

    def eval_Integer(self, node, env):
        num = number_from_literal("int", node.value)
        return [Alt(num if num is not None else Opaque(node.value))]

    def eval_Float(self, node, env):
        num = number_from_literal("float", node.value)
        return [Alt(num if num is not None else Opaque(node.value))]

    def eval_SimpleString(self, node, env):
        try:
            return [Alt(node.evaluated_value if isinstance(node.evaluated_value, str) else Opaque(node.value))]
        except Exception:  # libcst decodes escapes itself; a malformed escape is just data
            return [Alt(Opaque(node.value))]

    def eval_ConcatenatedString(self, node, env):
        return [Alt(Opaque(self.code(node)))]

    def eval_Name(self, node, env):
        name = node.value
        alts = env.lookup(name)
        if alts is not None:
            return alts
        if name in ("True", "False"):
            return [Alt(name == "True")]
        if name == "None":
            return [Alt(NONE)]
        qn = self.qualname(node)
        if qn is not None:
            return [Alt(GlobalRef(qn))]
        return [Alt(Opaque(name))]

    def qualname(self, node) -> str | None:
        foreign = self.foreign_names.get(node)
        names, stars = foreign if foreign is not None else (self.qualnames.get(node, ()), self.star_modules)
        if callable(names):  # libcst computes qualified names lazily
            names = names()
        imported = sorted(q.name for q in names if q.source is QualifiedNameSource.IMPORT)
        if imported:
            return imported[0]
        if isinstance(node, cst.Name):  # `from lib import *` shadows builtins such as sum and max
            for module in stars:
                resolved = self.hooks.star_import_name(module, node.value)
                if resolved is not None:
                    return resolved
        builtin = sorted(q.name for q in names if q.source is QualifiedNameSource.BUILTIN)
        if builtin:
            return builtin[0] if builtin[0].startswith("builtins.") else "builtins." + builtin[0]
        return None

    def eval_Attribute(self, node, env):
        key = _dotted(node)
        if key is not None:
            alts = env.lookup(key)
            if alts is not None:
                return alts
        head = _head_name(node)
        if head is not None and env.lookup(head) is None:
            qn = self.qualname(node)
            if qn is not None:
                return [Alt(GlobalRef(qn))]
        out = []
        name = node.attr.value
        for b in self.evaluate(node.value, env):
            if isinstance(b.value, InstanceVal) and name in b.value.attrs:
                out.extend(Alt(a.value, _join(b.branch, a.branch), a.line) for a in b.value.attrs[name])
            else:
                out.append(Alt(self.attribute(b.value, name, node), b.branch))
        return out[:MAX_ALTS]

    def attribute(self, base, name: str, node) -> Any:
        if isinstance(base, GlobalRef):
            return GlobalRef(base.qualname + "." + name)
        result = self.hooks.attribute(self, base, name, node)
        if result is not NotImplemented:
            return result
        if isinstance(base, ClassVal):
            method = base.find_method(name)
            if method is not None:
                return method
            if name in base.attrs:
                return base.attrs[name][0].value
        if isinstance(base, SuperVal):
            for parent in base.owner.parents:
                method = parent.find_method(name)
                if method is not None:
                    return BoundFunc(method, base.self_value)
            return Opaque(self.code(node))
        if isinstance(base, InstanceVal) and base.cls is not None:
            method = base.cls.find_method(name)
            if method is not None:
                if _decorated(method.node, ("staticmethod",)):
                    return method
                return BoundFunc(method, base)
            for cls in _class_chain(base.cls):
                if name in cls.attrs:
                    return cls.attrs[name][0].value
        return BoundMethod(base, name, self.code(node.value))

    def eval_Subscript(self, node, env):
        out = []
        idx_alts = self.eval_subscript_index(node, env)
        for b, i in self.product(self.evaluate(node.value, env), idx_alts):
            out.append(Alt(self.subscript(b.value, i.value, node), _join(b.branch, i.branch)))
        return out

    def eval_subscript_index(self, node, env) -> list[Alt]:
        parts = []
        for el in node.slice:
            s = el.slice
            if isinstance(s, cst.Index):
                parts.append([Alt(self.index_expr(a.value, s.value), a.branch) for a in self.evaluate(s.value, env)][:1])
            else:  # a slice lower:upper:step
                bounds = []
                for piece in (s.lower, s.upper, s.step):
                    bounds.append(sympy.Symbol("_") if piece is None else self.index_expr(self.eval_one(piece, env), piece))
                parts.append([Alt(sympy.Function("slice")(*bounds))])
        out = []
        for combo in self.product(*parts):
            exprs = [c.value for c in combo]
            branch = _join(*(c.branch for c in combo))
            out.append(Alt(exprs[0] if len(exprs) == 1 else sympy.Function("ix")(*exprs), branch))
        return out

    def index_expr(self, value, node) -> sympy.Basic:
        expr = self.to_expr(value, node)
        return expr if expr is not None else data(self.code(node))

    def subscript(self, base, idx, node):
        hooked = self.hooks.subscript(self, base, idx, node)
        if hooked is not NotImplemented:
            return hooked
        if isinstance(base, ListVal) and isinstance(idx, sympy.Integer) and not base.from_comprehension:
            try:
                return base.items[int(idx)]
            except IndexError:
                return Opaque(self.code(node))
        if isinstance(base, DictVal):
            for k, v in base.items.items():
                if k == idx:
                    return v
            if base.default is not None:
                # one representative entry: distinct keys must stay distinct entries
                expr = self.to_expr(base.default, None) if not isinstance(base.default, (FuncVal, ClassVal)) else None
                return F.index(expr, idx) if expr is not None and self.involves(expr) else base.default
            values = list(base.items.values())
            if values and all(isinstance(v, sympy.Number) and v.is_real for v in values):
                # some entry of a table of literal numbers: a constant with their common sign
                return data(self.code(node), **_common_sign(values))
            return Opaque(self.code(node))
        expr = self.to_expr(base, node.value)
        if expr is None:
            return Opaque(self.code(node))
        return F.index(expr, idx)

    def eval_BinaryOperation(self, node, env):
        op = type(node.operator).__name__
        out = []
        for l, r in self.product(self.evaluate(node.left, env), self.evaluate(node.right, env)):
            out.append(Alt(self.binop(op, l.value, r.value, node), _join(l.branch, r.branch)))
        return out

    def binop(self, op: str, left, right, node) -> Any:
        if op == "Add" and isinstance(left, ListVal) and isinstance(right, ListVal):
            return ListVal(left.items + right.items)
        if op == "Multiply" and (isinstance(left, ListVal) or isinstance(right, ListVal)):
            seq, count = (left, right) if isinstance(left, ListVal) else (right, left)
            if not isinstance(count, ListVal) and not self.involves(self.to_expr(count, None)):
                # [item] * n: n copies of one item, like a comprehension's representative element
                return ListVal(list(seq.items), from_comprehension=seq.from_comprehension or len(seq.items) == 1)
        if op in ("RightShift", "LeftShift"):
            result = self.hooks_psd(op, left, right, node)
            if result is not None:
                return result
        a, b = self.to_expr(left, None), self.to_expr(right, None)
        if a is None or b is None:
            known = a if a is not None else b
            if known is not None and self.involves(known):
                # one operand is a model term, the other nothing we model: an unknown function of
                # the term, never data (that would hide the variables from the analysis)
                return sympy.Function(f"operator{_OP_TEXT.get(op, op)}")(known)
            return Opaque(self.code(node))
        if op in ("Multiply", "Divide"):
            hooked = self.hooks.arithmetic(self, op, a, b, node)
            if hooked is not NotImplemented:
                return hooked
        try:
            if op == "Add":
                return a + b
            if op == "Subtract":
                return a - b
            if op == "Multiply":
                return a * b
            if op == "Divide":
                return a * safe_pow(b, sympy.Integer(-1))
            if op == "Power":
                return safe_pow(a, b)
            if op == "MatrixMultiply":
                array_product = getattr(self.hooks, "matmul", None)  # numpy: v @ v is a sum of squares
                return array_product(a, b) if array_product is not None else F.matmul(a, b)
        except (TypeError, ValueError, ZeroDivisionError, RecursionError):
            return Opaque(self.code(node))
        if self.involves(a) or self.involves(b):
            return sympy.Function(f"operator{_OP_TEXT.get(op, op)}")(a, b)
        return Opaque(self.code(node))

    def hooks_psd(self, op, left, right, node):
        register = getattr(self.registry, "psd", None)
        a, b = self.to_expr(left, None), self.to_expr(right, None)
        if register is None or a is None or b is None or not (self.involves(a) or self.involves(b)):
            return None
        if self.condition_depth:
            return Opaque(self.code(node))
        lhs, rhs = (a, b) if op == "RightShift" else (b, a)
        return ConsVal((register(self, node, lhs, rhs),))

    def eval_UnaryOperation(self, node, env):
        op = type(node.operator).__name__
        out = []
        for a in self.evaluate(node.expression, env):
            expr = self.to_expr(a.value, None)
            if op == "Minus" and expr is not None:
                out.append(Alt(-expr, a.branch))
            elif op == "Plus" and expr is not None:
                out.append(Alt(expr, a.branch))
            else:
                out.append(Alt(Opaque(self.code(node)), a.branch))
        return out

    def eval_BooleanOperation(self, node, env):
        self.evaluate(node.left, env)
        self.evaluate(node.right, env)
        return [Alt(Opaque(self.code(node)))]

    def eval_Comparison(self, node, env):
        left_alts = self.evaluate(node.left, env)
        keys: list[Any] = []
        branches: list[str] = []
        for target in node.comparisons:
            right_alts = self.evaluate(target.comparator, env)
            op = type(target.operator).__name__
            rel = _REL.get(op)
            if rel is not None and not self.condition_depth:
                for l, r in self.product(left_alts, right_alts):
                    a, b = self.to_expr(l.value, None), self.to_expr(r.value, None)
                    if a is None or b is None or not (self.involves(a) or self.involves(b)):
                        continue
                    key = self.registry.constraint(self, node, target, rel, a, b, _join(l.branch, r.branch))
                    if key not in keys:
                        keys.append(key)
                    branches.extend(_join(l.branch, r.branch))
            left_alts = right_alts
        if keys:
            return [Alt(ConsVal(tuple(keys)), tuple(sorted(set(branches))))]
        return [Alt(Opaque(self.code(node)))]

    def eval_IfExp(self, node, env):
        self.condition_depth += 1
        try:
            self.evaluate(node.test, env)
        finally:
            self.condition_depth -= 1
        line = self.line(node)
        body = [Alt(a.value, _join(a.branch, (f"`if` side of the conditional on line {line}",))) for a in self.evaluate(node.body, env)]
        other = [Alt(a.value, _join(a.branch, (f"`else` side of the conditional on line {line}",))) for a in self.evaluate(node.orelse, env)]
        return (body + other)[:MAX_ALTS]

    def eval_NamedExpr(self, node, env):
        alts = self.evaluate(node.value, env)
        self.bind(node.target, alts, env, self.line(node))
        return alts

    def eval_Lambda(self, node, env):
        return [Alt(FuncVal(node, env, "<lambda>"))]

    def eval_Tuple(self, node, env):
        return self.eval_sequence(node.elements, env)

    def eval_List(self, node, env):
        return self.eval_sequence(node.elements, env)

    def eval_Set(self, node, env):
        return self.eval_sequence(node.elements, env)

    def eval_sequence(self, elements, env):
        per = []
        for el in elements:
            alts = self.evaluate(el.value, env)
            if isinstance(el, cst.StarredElement):
                alts = [Alt(("*", a.value), a.branch) for a in alts]
            per.append(alts)
        if not per:
            return [Alt(ListVal([]))]
        out = []
        for combo in self.product(*per):
            items: list[Any] = []
            for c in combo:
                if isinstance(c.value, tuple) and len(c.value) == 2 and c.value[0] == "*":
                    items.extend(self.iterate(c.value[1]))
                else:
                    items.append(c.value)
            out.append(Alt(ListVal(items), _join(*(c.branch for c in combo))))
        return out

    def eval_Dict(self, node, env):
        items = {}
        for el in node.elements:
            if isinstance(el, cst.DictElement):
                key = self.eval_one(el.key, env)
                items[key if isinstance(key, (str, sympy.Basic, bool)) else id(el)] = self.eval_one(el.value, env)
        return [Alt(DictVal(items, node))]

    def trip_count(self, iter_node, iter_alts, env: Env) -> int | None:
        """How many times a ``for`` runs, when the code says: a literal list or ``range`` of integers."""
        if len(iter_alts) == 1 and isinstance(iter_alts[0].value, ListVal) and not iter_alts[0].value.from_comprehension:
            return len(iter_alts[0].value.items)
        if (isinstance(iter_node, cst.Call) and isinstance(iter_node.func, cst.Name) and iter_node.func.value == "range"
                and 1 <= len(iter_node.args) <= 3 and all(a.keyword is None and not a.star for a in iter_node.args)):
            bounds = []
            for a in iter_node.args:
                alts = self.evaluate(a.value, env)
                value = self.to_expr(alts[0].value, None) if len(alts) == 1 else None
                if value is None or not value.is_Integer or abs(int(value)) > 10**12:
                    return None
                bounds.append(int(value))
            try:
                return len(range(*bounds))
            except ValueError:
                return None
        return None

    def instances(self) -> int | None:
        """Instances of a site reached now: the product of the enclosing loops' trip counts."""
        total = 1
        for count in self.trip_counts:
            if count is None:
                return None
            total *= count
        return total

    def eval_comprehension(self, node, env, element):
        local = Env(parent=env)
        comp = node.for_in
        counts = []
        while comp is not None:
            iter_alts = self.evaluate(comp.iter, local)
            counts.append(None if comp.ifs else self.trip_count(comp.iter, iter_alts, local))
            self.bind_loop_target(comp.target, iter_alts, local, self.line(comp), comp.iter)
            for cond in comp.ifs:
                self.condition_depth += 1
                try:
                    self.evaluate(cond.test, local)
                finally:
                    self.condition_depth -= 1
            comp = comp.inner_for_in
        self.loop_depth += 1
        self.trip_counts.extend(counts)
        try:
            alts = self.evaluate(element, local)
        finally:
            self.loop_depth -= 1
            del self.trip_counts[len(self.trip_counts) - len(counts):]
        return [Alt(ListVal([a.value], from_comprehension=True), a.branch) for a in alts]

    def eval_DictComp(self, node, env):
        local = Env(parent=env)
        comp = node.for_in
        while comp is not None:
            self.bind_loop_target(comp.target, self.evaluate(comp.iter, local), local, self.line(comp), comp.iter)
            comp = comp.inner_for_in
        self.loop_depth += 1
        try:
            value = self.evaluate(node.value, local)[0].value
        finally:
            self.loop_depth -= 1
        return [Alt(DictVal({}, node, value))]

    def eval_ListComp(self, node, env):
        return self.eval_comprehension(node, env, node.elt)

    def eval_GeneratorExp(self, node, env):
        return self.eval_comprehension(node, env, node.elt)

    def eval_SetComp(self, node, env):
        return self.eval_comprehension(node, env, node.elt)

    def eval_Call(self, node, env, hint=None):
        func_alts = self.evaluate(node.func, env)
        arg_alts: list[list[Alt]] = []
        names: list[str | None] = []
        for arg in node.args:
            alts = self.evaluate(arg.value, env)
            if arg.star == "*":
                alts = [Alt(("*", a.value), a.branch) for a in alts]
                names.append(None)
            elif arg.star == "**":
                continue
            else:
                names.append(arg.keyword.value if arg.keyword is not None else None)
            arg_alts.append(alts)
        out = []
        for f in func_alts[:MAX_ALTS]:
            for combo in self.product(*arg_alts) if arg_alts else [()]:
                args, kwargs = [], {}
                for name, c in zip(names, combo):
                    if name is None:
                        if isinstance(c.value, tuple) and len(c.value) == 2 and c.value[0] == "*":
                            args.extend(self.iterate(c.value[1]))
                        else:
                            args.append(c.value)
                    else:
                        kwargs[name] = c.value
                branch = _join(f.branch, *(c.branch for c in combo))
                self.current_branch = branch
                for result in self.call(f.value, args, kwargs, node, hint):
                    out.append(Alt(result.value, _join(branch, result.branch)))
                if len(out) >= MAX_ALTS:
                    return out[:MAX_ALTS]
        return out or [Alt(Opaque(self.code(node)))]

    def call(self, func, args, kwargs, node, hint) -> list[Alt]:
        self.current_hint = hint  # the assignment target names what a declaring call makes
        if isinstance(func, GlobalRef):
            if func.qualname in guards.CONSTANT_SIGN_CALLS and not kwargs.get("requires_grad"):
                return [Alt(data(self.code(node), **{guards.CONSTANT_SIGN_CALLS[func.qualname]: True}))]
            result = self.hooks.call(self, func.qualname, args, kwargs, node)
            if result is NotImplemented:
                foreign = self.foreign(func.qualname)
                if foreign is not None:
                    self.anchors.append(node)
                    try:
                        return self.call(foreign, args, kwargs, node, hint)
                    finally:
                        self.anchors.pop()
                result = self.builtin(func.qualname, args, kwargs, node)
            return [Alt(result)]
        if isinstance(func, FuncVal):
            return self.inline(func, args, kwargs, node)
        if isinstance(func, BoundFunc):
            return self.inline(func.func, [func.self_value] + list(args), kwargs, node)
        if isinstance(func, PartialVal):
            return self.call(func.func, list(func.args) + list(args), {**func.kwargs, **kwargs}, node, hint)
        if isinstance(func, BoundMethod):
            return [Alt(self.call_method(func, args, kwargs, node))]
        self.current_hint = hint
        result = self.hooks.call_value(self, func, args, kwargs, node)
        if result is not NotImplemented:
            return [Alt(result)]
        if isinstance(func, ClassVal):
            if len(self.inline_stack) >= MAX_INLINE_DEPTH:
                return [Alt(Opaque(self.code(node)))]
            return [Alt(self.new_instance(func, args, kwargs, node))]
        if isinstance(func, InstanceVal) and func.cls is not None and func.cls.find_method("__call__") is not None:
            return self.inline(func.cls.find_method("__call__"), [func] + list(args), kwargs, node)
        return [Alt(self.unknown_call(_callee_text(self, node), args, kwargs, node))]

    def call_function(self, func, args, kwargs, node) -> list[Alt]:
        """Call a function value (a dialect handing user callbacks to the interpreter)."""
        return self.call(func, list(args), dict(kwargs), node, None)

    def call_method(self, m: BoundMethod, args, kwargs, node):
        base = m.base
        if isinstance(base, ListVal):
            if m.name == "append" and args:
                base.items.append(args[0])
                return NONE
            if m.name == "extend" and args:
                base.items.extend(self.iterate(args[0]))
                return NONE
            if m.name == "insert" and len(args) == 2:
                base.items.append(args[1])
                return NONE
            if m.name == "copy":
                return ListVal(list(base.items), base.from_comprehension)
        result = self.hooks.method(self, base, m.name, args, kwargs, node)
        if result is not NotImplemented:
            return result
        return self.unknown_call(f"{m.base_text}.{m.name}", [base] + list(args), kwargs, node)

    def unknown_call(self, name: str, args, kwargs, node):
        exprs = [self.to_expr(a, None) for a in list(args) + list(kwargs.values())]
        exprs = [e for e in exprs if e is not None]
        if any(self.involves(e) for e in exprs):
            declared = self.declared_atom(name)
            return declared(*exprs) if declared is not None else sympy.Function(name)(*exprs)
        return Opaque(self.code(node))

    def declared_atom(self, name: str):
        """The function class for ``name`` if the project declared its curvature ([tool.optlint.atoms])."""
        atoms = getattr(self.options, "atoms", None)
        if not atoms:
            return None
        q = name.lstrip(".")
        for key, atom in atoms.items():
            if key == q or key.endswith("." + q) or q.endswith("." + key):
                from optlint.calculus.catalogue import declare_atom

                return declare_atom(key, atom.curvature, atom.sign, tuple(atom.monotonicity))
        return None

    def assumed(self, text: str) -> dict:
        """Sign assumptions the project configuration declares for a data name ([tool.optlint.assume])."""
        options = self.options
        if options is None or not getattr(options, "assumptions", None):
            return {}
        sign = options.assumed_sign(text) or options.assumed_sign(text.rsplit(".", 1)[-1])
        return {sign: True} if sign else {}

    def builtin(self, qualname: str, args, kwargs, node):
        name = qualname[len("builtins."):] if qualname.startswith("builtins.") else None
        if name == "sum" and args:
            items = self.iterate(args[0])
            start = self.to_expr(args[1], None) if len(args) > 1 else sympy.Integer(0)
            if isinstance(args[0], ListVal) and args[0].from_comprehension:
                e = self.to_expr(args[0].items[0], None)
                if e is not None and start is not None:
                    return start + F.vsum(e)
            exprs = [self.to_expr(i, None) for i in items]
            if items and all(e is not None for e in exprs) and start is not None:
                return sympy.Add(start, *exprs)
            e = self.to_expr(args[0], None)
            if e is not None and start is not None and not isinstance(args[0], ListVal):
                return start + F.vsum(e)
        if name == "abs" and len(args) == 1:
            e = self.to_expr(args[0], None)
            if e is not None:
                return sympy.Abs(e)
        if name == "len" and len(args) == 1 and not kwargs:
            # Whatever the object, Python's len is a nonnegative integer (positive if the project says so).
            text = self.code(node)
            return data(text, integer=True, **(self.assumed(text) if "positive" in self.assumed(text)
                                               else {"nonnegative": True}))
        if name in ("max", "min") and args:
            items = self.iterate(args[0]) if len(args) == 1 else args
            exprs = [self.to_expr(i, None) for i in items]
            if exprs and all(e is not None for e in exprs):
                if len(args) == 1 and isinstance(args[0], ListVal) and args[0].from_comprehension:
                    return (F.vmax if name == "max" else F.vmin)(exprs[0])
                return (_maximum if name == "max" else _minimum)(*exprs)
        if name in ("list", "tuple") and args:
            return ListVal(list(self.iterate(args[0])))
        if name in ("list", "tuple") and not args:
            return ListVal([])
        if name == "float" and args and is_expr(args[0]):
            return args[0]
        if qualname == "functools.partial" and args:
            return PartialVal(args[0], list(args[1:]), dict(kwargs))
        if name == "super" and not args and self.methods and self.methods[-1][0] is not None:
            return SuperVal(*self.methods[-1])
        return self.unknown_call(qualname, args, kwargs, node)

    def inline(self, func: FuncVal, args, kwargs, node) -> list[Alt]:
        fn = func.node
        if len(self.inline_stack) >= MAX_INLINE_DEPTH or id(fn) in self.inline_stack:
            return [Alt(self.unknown_call(func.name, args, kwargs, node))]
        env = Env(parent=func.closure)
        params = fn.params
        positional = list(params.posonly_params) + list(params.params)
        for i, p in enumerate(positional):
            if i < len(args):
                env.vars[p.name.value] = [Alt(args[i])]
            elif p.name.value in kwargs:
                env.vars[p.name.value] = [Alt(kwargs[p.name.value])]
            elif p.default is not None:
                env.vars[p.name.value] = self.evaluate(p.default, func.closure)
            else:
                env.vars[p.name.value] = [Alt(Opaque(p.name.value))]
        for p in params.kwonly_params:
            if p.name.value in kwargs:
                env.vars[p.name.value] = [Alt(kwargs[p.name.value])]
            elif p.default is not None:
                env.vars[p.name.value] = self.evaluate(p.default, func.closure)
            else:
                env.vars[p.name.value] = [Alt(Opaque(p.name.value))]
        for star in (params.star_arg, params.star_kwarg):
            if isinstance(star, cst.Param):
                env.vars[star.name.value] = [Alt(ListVal(list(args[len(positional):])) if star is params.star_arg else Opaque(star.name.value))]
        self.inline_stack.append(id(fn))
        if isinstance(fn, cst.FunctionDef):
            self.ran_functions.add(id(fn))
        self_value = args[0] if args else None
        self.methods.append((func.owner, self_value) if func.owner is not None else (None, None))
        try:
            if isinstance(fn, cst.Lambda):
                return self.evaluate(fn.body, env)
            self.returns.append([])
            try:
                self.exec_block(_block_body(fn.body), env)
                results = self.returns[-1]
            finally:
                self.returns.pop()
            return results[:MAX_ALTS] or [Alt(NONE)]
        finally:
            self.inline_stack.pop()
            self.methods.pop()

    # -- helpers imported from sibling modules ---------------------------------------------

    def foreign(self, qualname: str):
        """The function or class ``qualname`` names in a sibling module of this repository, or None.

        ``.pen.hinge`` (relative) is looked up from this file's package; ``pen.hinge`` (absolute)
        from this file's directory and up to two directories above it."""
        if qualname.startswith("builtins.") or "." not in qualname.lstrip("."):
            return None
        level = len(qualname) - len(qualname.lstrip("."))
        parts = qualname.lstrip(".").split(".")
        module, name = parts[:-1], parts[-1]
        if not module or not all(p.isidentifier() for p in parts):
            return None
        import os

        here = os.path.dirname(os.path.abspath(self.path))
        if level:
            bases = [here]
            for _ in range(level - 1):
                bases = [os.path.dirname(bases[0])]
        else:
            bases = [here, os.path.dirname(here), os.path.dirname(os.path.dirname(here))]
        for base in bases:
            stem = os.path.join(base, *module)
            for candidate in (stem + ".py", os.path.join(stem, "__init__.py")):
                if os.path.isfile(candidate) and os.path.abspath(candidate) != os.path.abspath(self.path):
                    env = self._foreign_env(candidate)
                    if env is None:
                        return None
                    found = env.vars.get(name)
                    value = found[0].value if found else None
                    return value if isinstance(value, (FuncVal, ClassVal)) else None
        return None

    @property
    def files_read(self) -> list[str]:
        """Sibling modules whose definitions this run used or tried to use (their content matters)."""
        return sorted(self.foreign_modules)

    def _foreign_env(self, path: str) -> "Env | None":
        if path in self.foreign_modules:
            return self.foreign_modules[path]
        if len(self.foreign_modules) >= MAX_FOREIGN_MODULES:
            return None
        self.foreign_modules[path] = None
        try:
            with open(path, "rb") as fh:
                raw = fh.read(MAX_FOREIGN_BYTES + 1)
            if len(raw) > MAX_FOREIGN_BYTES:
                return None
            module = cst.parse_module(raw.decode("utf-8"))
            wrapper = cst.MetadataWrapper(module, unsafe_skip_copy=True)
            names = QualifiedNames(wrapper.module)
        except (OSError, UnicodeDecodeError, cst.ParserSyntaxError, RecursionError, ValueError):
            return None
        star_modules = _star_modules(module)
        for node, qn in names.items():
            self.foreign_names[node] = (qn, star_modules)
        env = Env()
        # Only definitions and literal constants: a sibling module's top level is never executed.
        for stmt in module.body:
            if isinstance(stmt, cst.FunctionDef):
                env.vars[stmt.name.value] = [Alt(FuncVal(stmt, env, stmt.name.value))]
            elif isinstance(stmt, cst.ClassDef):
                self.exec_class(stmt, env)
            elif isinstance(stmt, cst.SimpleStatementLine):
                for small in stmt.body:
                    if isinstance(small, cst.Assign) and _is_literal(small.value):
                        for target in small.targets:
                            if isinstance(target.target, cst.Name):
                                env.vars[target.target.value] = self.evaluate(small.value, env)
        self.foreign_modules[path] = env
        return env

    # -- lifting helpers --------------------------------------------------------------------

    def iterate(self, value) -> list[Any]:
        if isinstance(value, ListVal):
            return list(value.items)
        if isinstance(value, ConsVal):
            return [value]
        return [value]

    def involves(self, expr) -> bool:
        return involves(expr, frozenset(self.variables))

    def to_expr(self, value, node) -> sympy.Basic | None:
        """The sympy form of a value, or None where the value is not a number or model term."""
        return self._to_expr(value, node, frozenset())

    def _to_expr(self, value, node, inside: frozenset) -> sympy.Basic | None:
        # ``inside``: ids of the containers being converted, so that a list holding itself
        # (``a = []; a.append(a)``, in the standard library's own tests) is not a number, not a
        # RecursionError
        if id(value) in inside:
            return None
        if isinstance(value, sympy.Basic):
            return value
        if isinstance(value, bool):
            return sympy.Integer(int(value))
        if isinstance(value, int):
            return sympy.Integer(value)
        if isinstance(value, float):
            return sympy.Float(value)
        if isinstance(value, Opaque):
            return data(value.text, **self.assumed(value.text)) if value is not NONE else None
        if isinstance(value, ListVal):
            exprs = [self._to_expr(v, None, inside | {id(value)}) for v in value.items]
            if not exprs or any(e is None for e in exprs):
                return None
            if value.from_comprehension:
                return F.stack(exprs[0])
            return exprs[0] if len(exprs) == 1 else F.stack(*exprs)
        if isinstance(value, GlobalRef):
            return data(value.qualname)
        if isinstance(value, BoundMethod) and not isinstance(value.base, (ListVal, DictVal)):
            # used as a number, `obj.attr` is an attribute, not a method: of data, it is data (A.T)
            base = self._to_expr(value.base, None, inside | {id(value)})
            if base is not None and not self.involves(base):
                text = f"{value.base_text}.{value.name}"
                return data(text, **self.assumed(text))
        return None

    def _star_imports(self) -> tuple[str, ...]:
        return _star_modules(self.module)


# ---------------------------------------------------------------------------------------------
# helpers

_REL = {"LessThanEqual": "<=", "GreaterThanEqual": ">=", "Equal": "==", "LessThan": "<", "GreaterThan": ">"}
_OP_TEXT = {"Add": "+", "Subtract": "-", "Multiply": "*", "Divide": "/", "Power": "**", "MatrixMultiply": "@",
            "FloorDivide": "//", "Modulo": "%", "BitAnd": "&", "BitOr": "|", "BitXor": "^",
            "LeftShift": "<<", "RightShift": ">>"}
# An operation optlint cannot follow on a model term is an unknown function named ``operator`` and
# the operator's text (``operator+``); optlint.calculus.analysis.unknown_label words it for people.


def _is_plain_data(value) -> bool:
    """Data of unknown value: an opaque object or a symbolic constant (not a literal number)."""
    return isinstance(value, Opaque) or (isinstance(value, sympy.Basic) and not value.is_number)


def _common_sign(numbers) -> dict:
    """Sign assumptions that hold for every number of a literal sequence (loop over constants)."""
    if all(n.is_positive for n in numbers):
        return {"positive": True}
    if all(n.is_nonnegative for n in numbers):
        return {"nonnegative": True}
    if all(n.is_negative for n in numbers):
        return {"negative": True}
    if all(n.is_nonpositive for n in numbers):
        return {"nonpositive": True}
    return {"real": True}


def _join(*branches: tuple[str, ...]) -> tuple[str, ...]:
    out: set[str] = set()
    for b in branches:
        out.update(b)
    return tuple(sorted(out))


def _block_body(block) -> list:
    if isinstance(block, cst.IndentedBlock):
        return list(block.body)
    if isinstance(block, cst.SimpleStatementSuite):
        return [_SuiteLine(block)]
    return []


class _SuiteLine:
    """Adapter: a one-line suite (``if x: a = 1``) executed like a simple statement line."""

    def __init__(self, suite):
        self.body = suite.body


def _sub_blocks(stmt):
    if isinstance(stmt, cst.If):
        yield _block_body(stmt.body)
        if stmt.orelse is not None:
            if isinstance(stmt.orelse, cst.If):
                yield from _sub_blocks(stmt.orelse)
            else:
                yield _block_body(stmt.orelse.body)
    elif isinstance(stmt, cst.Try):
        yield _block_body(stmt.body)
        for h in stmt.handlers:
            yield _block_body(h.body)
        if stmt.orelse is not None:
            yield _block_body(stmt.orelse.body)
        if stmt.finalbody is not None:
            yield _block_body(stmt.finalbody.body)
    elif isinstance(stmt, (cst.With, cst.For, cst.While)):
        yield _block_body(stmt.body)


def _star_modules(module: cst.Module) -> tuple[str, ...]:
    """Modules a module star-imports at its top level (``from lib import *``)."""
    mods = []
    for stmt in module.body:
        if isinstance(stmt, cst.SimpleStatementLine):
            for small in stmt.body:
                if (isinstance(small, cst.ImportFrom) and isinstance(small.names, cst.ImportStar)
                        and small.module is not None):
                    mods.append(_dotted(small.module) or "")
    return tuple(mods)


def _is_literal(node) -> bool:
    if isinstance(node, (cst.Integer, cst.Float, cst.SimpleString)):
        return True
    if isinstance(node, cst.UnaryOperation) and isinstance(node.operator, cst.Minus):
        return _is_literal(node.expression)
    if isinstance(node, (cst.Tuple, cst.List)):
        return all(_is_literal(el.value) for el in node.elements)
    return False


def _decorated(fn, names: tuple[str, ...]) -> bool:
    return isinstance(fn, cst.FunctionDef) and any(
        isinstance(d.decorator, cst.Name) and d.decorator.value in names for d in fn.decorators)


def _class_chain(cls: ClassVal):
    yield cls
    for parent in cls.parents:
        yield from _class_chain(parent)


def _head_name(node) -> str | None:
    while isinstance(node, cst.Attribute):
        node = node.value
    return node.value if isinstance(node, cst.Name) else None


def _target_hint(target) -> str | None:
    return target.value if isinstance(target, cst.Name) else _dotted(target)


def _callee_text(interp: Interpreter, node: cst.Call) -> str:
    return _dotted(node.func) or interp.code(node.func)
