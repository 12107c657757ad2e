"""Synthetic tap-test and flight recordings of an invented frame.

The generator drives single-degree-of-freedom resonators with chosen
frequency and damping, adds motor-order lines that sweep with a throttle
profile, then sensor noise and quantisation.  It exists for demos, tests and
the benchmark: the parameters are known, so what an analysis recovers can be
compared with what went in.  Figures made with it are never reference values
for anything else.

Each resonator is the impulse-invariant discretisation of
h(t) = e^{−σt} sin(ω_d t), σ = ζωₙ, ω_d = ωₙ√(1 − ζ²): its discrete impulse
response is exactly the sampled continuous one, so its poles have exactly the
chosen frequency and damping.
"""

from __future__ import annotations

import io
import math
import os
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass

import numpy as np

from ..files import atomic_file

__all__ = [
    "SynthMode",
    "SynthOrder",
    "resonator",
    "sweep_throttle",
    "step_throttle",
    "linear_rotor",
    "tap_signal",
    "flight_blocks",
    "write_tap_wav",
    "write_flight_csv",
]


@dataclass(frozen=True)
class SynthMode:
    """A resonance of the invented frame."""

    #: Undamped natural frequency [Hz].
    frequency_hz: float
    #: Damping ratio ζ.
    damping: float
    #: Response amplitude per unit forcing, per channel (signal units).
    gains: tuple[float, ...] = (1.0,)
    #: Coulomb friction in the mode's joint: the amplitude drop per cycle, as a fraction
    #: of the amplitude a tap of strength 1 gives the mode (0 = viscous only).
    friction_per_cycle: float = 0.0

    def __post_init__(self) -> None:
        if not (self.frequency_hz > 0 and 0 < self.damping < 1):
            raise ValueError("a synthetic mode needs frequency > 0 and 0 < damping < 1")
        if not 0 <= self.friction_per_cycle < 1:
            raise ValueError("a synthetic mode's friction_per_cycle lies in [0, 1)")


@dataclass(frozen=True)
class SynthOrder:
    """A motor-order line: a tone at ``order`` × rotor rate."""

    #: Multiple of the rotor rate.
    order: float
    #: Amplitude per channel (signal units).
    amplitudes: tuple[float, ...]


