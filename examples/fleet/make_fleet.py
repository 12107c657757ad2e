"""Make the demo fleet's recordings (invented fleet: the Heronfield survey co-op's four quads).

    python examples/fleet/make_fleet.py          # writes examples/fleet/logs/<aircraft>/*.wav
    clashcheck fleet examples/fleet/fleet.toml    # flags WR-02 and WR-03, exit 1

Every recording is a synthetic tap test (clashcheck.identify.synth): the
frame's three modes (examples/fleet/builds/survey-quad.toml) rung by four
taps, with sensor noise and 16-bit quantisation.  Between recordings each
mode's frequency scatters by 0.3 % and its damping by 6 % (invented figures
standing in for temperature and pack state), with a fixed seed, so the files
come out the same each time.  Demo data only, never a test reference.

- WR-01: healthy, 12 tap tests.
- WR-02: a cracked arm: from the 10th test the arm flap mode is 7 % lower
  (a stiffness loss of about 13 %).
- WR-03: a joint that starts to slip: from the 10th test the arm flap mode's
  damping rises from 0.025 to 0.045 (the frequency drops by only 0.5 %).
- WR-04: healthy; arm 2 replaced after the 6th test (the new arm is 3 %
  stiffer), so its baseline starts again and it is still building it.

Tap tests are done with the propellers removed.
"""

from __future__ import annotations

import argparse
import datetime as dt
from pathlib import Path

import numpy as np

from clashcheck.identify.synth import SynthMode, tap_signal, write_tap_wav

HERE = Path(__file__).resolve().parent
RATE_HZ = 4000.0
#: (frequency Hz, damping) of the frame's modes: arm flap, arm torsion, top plate (invented).
MODES = ((172.0, 0.025), (265.0, 0.030), (410.0, 0.035))
TESTS = 12
FIRST_DAY = dt.date(2026, 9, 1)


def figures(aircraft: str, test: int) -> list[tuple[float, float]]:
    """The modes (f, ζ) of one aircraft at one test, with its change injected."""
    out = [list(m) for m in MODES]
    if aircraft == "WR-02" and test >= 9:
        out[0][0] *= 0.93
    if aircraft == "WR-03" and test >= 9:
        out[0][0] *= 0.995
        out[0][1] = 0.045
    if aircraft == "WR-04" and test >= 6:
        out[0][0] *= 1.03
    return [(f, z) for f, z in out]


def make(out_dir: Path) -> list[Path]:
    written = []
    for n, aircraft in enumerate(("WR-01", "WR-02", "WR-03", "WR-04")):
        rng = np.random.default_rng(100 + n)
        folder = out_dir / aircraft.lower()
        folder.mkdir(parents=True, exist_ok=True)
        for test in range(TESTS):
            day = FIRST_DAY + dt.timedelta(days=7 * test)
            modes = [SynthMode(f * (1 + 0.003 * rng.standard_normal()),
                               z * float(np.exp(0.06 * rng.standard_normal())), (g,))
                     for (f, z), g in zip(figures(aircraft, test), (1.0, 0.8, 0.6))]
            samples = tap_signal(modes, RATE_HZ, impacts=4, interval_s=0.8, lead_s=0.2, noise_rms=2e-4,
                                 seed=1000 * n + test)
            path = folder / f"{day.isoformat()}-tap.wav"
            write_tap_wav(path, samples, RATE_HZ)
            written.append(path)
    return written


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=HERE / "logs")
    args = parser.parse_args()
    files = make(args.out)
    print(f"wrote {len(files)} recordings under {args.out} "
          f"({sum(p.stat().st_size for p in files) / 1e6:.1f} MB)")


if __name__ == "__main__":
    main()
