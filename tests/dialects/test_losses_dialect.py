"""Hand-written (torch style) losses: judged in the prediction, not in a network's weights.

Facts used: a sum of a convex function of an affine map is convex, a maximum of affine
functions is convex, and log-sum-exp is convex (B&V 2004 §3.1.5, §3.2.2, §3.2.3, from memory);
the minimum of a convex function and a constant (a capped loss) is not convex. The mappings of
torch's loss definitions onto optlint's atoms are checked numerically against the definitions
in torch's documentation (from memory) with numpy; torch itself is never imported.
"""

from __future__ import annotations

import numpy as np

from helpers import findings, rules

LOOP = """
import torch
import torch.nn as nn
import torch.nn.functional as F

class Net(nn.Module):
    def __init__(self):
        super().__init__()
        self.body = nn.Sequential(nn.Linear(4, 16), nn.ReLU(), nn.Linear(16, 1))

    def forward(self, x):
        return self.body(x)

def train(loader):
    net = Net()
    opt = torch.optim.Adam(net.parameters())
    for x, y in loader:
        opt.zero_grad()
        pred = net(x)
        loss = {loss}
        loss.backward()
        opt.step()
"""


def test_convex_loss_of_the_prediction_is_clean(tmp_path):
    assert rules(tmp_path, LOOP.format(loss="F.mse_loss(pred, y) + 0.1 * F.l1_loss(pred, y)")) == []


def test_capped_loss_in_the_same_loop_is_a_finding(tmp_path):
    found = rules(tmp_path, LOOP.format(loss="torch.clamp((pred - y) ** 2, max=4.0).mean()"))
    assert len(found) == 1 and found[0][0] == 21
    assert found[0][1] in ("nonconvex-objective", "nonconvex-penalty")  # the capped-loss rule supersedes


def test_loss_modules_and_classification_losses_are_convex(tmp_path):
    for loss in ("nn.HuberLoss(delta=2.0)(pred, y)", "nn.SmoothL1Loss()(pred, y)", "F.cross_entropy(pred, y)",
                 "F.binary_cross_entropy_with_logits(pred, y)", "torch.logsumexp(pred, dim=1).mean()",
                 "F.softplus(pred).sum() + F.relu(pred - 1).mean()",
                 "torch.clamp(pred - y, min=0.0).sum() + F.huber_loss(pred, y, delta=0.5)",
                 "(pred - y).abs().pow(2).mean() + torch.norm(pred - y, p=1) + torch.log1p(torch.exp(pred)).sum()"):
        assert rules(tmp_path, LOOP.format(loss=loss)) == [], loss


def test_concave_and_unknown_pieces(tmp_path):
    assert [r for _, r in rules(tmp_path, LOOP.format(loss="-F.mse_loss(pred, y)"))] in (
        ["nonconvex-objective"], ["weight-sign"])
    # sigmoid has no curvature facts: a note naming it, never a guess
    found = findings(tmp_path, LOOP.format(loss="F.mse_loss(torch.sigmoid(pred), y)"))
    assert [f.rule for f in found] == ["unknown-curvature"] and "torch.sigmoid" in found[0].message


def test_model_passed_as_parameter_and_closure_step(tmp_path):
    assert rules(tmp_path, """
import torch

def fit(model, loader, opt):
    for x, y in loader:
        def closure():
            opt.zero_grad()
            loss = torch.abs(model(x) - y).mean() - torch.log(model(x)).mean()
            loss.backward()
            return loss
        opt.step(closure)
""") == []


def test_trainable_leaf_tensors_are_the_variables(tmp_path):
    # c0 * exp(-k t) with c0 and k trainable: a product of non-constant terms
    assert rules(tmp_path, """
import torch

def fit(t, y):
    c0 = torch.tensor(1.0, requires_grad=True)
    k = torch.tensor(0.1, requires_grad=True)
    loss = ((c0 * torch.exp(-k * t) - y) ** 2).mean()
    loss.backward()
""") == [(8, "nonconvex-objective")]


def _huber_atom(r, m):
    # optlint's huber(x, M): x^2 for |x| <= M, 2M|x| - M^2 beyond (optlint/calculus/functions.py)
    return np.where(np.abs(r) <= m, r ** 2, 2 * m * np.abs(r) - m ** 2)


def test_torch_huber_and_smooth_l1_are_scaled_huber_atoms():
    r = np.linspace(-5, 5, 101)
    delta, beta = 1.7, 0.6
    torch_huber = np.where(np.abs(r) <= delta, 0.5 * r ** 2, delta * (np.abs(r) - 0.5 * delta))
    torch_smooth_l1 = np.where(np.abs(r) < beta, 0.5 * r ** 2 / beta, np.abs(r) - 0.5 * beta)
    assert np.allclose(torch_huber, _huber_atom(r, delta) / 2)
    assert np.allclose(torch_smooth_l1, _huber_atom(r, beta) / (2 * beta))


def test_scipy_huber_rho_is_the_huber_atom():
    # scipy.optimize.least_squares, loss='huber': rho(z) = z for z <= 1, 2 sqrt(z) - 1 beyond, applied
    # to z = (r / f_scale)^2 and scaled by f_scale^2 (scipy documentation, from memory)
    r = np.linspace(-6, 6, 121)
    scale = 2.5
    z = (r / scale) ** 2
    rho = np.where(z <= 1, z, 2 * np.sqrt(z) - 1) * scale ** 2
    assert np.allclose(rho, _huber_atom(r, scale))


def test_logaddexp_and_softplus_identities():
    x = np.linspace(-8, 8, 33)
    assert np.allclose(np.logaddexp(x, -x), np.log(np.exp(x) + np.exp(-x)))
    assert np.allclose(np.logaddexp(0.0, x), np.log1p(np.exp(x)))  # softplus = logistic atom
