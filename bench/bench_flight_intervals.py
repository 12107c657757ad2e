"""Bench: flight damping figures and their intervals on generated recordings (issue 11 §2).

Generates flight logs with ``tests/flight_gen.py`` (a generator written apart
from the analysis) under five conditions, each with random frame modes
(80–900 Hz, at least 1.4× apart; ζ log-uniform 0.01–0.08; random participation
over the three axes) and the same five order lines, then scores
``analyse_flight``:

- ``clean``: one rotor-rate column, motors identical;
- ``spread``: four motors ±1.5 % apart, one rotor-rate column each;
- ``lowpass``: as ``spread``, with a 2nd-order 150 Hz low-pass on board;
- ``drive``: throttle column only, drive model 25 % above the real curve;
- ``dwell``: 2/3 of the time at one throttle, its 3× line on a mode.

Per condition it prints: modes found / generated, false modes (above the
confidence floor, more than 2 % from any true mode), median and worst
frequency error, median and worst |damping error|, and the share of true ζ
inside the reported interval (nominal 90 %), counting modes reported with a
figure; candidates below the floor are counted apart.

Run from the repository root:  python bench/bench_flight_intervals.py [--per 8] [--seconds 60]
Not a test; CI does not run it.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))

from flight_gen import Flight, write_npy  # noqa: E402

from clashcheck.identify import (  # noqa: E402
    Columns,
    FlightSettings,
    analyse_flight,
    open_recording,
)

ORDERS = [(1, (3.0, 3.0, 1.0)), (2, (1.0, 1.0, 0.3)), (3, (6.0, 5.0, 2.0)),
          (6, (2.0, 2.0, 1.0)), (7, (2.2, 2.2, 1.0))]
SIG = ("gx", "gy", "gz")


def curve(u):
    return 30.0 + 150.0 * np.asarray(u)


def random_modes(rng, n):
    while True:
        f = np.sort(np.exp(rng.uniform(np.log(80), np.log(900), n)))
        if np.all(f[1:] / f[:-1] > 1.4):
            break
    z = np.exp(rng.uniform(np.log(0.01), np.log(0.08), n))
    return [(float(a), float(b), tuple(rng.uniform(0.2, 1.0, 3) * (1 + 2 * (np.arange(3) == i % 3))))
            for i, (a, b) in enumerate(zip(f, z))]


def case(cond, rng, seconds, seed):
    n = int(rng.integers(2, 4))
    modes = random_modes(rng, n)
    kw = dict(fs=3000.0, duration_s=seconds, curve=curve, orders=ORDERS, modes=modes, seed=seed)
    settings = FlightSettings(blades=3, poles=14)
    four = ("rpm1", "rpm2", "rpm3", "rpm4")
    if cond == "clean":
        spec = Flight(spread=(0.0,), **kw)
        cols = Columns(signals=SIG, time_column="t", rpm_columns=("rpm1",))
    elif cond in ("spread", "lowpass"):
        spec = Flight(spread=(-0.015, -0.005, 0.005, 0.015),
                      lowpass_hz=150.0 if cond == "lowpass" else None, **kw)
        cols = Columns(signals=SIG, time_column="t", rpm_columns=four)
    elif cond == "drive":
        spec = Flight(spread=(0.0,), **kw)
        cols = Columns(signals=SIG, time_column="t", throttle_column="throttle")
        settings = FlightSettings(blades=3, poles=14, rotor_of_throttle=lambda u: 1.25 * curve(u))
    else:  # dwell: hover at 0.4 (3× at 270 Hz) with a mode put there
        modes = [m for m in modes if abs(m[0] - 270.0) / 270.0 > 0.2][:2]
        modes.append((270.0, float(np.exp(rng.uniform(np.log(0.01), np.log(0.05)))),
                      (0.3, 0.3, 1.0)))
        kw["modes"] = modes
        spec = Flight(spread=(-0.015, -0.005, 0.005, 0.015),
                      levels=(0.4, 0.4, 0.4, 0.3, 0.4, 0.4, 0.6, 0.4, 0.8, 0.4, 0.5), **kw)
        cols = Columns(signals=SIG, time_column="t", rpm_columns=four)
    return spec, cols, settings


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--per", type=int, default=8, help="recordings per condition")
    ap.add_argument("--seconds", type=float, default=60.0)
    args = ap.parse_args()
    rng = np.random.default_rng(2026)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for cond in ("clean", "spread", "lowpass", "drive", "dwell"):
            found = total = false = cands = covered = with_fig = 0
            ferr, zerr = [], []
            for i in range(args.per):
                spec, cols, settings = case(cond, rng, args.seconds, seed=1000 + i)
                path = write_npy(Path(tmp) / f"{cond}{i}.npy", spec)
                res = analyse_flight(open_recording(path, cols), settings)
                total += len(spec.modes)
                cands += len(res.candidates)
                for m in res.modes:
                    true = min(spec.modes, key=lambda t: abs(t[0] - m.frequency_hz))
                    if abs(true[0] - m.frequency_hz) / true[0] > 0.02:
                        false += 1
                for fn, z, _p in spec.modes:
                    got = [m for m in res.modes if abs(m.frequency_hz - fn) / fn <= 0.02]
                    if not got:
                        continue
                    m = got[0]
                    found += 1
                    ferr.append(abs(m.frequency_hz - fn) / fn)
                    if m.damping is not None:
                        with_fig += 1
                        zerr.append((m.damping - z) / z)
                        covered += m.damping_low <= z <= m.damping_high
            za = np.abs(zerr) if zerr else np.array([np.nan])
            rows.append((cond, f"{found}/{total}", false, cands,
                         f"{100 * np.median(ferr):.2f} / {100 * np.max(ferr):.2f}" if ferr else "-",
                         f"{100 * np.median(za):.0f} / {100 * np.max(za):.0f}",
                         f"{100 * np.mean(np.abs(za) <= 0.25):.0f}",
                         f"{covered}/{with_fig} ({100 * covered / max(with_fig, 1):.0f} %)"))
    head = ("condition", "found", "false", "candidates", "f err % med/max",
            "|ζ err| % med/max", "ζ within 25 % (%)", "in 90 % interval")
    widths = [max(len(str(r[i])) for r in rows + [head]) for i in range(len(head))]
    for r in [head] + rows:
        print("  ".join(str(c).ljust(w) for c, w in zip(r, widths)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