def resonator(freq_hz: float, damping: float, sample_rate_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """Impulse-invariant SDOF resonator: ``(b, a)`` for :func:`scipy.signal.lfilter`.

    Its impulse response is e^{−σ n T} sin(ω_d n T).

    Parameters
    ----------
    freq_hz : float
        Undamped natural frequency [Hz].
    damping : float
        Damping ratio ζ.
    sample_rate_hz : float
        Sample rate [Hz].
    """
    wn = 2.0 * math.pi * freq_hz
    sigma = damping * wn
    wd = wn * math.sqrt(1.0 - damping * damping)
    T = 1.0 / sample_rate_hz
    r = math.exp(-sigma * T)
    b = np.array([0.0, r * math.sin(wd * T)])
    a = np.array([1.0, -2.0 * r * math.cos(wd * T), r * r])
    return b, a


def sweep_throttle(low: float = 0.2, high: float = 0.85, period_s: float = 40.0) -> Callable:
    """A throttle profile sweeping between ``low`` and ``high`` (fractions).

    Returns a function of time [s] giving throttle; a smooth raised-cosine
    sweep up and down with a period of ``period_s``.

    Parameters
    ----------
    low : float, optional
        Lowest throttle [fraction]; default 0.2.
    high : float, optional
        Highest throttle [fraction]; default 0.85.
    period_s : float, optional
        Period of one sweep up and down [s]; default 40.

    Returns
    -------
    callable
        ``profile(t_s)``: throttle [fraction] at times ``t_s`` [s] (array).
    """

    def profile(t_s: np.ndarray) -> np.ndarray:
        return low + (high - low) * 0.5 * (1.0 - np.cos(2.0 * math.pi * np.asarray(t_s) / period_s))

    return profile


def step_throttle(levels: Sequence[float] = (0.25, 0.45, 0.65, 0.85, 0.55, 0.35),
                  dwell_s: float = 6.0, ramp_s: float = 2.0) -> Callable:
    """A throttle profile that holds each level for ``dwell_s`` and ramps between them.

    The levels repeat cyclically; ramps are raised-cosine.  Returns a function
    of time [s] giving throttle (fraction).

    Parameters
    ----------
    levels : sequence of float, optional
        Throttle levels [fraction], visited in order and repeated.
    dwell_s : float, optional
        Time each level is held [s]; default 6.
    ramp_s : float, optional
        Duration of each ramp to the next level [s]; default 2.

    Returns
    -------
    callable
        ``profile(t_s)``: throttle [fraction] at times ``t_s`` [s] (array).
    """
    lv = np.asarray(levels, dtype=float)
    period = dwell_s + ramp_s

    def profile(t_s: np.ndarray) -> np.ndarray:
        t = np.asarray(t_s, dtype=float)
        k = np.floor(t / period).astype(int)
        u = t - k * period
        a = lv[k % len(lv)]
        b = lv[(k + 1) % len(lv)]
        frac = np.clip((u - dwell_s) / ramp_s, 0.0, 1.0)
        return a + (b - a) * 0.5 * (1 - np.cos(np.pi * frac))

    return profile


def linear_rotor(idle_hz: float = 20.0, span_hz: float = 380.0) -> Callable:
    """Rotor rate [Hz] = ``idle_hz`` + ``span_hz`` × throttle (a stand-in drive model).

    Parameters
    ----------
    idle_hz : float, optional
        Rotor rate at zero throttle [Hz]; default 20.
    span_hz : float, optional
        Rise in rotor rate from zero to full throttle [Hz]; default 380.

    Returns
    -------
    callable
        ``rotor(throttle)``: rotor rate [Hz] for throttle [fraction] (array).
    """

    def rotor(throttle: np.ndarray) -> np.ndarray:
        return idle_hz + span_hz * np.asarray(throttle)

    return rotor


def _quantise(x: np.ndarray, full_scale: float, bits: int) -> np.ndarray:
    lsb = full_scale / 2 ** (bits - 1)
    return np.clip(np.round(x / lsb) * lsb, -full_scale, full_scale - lsb)


def _friction_ring(mode: SynthMode, hits: list[tuple[int, float]], n: int, fs: float) -> np.ndarray:
    """Free response of a mode with viscous and Coulomb damping to impulses (strength, sample)."""
    wn = 2.0 * math.pi * mode.frequency_hz
    lam = mode.damping * wn
    wd = wn * math.sqrt(1.0 - mode.damping**2)
    rate = mode.friction_per_cycle * mode.frequency_hz  # amplitude lost per second to friction
    y = np.zeros(n)
    for i, strength in hits:
        # A(t) = s e^{−λt} − rate (1 − e^{−λt})/λ reaches 0 at t = ln(1 + s λ/rate)/λ
        stop = math.log1p(strength * lam / rate) / lam
        m = min(n - i, int(stop * fs) + 1)
        t = np.arange(m) / fs
        env = strength * np.exp(-lam * t) + rate * np.expm1(-lam * t) / lam
        y[i:i + m] += np.maximum(env, 0.0) * np.sin(wd * t)
    return y


def tap_signal(
    modes: Sequence[SynthMode],
    sample_rate_hz: float,
    impacts: int = 8,
    interval_s: float = 1.5,
    lead_s: float = 0.4,
    noise_rms: float = 1e-4,
    amplitude: float = 0.4,
    full_scale: float = 1.0,
    bits: int = 16,
    pulse_s: float = 2.5e-4,
    seed: int = 0,
    strengths: Sequence[float] | None = None,
) -> np.ndarray:
    """A tap-test recording: impacts ringing the frame's modes.

    A mode with ``friction_per_cycle`` > 0 rings with the envelope of viscous
    plus Coulomb damping, dA/dt = −ζωA − D f (linear plus exponential, REFERENCES.md
    §13), and stops when A reaches 0; each tap is taken as an impulse and the
    responses of successive taps add (the taps should be far enough apart for
    the friction mode to have stopped).

    Parameters
    ----------
    modes : sequence of SynthMode
        The frame's modes; ``gains`` gives the channels.
    sample_rate_hz : float
        Sample rate [Hz].
    impacts : int
        Number of taps.
    interval_s : float
        Time between taps [s] (each varies by ±5 %).
    lead_s : float
        Quiet time before the first tap [s].
    noise_rms : float
        Sensor noise RMS (signal units).
    amplitude : float
        Peak response of a tap, summed over modes (signal units).
    full_scale : float
        Converter full scale; the signal clips there.
    bits : int
        Converter resolution [bits].
    pulse_s : float
        Length of the half-sine force pulse [s].
    seed : int
        Random seed (tap times and strengths, noise).
    strengths : sequence of float, optional
        Relative tap strengths, repeated cyclically ("graded taps", e.g.
        ``(1.0, 0.5, 0.25)``); default a random 0.7–1.3 each.

    Returns
    -------
    ndarray
        Samples, shape (rows, channels).
    """
    from scipy import signal

    rng = np.random.default_rng(seed)
    nch = len(modes[0].gains)
    times = lead_s + interval_s * np.arange(impacts) * (1 + 0.05 * rng.uniform(-1, 1, impacts))
    n = int((times[-1] + interval_s + 0.2) * sample_rate_hz)
    force = np.zeros(n)
    plen = max(1, int(round(pulse_s * sample_rate_hz)))
    pulse = np.sin(np.pi * (np.arange(plen) + 0.5) / plen)
    pulse /= pulse.sum()
    hits = []
    for k, t0 in enumerate(times):
        i = int(t0 * sample_rate_hz)
        strength = rng.uniform(0.7, 1.3) if strengths is None else float(strengths[k % len(strengths)])
        force[i:i + plen] += pulse * strength
        hits.append((i, strength))
    out = np.zeros((n, nch))
    for m in modes:
        if m.friction_per_cycle > 0:
            y = _friction_ring(m, hits, n, sample_rate_hz)
        else:
            b, a = resonator(m.frequency_hz, m.damping, sample_rate_hz)
            y = signal.lfilter(b, a, force)
        for c in range(nch):
            out[:, c] += m.gains[c] * y
    peak = np.max(np.abs(out))
    out *= amplitude / peak
    out += noise_rms * rng.standard_normal(out.shape)
    return _quantise(out, full_scale, bits)


def flight_blocks(
    modes: Sequence[SynthMode],
    orders: Sequence[SynthOrder],
    sample_rate_hz: float,
    duration_s: float,
    throttle: Callable | None = None,
    rotor_hz: Callable | None = None,
    forcing_rms: float = 1.0,
    noise_rms: float = 0.05,
    full_scale: float = 2000.0,
    bits: int = 16,
    seed: int = 0,
    block_rows: int = 1 << 17,
) -> Iterator[dict[str, np.ndarray]]:
    """Stream a flight recording: modes driven by broadband forcing, plus order lines.

    Each mode is driven by its own white modal force (unit-RMS response times
    its gain per axis); order k is a tone at k × rotor rate whose phase follows
    the integrated rotor rate.

    Parameters
    ----------
    modes : sequence of SynthMode
        Frame modes; ``gains`` has one entry per axis.
    orders : sequence of SynthOrder
        Order lines; ``amplitudes`` has one entry per axis.
    sample_rate_hz : float
        Sample rate [Hz].
    duration_s : float
        Length of the recording [s].
    throttle : callable, optional
        Throttle (fraction) as a function of time [s]; :func:`sweep_throttle` by default.
    rotor_hz : callable, optional
        Rotor rate [Hz] as a function of throttle; :func:`linear_rotor` by default.
    forcing_rms : float
        RMS of each mode's broadband modal force (one independent force per mode).
    noise_rms : float
        Sensor noise RMS (signal units).
    full_scale : float
        Sensor full scale (signal units); the signal clips there.
    bits : int
        Sensor resolution [bits].
    seed : int
        Random seed.
    block_rows : int
        Rows per yielded block.

    Yields
    ------
    dict
        ``time_s`` (rows,), ``signals`` (rows, axes), ``throttle`` (rows,),
        ``rotor_hz`` (rows,).
    """
    from scipy import signal

    throttle = throttle or sweep_throttle()
    rotor_hz = rotor_hz or linear_rotor()
    rng = np.random.default_rng(seed)
    nax = len(modes[0].gains) if modes else len(orders[0].amplitudes)
    filters = [resonator(m.frequency_hz, m.damping, sample_rate_hz) for m in modes]
    # unit-RMS response per unit-RMS white forcing: scale by 1/sqrt(sum h^2)
    norms = []
    for m in modes:
        wn = 2 * math.pi * m.frequency_hz
        # sum of h[n]^2 = fs * (1 - zeta^2) / (4 zeta wn)  (integral of e^-2st sin^2; derived)
        var = (1.0 - m.damping**2) / (4.0 * m.damping * wn)
        norms.append(1.0 / math.sqrt(var * sample_rate_hz))
    zi = [np.zeros(2) for _ in modes]
    phase = np.array([rng.uniform(0, 2 * math.pi) for _ in orders])
    total = int(round(duration_s * sample_rate_hz))
    done = 0
    while done < total:
        n = min(block_rows, total - done)
        t = (done + np.arange(n)) / sample_rate_hz
        thr = throttle(t)
        rot = rotor_hz(thr)
        out = np.zeros((n, nax))
        # each mode has its own broadband modal force (forces from several motors and
        # the air are largely uncorrelated); the mode shape spreads it over the axes
        force = forcing_rms * rng.standard_normal((n, max(len(modes), 1)))
        for k, (m, (b, a)) in enumerate(zip(modes, filters)):
            y, zi[k] = signal.lfilter(b, a, force[:, k], zi=zi[k])
            out += np.outer(y * norms[k], np.asarray(m.gains, dtype=float))
        cyc = np.cumsum(rot) / sample_rate_hz  # revolutions since the block start
        for j, o in enumerate(orders):
            ph = phase[j] + 2 * math.pi * o.order * cyc
            tone = np.sin(ph)
            for ax in range(nax):
                if o.amplitudes[ax]:
                    out[:, ax] += o.amplitudes[ax] * tone
            phase[j] = ph[-1] % (2 * math.pi)
        out += noise_rms * rng.standard_normal(out.shape)
        yield {
            "time_s": t,
            "signals": _quantise(out, full_scale, bits),
            "throttle": thr,
            "rotor_hz": rot,
        }
        done += n


def write_tap_wav(path: str | os.PathLike[str], samples: np.ndarray, sample_rate_hz: float) -> None:
    """Write a tap recording (full scale 1.0) as a 16-bit PCM WAV file.

    Parameters
    ----------
    path : str or os.PathLike
        File to write (atomically).
    samples : numpy.ndarray
        The signal, full scale ±1.0; values beyond it are clipped.
    sample_rate_hz : float
        Sample rate [Hz], rounded to a whole number in the file header.
    """
    from scipy.io import wavfile

    data = np.clip(np.round(np.asarray(samples) * 32768.0), -32768, 32767).astype(np.int16)
    with atomic_file(os.fspath(path)) as fh:
        wavfile.write(fh, int(round(sample_rate_hz)), data)


def write_flight_csv(
    path: str | os.PathLike[str],
    blocks: Iterator[dict[str, np.ndarray]],
    axis_names: Sequence[str] = ("gx", "gy", "gz"),
    throttle_column: str | None = "throttle",
    rpm_column: str | None = "rpm",
    time_column: str | None = "t",
    signal_format: str = "%.4f",
) -> None:
    """Write streamed flight blocks as CSV with a header row.

    Columns: time [s], one per axis, throttle (fraction), rotor rate [rpm];
    ``None`` leaves a column out.  ``signal_format`` is the printf format of
    the signal columns.

    Parameters
    ----------
    path : str or os.PathLike
        File to write (atomically).
    blocks : iterator of dict
        Blocks with ``time_s`` [s], ``signals`` (samples × axes, recording
        units), ``throttle`` [fraction] and ``rotor_hz`` [Hz] arrays, as the
        flight generator yields them.
    axis_names : sequence of str, optional
        Header names of the signal columns, one per axis.
    throttle_column : str or None, optional
        Header of the throttle column [fraction]; ``None`` leaves it out.
    rpm_column : str or None, optional
        Header of the rotor-rate column, written in rpm (rotor_hz × 60);
        ``None`` leaves it out.
    time_column : str or None, optional
        Header of the time column [s]; ``None`` leaves it out.
    signal_format : str, optional
        The printf format of the signal columns; default ``"%.4f"``.
    """
    names: list[str] = []
    if time_column:
        names.append(time_column)
    names += list(axis_names)
    if throttle_column:
        names.append(throttle_column)
    if rpm_column:
        names.append(rpm_column)
    with atomic_file(os.fspath(path)) as raw, io.TextIOWrapper(raw, encoding="utf-8", newline="\n") as fh:
        fh.write(",".join(names) + "\n")
        for blk in blocks:
            cols, fmts = [], []
            if time_column:
                cols.append(blk["time_s"])
                fmts.append("%.6f")
            for k in range(len(axis_names)):
                cols.append(blk["signals"][:, k])
                fmts.append(signal_format)
            if throttle_column:
                cols.append(blk["throttle"])
                fmts.append("%.3f")
            if rpm_column:
                cols.append(blk["rotor_hz"] * 60.0)
                fmts.append("%.0f")
            np.savetxt(fh, np.column_stack(cols), fmt=fmts, delimiter=",")
