"""Hand-written losses (torch style): the loss a training loop minimises, judged in what it penalises.

A loss is judged as a function of the *prediction* (or of tensors the code declares trainable),
never of a network's weights: every deep model is non-convex in its weights and users know it.
So the output of a network -- calling an ``nn.Module`` (a library layer, ``nn.Sequential``, an
instance of a class derived from ``nn.Module``, or a model handed in as a parameter) -- becomes a
fresh decision variable named by the call, and so does a leaf tensor created with
``requires_grad=True`` or wrapped in ``nn.Parameter``. The objective is registered where the loss is
differentiated: ``loss.backward()`` (inside a ``step(closure)`` closure too) and
``torch.autograd.grad(loss, ...)``, always as a minimisation.

torch's functions map to atoms of ``optlint.calculus.functions``: relu -> pos, softplus -> logistic,
clamp(min=a) -> max(x, a), clamp(max=b) -> min(x, b), mse_loss -> mean of squares, l1_loss -> mean of
absolute values, huber_loss(delta) -> half the Huber function, smooth_l1_loss(beta) -> the Huber
function over 2 beta, cross_entropy -> log-sum-exp of a row minus its target entry,
binary_cross_entropy_with_logits -> logistic(z) - y z. Functions without curvature facts
(sigmoid, tanh, ...) become unknown functions. Bare comparisons are masks, not constraints.
"""

from __future__ import annotations

import libcst as cst
import sympy

from optlint import guards
from optlint.calculus import functions as F
from optlint.lift import data, safe_pow
from optlint.dialects.arrays import METHODS, NUMPY, ArrayHooks, DialectRegistry, clip, hint_name, log1p_of, log_of
from optlint.interp import NONE, BoundFunc, FuncVal, InstanceVal, Interpreter, Opaque, PartialVal
from optlint.ir import Model
from optlint.dialects.registry import run_dialect
from optlint.lift import maximum as _maximum, minimum as _minimum

NAME = "losses"

_MODULE_BASES = ("torch.nn.Module", "torch.nn.modules.module.Module", "pytorch_lightning.LightningModule",
                 "lightning.LightningModule", "lightning.pytorch.LightningModule")


class Network:
    """A library layer or container (nn.Linear, nn.Sequential, ...): calling it predicts."""

    def __init__(self, text: str):
        self.text = text


class LossModule:
    """An instance of a loss class (nn.MSELoss(), nn.HuberLoss(delta=2.0), ...)."""

    def __init__(self, name: str, kwargs: dict):
        self.name, self.kwargs = name, kwargs


def _reduce(expr, kw):
    reduction = kw.get("reduction", "mean")
    if reduction == "sum":
        return F.vsum(expr)
    if reduction == "none":
        return expr
    return F.mean(expr)


def _num(kw, name, default):
    value = kw.get(name)
    return value if isinstance(value, sympy.Basic) else sympy.Float(default)


def _mse(e, kw, raw):
    return _reduce(sympy.Pow(e[0] - e[1], 2), kw)


def _l1(e, kw, raw):
    return _reduce(sympy.Abs(e[0] - e[1]), kw)


def _huber(e, kw, raw):
    delta = e[2] if len(e) > 2 and e[2] is not None else _num(kw, "delta", 1.0)
    # torch: 0.5 r^2 for |r| <= delta, delta (|r| - delta / 2) beyond = huber(r, delta) / 2
    return _reduce(F.huber(e[0] - e[1], delta) / 2, kw)


def _smooth_l1(e, kw, raw):
    beta = e[2] if len(e) > 2 and e[2] is not None else _num(kw, "beta", 1.0)
    # torch: 0.5 r^2 / beta for |r| < beta, |r| - beta / 2 beyond = huber(r, beta) / (2 beta)
    return _reduce(F.huber(e[0] - e[1], beta) / (2 * beta), kw)


def _cross_entropy(e, kw, raw):
    row = sympy.Dummy("row", integer=True)  # one row of the batch; the loss is a mean over rows
    logits = F.index(e[0], row)
    return F.mean(F.log_sum_exp(logits) - F.index(logits, e[1]))


def _bce_logits(e, kw, raw):
    return _reduce(F.logistic(e[0]) - e[1] * e[0], kw)


def _clamp(e, kw, raw):
    lo = e[1] if len(e) > 1 else kw.get("min")
    hi = e[2] if len(e) > 2 else kw.get("max")
    return clip(e[0], lo if isinstance(lo, sympy.Basic) else None, hi if isinstance(hi, sympy.Basic) else None)


