"""Accuracy benchmark of ``clashcheck modes``: a scored set of generated recordings.

Run:  .venv/bin/python bench/bench_identify.py [--quick]

Every recording is generated here, from the parameters stated in ``CASES``,
by a generator written for this benchmark (it shares nothing with
``clashcheck.identify.synth``):

- tap tests: each mode is the exact impulse response of a single-degree-of-
  freedom oscillator, A·e^{−ζωₙt}·sin(ω_d t) (Rao, *Mechanical Vibrations* 5th
  ed. §2.6), driven by half-sine hammer pulses, plus white sensor noise, and
  the condition (mains hum, a hammer bounce, clipping at the 16-bit full
  scale, a close pair, a low peak SNR);
- flight logs: each mode is white noise through an SDOF resonator (exact
  discretisation of its impulse response: impulse invariance), plus order lines
  at k × each motor's own rotor rate (±spread between motors), on three gyro
  axes, written as CSV with a time column, throttle and one rotor-rate column
  per motor; conditions are motor spread, an onboard low-pass filter, a line
  dwelling on a mode, aliasing (2 kHz logging with no anti-alias filter) and
  timestamps printed to 0.1 ms.

Scores per condition: frequency error, damping error, interval coverage (the
share of found modes whose interval holds the true ζ), missed modes and false
modes (modes in the output, i.e. above the confidence floor, that match no
true mode).  A true mode is found when an output mode lies within 3 % of it.

On the tap cases the same recordings also go to a general-purpose
experimental-modal-analysis library, sdypy-EMA's LSCF (the least-squares
complex-frequency-domain estimator), fed the onset-aligned complex average of
the response spectra of every tap (the hammer force is not recorded, so its
spectrum is taken as flat), with poles chosen automatically from its
stabilisation diagram (stable to 0.1 % in frequency and 5 % in damping between
consecutive orders, in at least 40 % of the upper half of orders, model orders
up to 40).  Both methods search 20–1000 Hz on the tap cases.  LSCF gives no
damping interval, so its coverage is shown as "—".
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import tempfile
import time
from dataclasses import dataclass, field

import numpy as np

# ---------------------------------------------------------------- generators


def tap_recording(fs: float, modes: list[tuple[float, float, float]], *, impacts: int = 6,
                  interval_s: float = 1.5, lead_s: float = 0.5, pulse_s: float = 4e-4,
                  peak: float = 0.5, snr_db: float = 50.0,
                  hum: tuple[float, tuple[float, ...]] | None = None,
                  bounce: tuple[float, float, tuple[int, ...]] | None = None,
                  clip_gain: dict[int, float] | None = None,
                  seed: int = 0) -> tuple[np.ndarray, list[int]]:
    """One channel of a tap test (full scale 1, 16-bit) and the tap onsets [samples]."""
    from scipy import signal

    rng = np.random.default_rng(seed)
    n = int((lead_s + impacts * interval_s) * fs)
    t = np.arange(n) / fs
    force = np.zeros(n)
    tp = np.arange(int(round(pulse_s * fs)) + 1) / fs
    pulse = np.sin(np.pi * tp / pulse_s)
    onsets = []
    gains = []
    for i in range(impacts):
        at = int((lead_s + i * interval_s + rng.uniform(-0.05, 0.05)) * fs)
        g = rng.uniform(0.9, 1.1) * (clip_gain or {}).get(i, 1.0)
        gains.append((clip_gain or {}).get(i, 1.0))
        force[at:at + len(pulse)] += g * pulse
        onsets.append(at)
        if bounce is not None and i in bounce[2]:
            b = at + int(round(bounce[0] * fs))
            force[b:b + len(pulse)] += g * bounce[1] * pulse
    th = t[: int(min(n, 8.0 * fs))]
    h = np.zeros_like(th)
    for fn, z, a in modes:
        wn = 2 * math.pi * fn
        h += a * np.exp(-z * wn * th) * np.sin(wn * math.sqrt(1 - z * z) * th)
    y = signal.fftconvolve(force, h)[:n]
    ends = onsets[1:] + [n]
    ref = max(np.max(np.abs(y[o:e])) / g for o, e, g in zip(onsets, ends, gains))
    y *= peak / ref
    y += peak * 10 ** (-snr_db / 20) * rng.normal(size=n)
    if hum is not None:
        f0, amps = hum
        for k, a in enumerate(amps, start=1):
            y += a * np.sin(2 * math.pi * k * f0 * t + rng.uniform(0, 2 * math.pi))
    return np.clip(np.round(y * 32768.0), -32768, 32767) / 32768.0, onsets


def _resonator(x: np.ndarray, fs: float, fn: float, z: float) -> np.ndarray:
    """White noise through an SDOF resonator (impulse invariance of e^{−σt} sin ω_d t)."""
    from scipy import signal

    wn = 2 * math.pi * fn
    sig, wd = z * wn, wn * math.sqrt(1 - z * z)
    r = math.exp(-sig / fs)
    b = [0.0, r * math.sin(wd / fs)]
    a = [1.0, -2 * r * math.cos(wd / fs), r * r]
    return signal.lfilter(b, a, x)


@dataclass
class FlightCase:
    """Parameters of a generated flight log."""

    modes: list[tuple[float, float, int, float]]  # (fₙ [Hz], ζ, axis index, RMS)
    fs: float = 4000.0
    duration_s: float = 40.0
    spread: float = 0.0  # ± relative rotor-rate spread between the four motors
    lowpass_hz: float | None = None  # onboard 2nd-order Butterworth on the gyros
    dwell_hz: float | None = None  # throttle held so the blade-pass line sits here
    alias_to_hz: float | None = None  # generate at fs, log at this rate (no anti-alias)
    time_format: str = "%.6f"
    orders: dict[float, float] = field(default_factory=lambda: {1.0: 0.5, 2.0: 0.7, 3.0: 0.25,
                                                                4.0: 0.15})
    noise_rms: float = 0.02


def flight_recording(case: FlightCase, path: str, seed: int) -> None:
    """Write a flight log CSV: t, gx, gy, gz, throttle, rpm1..rpm4."""
    from scipy import signal

    rng = np.random.default_rng(seed)
    fs = case.fs
    n = int(case.duration_s * fs)
    t = np.arange(n) / fs
    # throttle: slow sweeps 0.3–0.75, or a hold that parks 2× rotor on dwell_hz
    thr = 0.52 + 0.22 * np.sin(2 * np.pi * t / 17.0) * np.sin(2 * np.pi * t / 5.3 + 0.4)
    rotor_of = lambda th: 40.0 + 160.0 * th  # noqa: E731  rotor rate [Hz] of throttle
    if case.dwell_hz is not None:
        hold = (case.dwell_hz / 2.0 - 40.0) / 160.0
        mid = (t > 0.3 * case.duration_s) & (t < 0.75 * case.duration_s)
        thr = np.where(mid, hold + 0.003 * rng.normal(size=n).cumsum() / math.sqrt(fs), thr)
    base = rotor_of(thr)
    x = np.zeros((n, 3))
    for fn, z, axis, rms in case.modes:
        y = _resonator(rng.normal(size=n), fs, fn, z)
        x[:, axis] += rms * y / np.std(y)
    spreads = np.linspace(-case.spread, case.spread, 4)
    rpm_cols = []
    for m, sp in enumerate(spreads):
        rate = base * (1.0 + sp)
        phase = 2 * np.pi * np.cumsum(rate) / fs
        for k, amp in case.orders.items():
            for axis in range(3):
                x[:, axis] += 0.25 * amp * (0.6 + 0.2 * axis) * np.sin(
                    k * phase + rng.uniform(0, 2 * np.pi))
        rpm_cols.append(rate * 60.0)
    x += case.noise_rms * rng.normal(size=x.shape)
    if case.lowpass_hz is not None:
        sos = signal.butter(2, case.lowpass_hz, fs=fs, output="sos")
        x = signal.sosfilt(sos, x, axis=0)
    cols = [t, x[:, 0], x[:, 1], x[:, 2], thr] + rpm_cols
    data = np.column_stack(cols)
    if case.alias_to_hz is not None:
        data = data[:: int(round(fs / case.alias_to_hz))]
    fmt = [case.time_format] + ["%.5f"] * 3 + ["%.4f"] + ["%.1f"] * 4
    np.savetxt(path, data, fmt=fmt, delimiter=",",
               header="t,gx,gy,gz,throttle,rpm1,rpm2,rpm3,rpm4", comments="")


# ---------------------------------------------------------------- the cases

TAP_FS = 8000.0
_TAP_MODES = [
    [(118.0, 0.02, 1.0), (310.0, 0.015, 0.6), (730.0, 0.03, 0.5)],
    [(95.0, 0.01, 1.0), (260.0, 0.025, 0.7), (540.0, 0.012, 0.4)],
    [(140.0, 0.03, 1.0), (420.0, 0.015, 0.7), (880.0, 0.02, 0.5)],
]


def tap_cases() -> list[tuple[str, dict]]:
    """(condition, generator keywords) of the tap recordings."""
    out = []
    for i, modes in enumerate(_TAP_MODES):
        out.append(("tap: clean", dict(fs=TAP_FS, modes=modes, seed=10 + i)))
        out.append(("tap: 50 Hz hum, 44.1 kHz", dict(
            fs=44100.0, modes=modes, hum=(50.0, (0.02, 0.004, 0.008, 0.002)), seed=20 + i)))
        out.append(("tap: hammer bounce", dict(
            fs=TAP_FS, modes=modes, bounce=(0.004 + 0.003 * i, 0.5, (1, 4)), seed=30 + i)))
        out.append(("tap: clipping", dict(
            fs=TAP_FS, modes=modes, clip_gain={0: 4.0, 3: 3.0}, seed=40 + i)))
        out.append(("tap: peak SNR 15-20 dB", dict(
            fs=TAP_FS, modes=modes[:2], snr_db=15.0 + 2.5 * i, seed=50 + i)))
    pairs = [(300.0, 306.0, 0.008), (200.0, 204.5, 0.01), (450.0, 459.0, 0.006)]
    for i, (f1, f2, z) in enumerate(pairs):
        out.append(("tap: close pair", dict(
            fs=TAP_FS, modes=[(f1, z, 1.0), (f2, z, 0.8)], interval_s=2.0, seed=60 + i)))
    return out


def flight_cases() -> list[tuple[str, FlightCase]]:
    """(condition, parameters) of the flight logs."""
    modes_a = [(118.0, 0.03, 0, 0.6), (172.0, 0.02, 1, 0.5), (260.0, 0.04, 2, 0.4)]
    modes_b = [(96.0, 0.025, 1, 0.6), (205.0, 0.03, 0, 0.5), (330.0, 0.02, 2, 0.4)]
    out = []
    for modes in (modes_a, modes_b):
        out.append(("flight: motor spread ±1.5 %", FlightCase(modes, spread=0.015)))
        out.append(("flight: onboard low-pass 150 Hz", FlightCase(modes, lowpass_hz=150.0)))
        out.append(("flight: line dwelling on a mode", FlightCase(modes, dwell_hz=modes[1][0])))
        out.append(("flight: aliasing, 2 kHz log", FlightCase(modes, fs=8000.0, alias_to_hz=2000.0,
                                                             duration_s=30.0)))
        out.append(("flight: time printed to 0.1 ms", FlightCase(modes, time_format="%.4f")))
    return out


# ---------------------------------------------------------------- scoring

MATCH = 0.03


@dataclass
class Score:
    """Accumulated scores of one condition and method."""

    freq_err: list[float] = field(default_factory=list)
    damp_err: list[float] = field(default_factory=list)
    covered: list[bool] = field(default_factory=list)
    missed: int = 0
    as_candidates: int = 0
    false: int = 0
    truth: int = 0
    recordings: int = 0
    failures: list[str] = field(default_factory=list)
    seconds: float = 0.0

    def add(self, found: list[tuple[float, float | None, float | None, float | None]],
            truth: list[tuple[float, float]], candidates: tuple[float, ...] = ()) -> None:
        """Score one recording: found (f, ζ, ζ_low, ζ_high) against truth (f, ζ).

        ``candidates`` are the frequencies listed below the confidence floor: a
        missed mode found among them is counted apart.
        """
        self.recordings += 1
        self.truth += len(truth)
        used = set()
        for ft, zt in truth:
            best = None
            for j, (f, _z, _lo, _hi) in enumerate(found):
                if j not in used and abs(f / ft - 1) < MATCH and (
                        best is None or abs(f - ft) < abs(found[best][0] - ft)):
                    best = j
            if best is None:
                self.missed += 1
                if any(abs(f / ft - 1) < MATCH for f in candidates):
                    self.as_candidates += 1
                continue
            used.add(best)
            f, z, lo, hi = found[best]
            self.freq_err.append(f / ft - 1)
            if z is not None:
                self.damp_err.append(z / zt - 1)
            if lo is not None and hi is not None:
                self.covered.append(lo <= zt <= hi)
        self.false += len(found) - len(used)

    def row(self, condition: str, method: str) -> list[str]:
        """One table row."""
        fe = np.abs(self.freq_err) * 100
        de = np.abs(self.damp_err) * 100
        cov = (f"{100 * np.mean(self.covered):.0f} % ({sum(self.covered)}/{len(self.covered)})"
               if self.covered else "—")
        return [condition, method, str(self.recordings),
                f"{fe.max():.2f}" if fe.size else "—",
                f"{np.median(de):.1f} / {de.max():.1f}" if de.size else "—",
                f"{np.mean(de <= 25) * 100:.0f} %" if de.size else "—",
                cov, f"{self.missed}/{self.truth}" + (f" ({self.as_candidates} cand.)"
                                                        if self.as_candidates else ""),
                str(self.false),
                str(len(self.failures))]


#: Band searched by both methods on the tap cases [Hz].
TAP_BAND = (20.0, 1000.0)


def _ours_tap(path: str) -> tuple[list, float, tuple[float, ...]]:
    from clashcheck.errors import ClashcheckError
    from clashcheck.identify import Columns, TapSettings, analyse_tap, open_recording

    t0 = time.perf_counter()
    try:
        res = analyse_tap(open_recording(path, Columns()),
                          TapSettings(min_frequency_hz=TAP_BAND[0], max_frequency_hz=TAP_BAND[1]))
    except ClashcheckError as exc:
        raise RuntimeError(str(exc)) from None
    found = [(m.frequency_hz, m.damping, m.damping_low, m.damping_high) for m in res.modes]
    return found, time.perf_counter() - t0, tuple(m.frequency_hz for m in res.candidates)


def _lscf_tap(x: np.ndarray, fs: float, onsets: list[int], fmin: float, fmax: float,
              order: int = 40) -> tuple[list, float, tuple[float, ...]]:
    """sdypy-EMA LSCF on the onset-aligned complex average of the taps' spectra."""
    from sdypy import EMA

    t0 = time.perf_counter()
    pre = int(0.002 * fs)
    seg = min(np.diff(onsets).min(), len(x) - onsets[-1]) - pre
    spectra = np.array([np.fft.rfft(x[o - pre:o - pre + seg]) for o in onsets])
    frf = spectra.mean(axis=0)
    freq = np.fft.rfftfreq(seg, 1.0 / fs)
    keep = freq <= min(fmax * 1.2, 0.5 * fs)
    model = EMA.Model(frf=frf[keep][None, :], freq=freq[keep], lower=fmin, upper=fmax,
                      pol_order_high=order)
    import contextlib
    import io

    with contextlib.redirect_stderr(io.StringIO()):
        model.get_poles(method="lscf", show_progress=False)
    # automatic pole choice from the stabilisation diagram
    stable: list[tuple[float, float, int]] = []
    for j in range(1, len(model.pole_freq)):
        fa, za = np.asarray(model.pole_freq[j]), np.asarray(model.pole_xi[j])
        fb, zb = np.asarray(model.pole_freq[j - 1]), np.asarray(model.pole_xi[j - 1])
        for f, z in zip(fa, za):
            if not (fmin <= f <= fmax and 0 < z < 0.3) or fb.size == 0:
                continue
            k = int(np.argmin(np.abs(fb - f)))
            if abs(fb[k] / f - 1) < 1e-3 and abs(zb[k] / z - 1) < 0.05:
                stable.append((f, z, j))
    top = len(model.pole_freq)
    upper = [(f, z) for f, z, j in stable if j >= top // 2]
    upper.sort()
    clusters: list[list[tuple[float, float]]] = []
    for f, z in upper:
        if clusters and f / clusters[-1][-1][0] - 1 < 0.005:
            clusters[-1].append((f, z))
        else:
            clusters.append([(f, z)])
    need = 0.4 * (top - top // 2)
    found = [(float(np.median([c[0] for c in cl])), float(np.median([c[1] for c in cl])), None,
              None) for cl in clusters if len(cl) >= need]
    return found, time.perf_counter() - t0, ()


def _ours_flight(path: str) -> tuple[list, float, tuple[float, ...]]:
    from clashcheck.errors import ClashcheckError
    from clashcheck.identify import Columns, FlightSettings, analyse_flight, open_recording

    cols = Columns(signals=("gx", "gy", "gz"), time_column="t", throttle_column="throttle",
                   rpm_columns=("rpm1", "rpm2", "rpm3", "rpm4"), rpm_scale_hz=1.0 / 60.0)
    t0 = time.perf_counter()
    try:
        res = analyse_flight(open_recording(path, cols),
                             FlightSettings(blades=2, axes=("roll", "pitch", "yaw")))
    except ClashcheckError as exc:
        raise RuntimeError(str(exc)) from None
    found = [(m.frequency_hz, m.damping, m.damping_low, m.damping_high) for m in res.modes]
    return found, time.perf_counter() - t0, tuple(m.frequency_hz for m in res.candidates)


def main() -> int:
    """Generate, analyse and score every case; print the table."""
    from scipy.io import wavfile
    from tabulate import tabulate

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="one recording per condition")
    ap.add_argument("--no-flight", action="store_true", help="tap cases only")
    args = ap.parse_args()
    scores: dict[tuple[str, str], Score] = {}
    tmp = tempfile.mkdtemp(prefix="bench_identify_")
    seen: dict[str, int] = {}
    for cond, kw in tap_cases():
        seen[cond] = seen.get(cond, 0) + 1
        if args.quick and seen[cond] > 1:
            continue
        kw = dict(kw)
        fs = kw.pop("fs")
        x, onsets = tap_recording(fs, **kw)
        path = os.path.join(tmp, f"tap{len(scores)}_{seen[cond]}.wav")
        wavfile.write(path, int(fs), np.clip(np.round(x * 32768), -32768, 32767).astype(np.int16))
        truth = [(f, z) for f, z, _a in kw["modes"]]
        # interleaved: ours, then the reference, on the same file
        for method, run in (("clashcheck", lambda: _ours_tap(path)),
                            ("LSCF (sdypy-EMA)", lambda: _lscf_tap(x, fs, onsets, *TAP_BAND))):
            sc = scores.setdefault((cond, method), Score())
            try:
                found, secs, cands = run()
                sc.add(found, truth, cands)
                sc.seconds += secs
            except Exception as exc:  # noqa: BLE001  a refused recording is scored as all missed
                sc.failures.append(f"{type(exc).__name__}: {exc}")
                sc.add([], truth)
    if not args.no_flight:
        seen_f: dict[str, int] = {}
        for cond, case in flight_cases():
            seen_f[cond] = seen_f.get(cond, 0) + 1
            if args.quick and seen_f[cond] > 1:
                continue
            path = os.path.join(tmp, f"flight{len(scores)}_{seen_f[cond]}.csv")
            flight_recording(case, path, seed=70 + len(scores))
            truth = [(f, z) for f, z, _ax, _r in case.modes]
            if case.alias_to_hz is not None or case.lowpass_hz is not None:
                top = 0.4 * (case.alias_to_hz or case.fs)
                truth = [(f, z) for f, z in truth if f <= top]
            sc = scores.setdefault((cond, "clashcheck"), Score())
            try:
                found, secs, cands = _ours_flight(path)
                sc.add(found, truth, cands)
                sc.seconds += secs
            except Exception as exc:  # noqa: BLE001
                sc.failures.append(f"{type(exc).__name__}: {exc}")
                sc.add([], truth)
    head = ["condition", "method", "rec.", "max |f err| %", "|ζ err| % median / max",
            "ζ within 25 %", "interval coverage", "missed", "false", "refused"]
    rows = [sc.row(cond, method) for (cond, method), sc in scores.items()]
    print(tabulate(rows, headers=head, tablefmt="github", disable_numparse=True))
    print()
    total = sum(sc.recordings for (c, m), sc in scores.items() if m == "clashcheck")
    print(f"{total} recordings; a true mode is found when an output mode lies within "
          f"{100 * MATCH:.0f} %; false = output modes (above the confidence floor) matching no "
          "true mode")
    for (cond, method), sc in scores.items():
        for f in sc.failures[:2]:
            print(f"  refused [{cond}, {method}]: {f}")
    ratio = [(scores[(c, "LSCF (sdypy-EMA)")].seconds / max(sc.seconds, 1e-9))
             for (c, m), sc in scores.items() if m == "clashcheck" and (c, "LSCF (sdypy-EMA)")
             in scores]
    if ratio:
        print(f"time, reference / clashcheck on the tap cases (same run, interleaved): median "
              f"{np.median(ratio):.2g}×")
    return 0


if __name__ == "__main__":
    sys.exit(main())
