#!/usr/bin/python3
"""Writes optim.json: reference optimizer trajectories from PyTorch.

Run with Debian's python3-torch: /usr/bin/python3 optim_fixture.py

Each case minimizes the fixed quadratic f(w) = sum_i c_i (w_i - t_i)^2 over two
weight arrays (gradient 2 c (w - t)) with torch.optim.AdamW or
torch.optim.SGD in float64, optionally clipping with
torch.nn.utils.clip_grad_norm_, and records the weights after every step.
The schedule cases record the learning rates that torch.optim.lr_scheduler's
StepLR and CosineAnnealingLR give per epoch.
"""
import json

import torch

torch.set_default_dtype(torch.float64)

W0 = [[0.5, -1.25, 2.0, 0.0], [0.3, -0.7, 1.1]]
C = [[1.0, 0.5, 2.0, 1.5], [3.0, 0.25, 1.0]]
T = [[-0.2, 0.4, 1.0, -1.5], [0.0, 0.9, -0.3]]
STEPS = 6


def trajectory(make, clip):
    ws = [torch.tensor(w, requires_grad=True) for w in W0]
    cs = [torch.tensor(c) for c in C]
    ts = [torch.tensor(t) for t in T]
    opt = make(ws)
    out = []
    for _ in range(STEPS):
        opt.zero_grad()
        loss = sum((c * (w - t) ** 2).sum() for w, c, t in zip(ws, cs, ts))
        loss.backward()
        if clip > 0:
            torch.nn.utils.clip_grad_norm_(ws, clip)
        opt.step()
        out.append([w.detach().tolist() for w in ws])
    return out


cases = []
for name, kind, kw, clip in [
    ("adamw", "adamw", dict(lr=0.05, betas=(0.9, 0.999), eps=1e-8, weight_decay=0.1), 0.0),
    ("adamw-clipped", "adamw", dict(lr=0.05, betas=(0.8, 0.99), eps=1e-6, weight_decay=0.0), 0.5),
    # beta1 = 0 and beta2 = 0 are allowed (torch checks 0 <= beta < 1).
    ("adamw-beta1-zero", "adamw", dict(lr=0.05, betas=(0.0, 0.999), eps=1e-8, weight_decay=0.1), 0.0),
    ("adamw-beta2-zero", "adamw", dict(lr=0.05, betas=(0.9, 0.0), eps=1e-8, weight_decay=0.0), 0.0),
    ("sgd-momentum", "sgd", dict(lr=0.05, momentum=0.9, weight_decay=0.01), 0.0),
    ("sgd-clipped", "sgd", dict(lr=0.1, momentum=0.5, weight_decay=0.0), 1.0),
]:
    if kind == "adamw":
        make = lambda ws, kw=kw: torch.optim.AdamW(ws, **kw)
    else:
        make = lambda ws, kw=kw: torch.optim.SGD(ws, **kw)
    case = dict(name=name, kind=kind, clip=clip, steps=trajectory(make, clip))
    case.update({k: v for k, v in kw.items() if k != "betas"})
    if "betas" in kw:
        case["beta1"], case["beta2"] = kw["betas"]
    cases.append(case)


def rates(make_sched, epochs):
    w = torch.zeros(1, requires_grad=True)
    opt = torch.optim.SGD([w], lr=0.1)
    sched = make_sched(opt)
    out = []
    for _ in range(epochs):
        out.append(opt.param_groups[0]["lr"])
        opt.step()
        sched.step()
    return out


schedules = [
    dict(name="step", rate=0.1, step_epochs=3, factor=0.5, epochs=10,
         rates=rates(lambda o: torch.optim.lr_scheduler.StepLR(o, step_size=3, gamma=0.5), 10)),
    dict(name="cosine", rate=0.1, min_rate=1e-4, epochs=10,
         rates=rates(lambda o: torch.optim.lr_scheduler.CosineAnnealingLR(o, T_max=10, eta_min=1e-4), 10)),
]

with open("optim.json", "w") as f:
    json.dump(dict(torch=torch.__version__, w0=W0, c=C, t=T, cases=cases, schedules=schedules), f, indent=1)