def _tnorm(e, kw, raw):
    p = e[1] if len(e) > 1 and e[1] is not None else kw.get("p", sympy.Integer(2))
    if isinstance(p, str):
        p = sympy.Integer(2) if p == "fro" else None
    if p is None or not (p == sympy.oo or (isinstance(p, sympy.Number) and p >= 1)):
        return None
    return F.pnorm(e[0], p)


def _pow(e, kw, raw):
    return safe_pow(e[0], e[1])


def _max(e, kw, raw):
    if len(e) == 1:
        return F.vmax(e[0])
    if isinstance(raw[1], sympy.Basic) and len(raw) == 2 and not isinstance(raw[1], sympy.Integer):
        return _maximum(e[0], e[1])  # torch.max(a, b): elementwise
    return None  # torch.max(x, dim): values and indices


TORCH = {
    "sum": lambda e, kw, raw: F.vsum(e[0]),
    "mean": lambda e, kw, raw: F.mean(e[0]),
    "abs": lambda e, kw, raw: sympy.Abs(e[0]),
    "exp": lambda e, kw, raw: sympy.exp(e[0]),
    "log": lambda e, kw, raw: log_of(e[0]),
    "log1p": lambda e, kw, raw: log1p_of(e[0]),
    "sqrt": lambda e, kw, raw: sympy.sqrt(e[0]),
    "square": lambda e, kw, raw: sympy.Pow(e[0], 2),
    "pow": _pow,
    "relu": lambda e, kw, raw: F.pos(e[0]),
    "clamp": _clamp,
    "clip": _clamp,
    "norm": _tnorm,
    "linalg.norm": lambda e, kw, raw: _tnorm([e[0], kw.get("ord", sympy.Integer(2))], {}, raw),
    "linalg.vector_norm": lambda e, kw, raw: _tnorm([e[0], kw.get("ord", sympy.Integer(2))], {}, raw),
    "logsumexp": lambda e, kw, raw: F.log_sum_exp(e[0]),
    "maximum": lambda e, kw, raw: _maximum(e[0], e[1]),
    "minimum": lambda e, kw, raw: _minimum(e[0], e[1]),
    "max": _max,
    "matmul": lambda e, kw, raw: F.matmul(e[0], e[1]),
    "mm": lambda e, kw, raw: F.matmul(e[0], e[1]),
    "mv": lambda e, kw, raw: F.matmul(e[0], e[1]),
    "dot": lambda e, kw, raw: F.vsum(e[0] * e[1]),
    "cat": lambda e, kw, raw: NUMPY["concatenate"](e, kw, raw),
    "stack": lambda e, kw, raw: NUMPY["stack"](e, kw, raw),
    "nn.functional.relu": lambda e, kw, raw: F.pos(e[0]),
    "nn.functional.softplus": lambda e, kw, raw: F.logistic(e[0]) if "beta" not in kw else None,
    "nn.functional.mse_loss": _mse,
    "nn.functional.l1_loss": _l1,
    "nn.functional.huber_loss": _huber,
    "nn.functional.smooth_l1_loss": _smooth_l1,
    "nn.functional.cross_entropy": _cross_entropy,
    "nn.functional.binary_cross_entropy_with_logits": _bce_logits,
    "nn.functional.logsigmoid": lambda e, kw, raw: -F.logistic(-e[0]),
}

_LOSS_CLASSES = {
    "MSELoss": _mse, "L1Loss": _l1, "HuberLoss": _huber, "SmoothL1Loss": _smooth_l1,
    "CrossEntropyLoss": _cross_entropy, "BCEWithLogitsLoss": _bce_logits,
}

# Tensor methods beyond numpy's array methods.
_TENSOR_METHODS = {
    "pow": lambda e, kw: safe_pow(e[0], e[1]),
    "abs": lambda e, kw: sympy.Abs(e[0]),
    "exp": lambda e, kw: sympy.exp(e[0]),
    "log": lambda e, kw: log_of(e[0]),
    "log1p": lambda e, kw: log1p_of(e[0]),
    "sqrt": lambda e, kw: sympy.sqrt(e[0]),
    "square": lambda e, kw: sympy.Pow(e[0], 2),
    "relu": lambda e, kw: F.pos(e[0]),
    "clamp": lambda e, kw: _clamp(e, kw, None),
    "clamp_min": lambda e, kw: _maximum(e[0], e[1]),
    "clamp_max": lambda e, kw: _minimum(e[0], e[1]),
    "norm": lambda e, kw: _tnorm(e, kw, None),
    "logsumexp": lambda e, kw: F.log_sum_exp(e[0]),
    "view": lambda e, kw: F.reshape(e[0]),
    "squeeze": lambda e, kw: F.reshape(e[0]),
    "unsqueeze": lambda e, kw: F.reshape(e[0]),
    "to": lambda e, kw: e[0],
    "float": lambda e, kw: e[0],
    "double": lambda e, kw: e[0],
    "cpu": lambda e, kw: e[0],
    "cuda": lambda e, kw: e[0],
}


