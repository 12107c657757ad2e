"""Test helper: free decay of an SDOF oscillator with viscous and Coulomb damping.

Written for the tests, independently of ``clashcheck.identify.synth``.

- :func:`ivp_decay` integrates m x'' + c x' + k x + F sgn(x') = 0 with
  :func:`scipy.integrate.solve_ivp`, one half cycle at a time: a terminal event
  at each velocity zero, then the friction force changes sign, or the mass
  sticks when |k x| ≤ F (static = kinetic friction).
- :func:`halfcycle_decay` is the same motion in closed form (derived: within a
  half cycle the sign is constant, so the motion is a damped oscillation about
  the shifted centre −sgn(x')F/k, starting from rest at a peak), vectorised
  over cases, for the seeded batches.

Both return the *acceleration* an accelerometer records,
a = −(c x' + k x + F sgn x')/m, sampled at ``fs``.
"""

from __future__ import annotations

import math

import numpy as np


def ivp_decay(f_hz, zeta, f_over_k, x0, fs, duration_s):
    """Acceleration [m/s²] of a plucked SDOF (released from rest at x0 [m])."""
    from scipy.integrate import solve_ivp

    wn = 2 * math.pi * f_hz
    t_out = np.arange(int(round(duration_s * fs))) / fs
    acc = np.zeros_like(t_out)
    t0, x, v = 0.0, float(x0), 0.0
    while t0 < t_out[-1]:
        if abs(x) <= f_over_k:  # sticks
            break
        s = -math.copysign(1.0, x)  # moves toward the centre

        def rhs(_t, y, s=s):
            return [y[1], -2 * zeta * wn * y[1] - wn * wn * y[0] - wn * wn * f_over_k * s]

        def stop(_t, y, s=s):
            return y[1]

        stop.terminal = True
        stop.direction = -s  # velocity returns through zero
        sol = solve_ivp(rhs, (t0, t0 + 2.0 / f_hz), [x, v], events=stop, dense_output=True,
                        rtol=1e-9, atol=1e-13 * max(abs(x0), 1e-30))
        t1 = float(sol.t_events[0][0]) if sol.t_events[0].size else float(sol.t[-1])
        sel = (t_out >= t0) & (t_out < t1)
        y = sol.sol(t_out[sel])
        acc[sel] = -2 * zeta * wn * y[1] - wn * wn * y[0] - wn * wn * f_over_k * s
        t0, x, v = t1, float(sol.sol(t1)[0]), 0.0
    return acc


def halfcycle_decay(f_hz, zeta, f_over_k, x0, fs, duration_s):
    """Closed-form acceleration [m/s²] for arrays ``f_over_k``, ``x0`` (cases), shape (cases, samples)."""
    fk, x = np.broadcast_arrays(np.atleast_1d(np.asarray(f_over_k, dtype=float)),
                                np.atleast_1d(np.asarray(x0, dtype=float)))
    fk, x = fk.astype(float).copy(), x.astype(float).copy()
    wn = 2 * math.pi * f_hz
    sig = zeta * wn
    wd = wn * math.sqrt(1 - zeta * zeta)
    th = math.pi / wd  # half-cycle duration
    n = int(round(duration_s * fs))
    t = np.arange(n) / fs
    k = np.floor(t / th).astype(int)
    tl = t - k * th
    acc = np.zeros((fk.size, n))
    moving = np.abs(x) > fk
    for h in range(int(k.max()) + 1):
        sel = k == h
        s = -np.sign(x)
        c = -s * fk  # centre of this half cycle
        a = x - c
        tt = tl[sel][None, :]
        e = np.exp(-sig * tt)
        disp = c[:, None] + a[:, None] * e * (np.cos(wd * tt) + sig / wd * np.sin(wd * tt))
        vel = -a[:, None] * e * (wn * wn / wd) * np.sin(wd * tt)
        ac = -2 * sig * vel - wn * wn * disp - wn * wn * fk[:, None] * s[:, None]
        acc[:, sel] = np.where(moving[:, None], ac, 0.0)
        x_next = c - a * math.exp(-sig * th)
        moving = moving & (np.abs(x_next) > fk)
        x = np.where(moving, x_next, x)
    return acc
