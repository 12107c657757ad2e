"""An independent flight-log generator for the flight-analysis tests.

Written apart from ``clashcheck.identify.synth`` (the code under test must not
be checked against its own generator).  Every parameter is stated by the test:

- rotor rate per motor: a throttle → rate curve times (1 + spread of that motor);
- order lines: each motor adds a sinusoid at k × its own rate, phase integrated
  from the rate, amplitude ``a_k / sqrt(motors)`` per axis, so the lines of one
  order carry the power of a single line of amplitude ``a_k`` (true strength of
  order k = RMS over axes of ``a_k``, relative to the strongest order);
- frame modes: white force through a sampled SDOF impulse response
  e^{−ζωₙt} sin(ω_d t) (impulse invariance; Oppenheim & Schafer §7.1), one
  force per mode, participation per axis;
- optional steady tones (a fan, a power-supply line), sensor noise, and an
  onboard low-pass (a 2nd-order Butterworth applied causally, as a flight
  controller filters its gyro before logging).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np


@dataclass
class Flight:
    """What a generated flight log holds, as stated by a test."""

    fs: float = 2000.0
    duration_s: float = 60.0
    #: Throttle steps (fraction), each held ``dwell_s`` then ramped over ``ramp_s``.
    levels: Sequence[float] = (0.25, 0.4, 0.55, 0.7, 0.85, 0.6, 0.45, 0.3)
    dwell_s: float = 5.0
    ramp_s: float = 1.0
    #: Rotor rate [Hz] of the mean motor at a throttle fraction.
    curve: Callable[[np.ndarray], np.ndarray] = field(
        default=lambda u: 40.0 + 260.0 * np.asarray(u))
    #: Relative speed offset of each motor (its length = number of motors).
    spread: Sequence[float] = (0.0, 0.0, 0.0, 0.0)
    #: (order, (amplitude roll, pitch, yaw)).
    orders: Sequence[tuple[float, tuple[float, float, float]]] = ()
    #: (frequency Hz, damping ratio, (participation roll, pitch, yaw)).
    modes: Sequence[tuple[float, float, tuple[float, float, float]]] = ()
    #: Steady tones: (frequency Hz, (amplitude roll, pitch, yaw)).
    tones: Sequence[tuple[float, tuple[float, float, float]]] = ()
    #: RMS of each mode's response (before participation).
    mode_rms: float = 1.0
    noise_rms: float = 0.02
    #: Add the sensor noise after the onboard filter (logging and quantisation
    #: noise) instead of before it.
    noise_after_filter: bool = False
    #: Order-line amplitudes grow as (rotor rate / rate at half throttle)^growth
    #: (2 for a force ∝ ω²); the ratio between orders stays the same at every moment.
    growth: float = 0.0
    #: Onboard low-pass corner [Hz] (2nd-order Butterworth), or ``None``.
    lowpass_hz: float | None = None
    seed: int = 0

    def throttle(self, t: np.ndarray) -> np.ndarray:
        period = self.dwell_s + self.ramp_s
        lv = np.asarray(self.levels, float)
        i = np.floor(t / period).astype(int)
        a = lv[i % lv.size]
        b = lv[(i + 1) % lv.size]
        frac = np.clip((t - i * period - self.dwell_s) / self.ramp_s, 0.0, 1.0)
        return a + (b - a) * frac

    def true_strengths(self) -> dict[float, float]:
        """RMS over axes of each order, relative to the strongest (derived)."""
        rms = {k: float(np.sqrt(np.sum(np.square(a)))) for k, a in self.orders}
        top = max(rms.values())
        return {k: v / top for k, v in rms.items()}


def generate(spec: Flight) -> dict[str, np.ndarray]:
    """Columns t, gx, gy, gz, throttle, rpm1..rpmM (rpm) of the stated flight."""
    from scipy import signal

    rng = np.random.default_rng(spec.seed)
    n = int(round(spec.duration_s * spec.fs))
    t = np.arange(n) / spec.fs
    thr = spec.throttle(t)
    base = spec.curve(thr)
    sig = np.zeros((n, 3))
    motors = len(spec.spread)
    rates = [base * (1.0 + s) for s in spec.spread]
    ref = float(spec.curve(np.asarray(0.5)))
    for k, amp in spec.orders:
        for f_m in rates:
            phase = 2 * np.pi * k * np.cumsum(f_m) / spec.fs + rng.uniform(0, 2 * np.pi)
            line = np.sin(phase) / np.sqrt(motors) * (f_m / ref) ** spec.growth
            sig += line[:, None] * np.asarray(amp)[None, :]
    for fn, z, part in spec.modes:
        wn = 2 * np.pi * fn
        sigma, wd = z * wn, wn * np.sqrt(1 - z * z)
        r = np.exp(-sigma / spec.fs)
        b = [0.0, r * np.sin(wd / spec.fs)]
        a = [1.0, -2 * r * np.cos(wd / spec.fs), r * r]
        warm = int(10 / (sigma + 1e-9) * spec.fs) if sigma > 0 else 0
        warm = min(warm, 5 * n)
        x = signal.lfilter(b, a, rng.standard_normal(n + warm))[warm:]
        x *= spec.mode_rms / np.std(x)
        sig += x[:, None] * np.asarray(part)[None, :]
    for f, amp in spec.tones:
        sig += np.sin(2 * np.pi * f * t + rng.uniform(0, 2 * np.pi))[:, None] * np.asarray(amp)[None, :]
    noise = spec.noise_rms * rng.standard_normal(sig.shape)
    if not spec.noise_after_filter:
        sig += noise
    if spec.lowpass_hz is not None:
        b, a = signal.butter(2, spec.lowpass_hz, fs=spec.fs)
        sig = signal.lfilter(b, a, sig, axis=0)
    if spec.noise_after_filter:
        sig += noise
    out = {"t": t, "gx": sig[:, 0], "gy": sig[:, 1], "gz": sig[:, 2], "throttle": thr}
    for m, f_m in enumerate(rates):
        out[f"rpm{m + 1}"] = 60.0 * f_m
    return out


def write_npy(path, spec: Flight, columns: Sequence[str] | None = None):
    """Write the generated columns (all, or those named) as a structured ``.npy``."""
    data = generate(spec)
    names = list(columns) if columns is not None else list(data)
    arr = np.zeros(len(data["t"]), dtype=[(c, "f8") for c in names])
    for c in names:
        arr[c] = data[c]
    np.save(path, arr)
    return path