class LossHooks(ArrayHooks):
    ascended: frozenset = frozenset()  # tensors an optimizer with maximize=True holds (multipliers)

    tables = {"torch.": TORCH}

    def call(self, interp: Interpreter, qualname, args, kwargs, node):
        if qualname.startswith("torch.nn.") and not qualname.startswith("torch.nn.functional."):
            name = qualname.rsplit(".", 1)[1]
            if name in _LOSS_CLASSES:
                return LossModule(name, kwargs)
            if name == "Parameter":
                return self.declare(interp, hint_name(interp, "parameter"), node)
            if name[:1].isupper():
                return Network(interp.code(node))
        if qualname == "torch.autograd.grad" and args:
            self.minimised(interp, args[0], node)
            return Opaque(interp.code(node))
        if qualname.startswith("torch.") and _truthy(kwargs.get("requires_grad")):
            if interp.current_hint in self.ascended:
                # held by an optimizer with maximize=True: a multiplier, data for the minimised loss
                sign = guards.CONSTANT_SIGN_CALLS.get(qualname)
                return data(interp.code(node), **{sign: True}) if sign else Opaque(interp.code(node))
            return self.declare(interp, hint_name(interp, "weights"), node)
        return self.build(interp, qualname, args, kwargs, node)

    def call_value(self, interp, func, args, kwargs, node):
        if isinstance(func, LossModule):
            exprs = [interp.to_expr(a, None) for a in args]
            if len(exprs) < 2 or any(e is None for e in exprs[:2]):
                return NotImplemented
            kw = {k: (v if isinstance(v, str) else interp.to_expr(v, None)) for k, v in func.kwargs.items()}
            return _LOSS_CLASSES[func.name](exprs, kw, args)
        if self.predicts(interp, func, args):
            return self.declare(interp, f"prediction {interp.code(node.func)}(...)", node)
        return NotImplemented

    def predicts(self, interp, func, args) -> bool:
        """Calling ``func`` runs a network: its output is the variable the loss is judged in."""
        if any(interp.involves(interp.to_expr(a, None)) for a in args):
            return False
        if isinstance(func, Network):
            return True
        if isinstance(func, InstanceVal) and func.cls is not None:
            return any(b in _MODULE_BASES for b in func.cls.all_bases())
        # a model handed in as a parameter (``def train(model, loader): pred = model(x)``)
        return isinstance(func, Opaque) and func is not NONE and func.text.isidentifier()

    def method(self, interp, base, name, args, kwargs, node):
        if name == "backward" and not args:
            self.minimised(interp, base, node)
            return NONE
        if name == "step" and args and isinstance(args[0], (FuncVal, BoundFunc, PartialVal)):
            interp.call_function(args[0], [], {}, node)  # optimizer.step(closure)
            return NONE
        if name in ("detach", "numpy", "tolist"):
            return Opaque(interp.code(node))  # no gradient flows through: data from here on
        if isinstance(base, (Network, InstanceVal)) and name == "forward":
            return self.call_value(interp, base, args, kwargs, node)
        if isinstance(base, sympy.Basic) and interp.involves(base):
            builder = _TENSOR_METHODS.get(name)
            if builder is not None and name not in METHODS:
                exprs = [base] + [interp.to_expr(a, None) for a in args]
                kw = {k: interp.to_expr(v, None) for k, v in kwargs.items() if not isinstance(v, str)}
                try:
                    result = builder(exprs, kw)
                except (TypeError, ValueError, IndexError, AttributeError):
                    result = None
                if result is not None:
                    return result
        return super().method(interp, base, name, args, kwargs, node)

    def minimised(self, interp, value, node) -> None:
        expr = interp.to_expr(value, None)
        if expr is not None and interp.involves(expr):
            self.registry.objective(interp, node, "minimise", expr, interp.current_branch)


def _truthy(value) -> bool:
    return value is True or (isinstance(value, sympy.Basic) and value == 1)


def recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    from optlint.dialects.lagrangian import ascended_names

    registry = DialectRegistry(path, NAME, comparisons=False)
    hooks = LossHooks(registry)
    hooks.ascended = ascended_names(wrapper.module)
    return run_dialect(wrapper, path, hooks, registry)
