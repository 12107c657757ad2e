"""Make the demo recordings of the invented demo frame (catalog frame 'freestyle-5in-a').

    python examples/make_recordings.py            # writes examples/recordings/tap.wav, flight.csv
    python examples/make_recordings.py --out DIR

The recordings are synthetic (clashcheck.identify.synth): single-degree-of-
freedom resonators with the catalog frame's invented modal figures, motor-order
lines that follow the demo build's drive model, sensor noise and quantisation.
They are demo data, never test references.  Run with a fixed seed, so the files
come out the same each time.

- tap.wav: 8 kHz, mono, 16-bit, six taps two seconds apart (props off!).
- tap-bolted.wav, tap-pressnut.wav: an invented 7-inch frame tapped at full, half and
  quarter strength, before and after its arm clamps changed from through-bolts to
  press nuts (the arm flap mode loses most of its friction damping).
- flight.csv: 1.6 kHz gyro (deg/s) for 20 s, throttle stepping through six
  levels; columns gx, gy, gz, throttle, rpm (no time column: the rate is 1.6 kHz).
"""

from __future__ import annotations

import argparse
import tomllib
from pathlib import Path

import numpy as np

from clashcheck.identify.synth import (
    SynthMode,
    SynthOrder,
    flight_blocks,
    step_throttle,
    tap_signal,
    write_flight_csv,
    write_tap_wav,
)

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
FRAME_ID = "freestyle-5in-a"
BUILD = HERE / "freestyle-5in.toml"
#: How each mode's axis shows on the three gyro axes (roll, pitch, yaw): invented.
AXIS_GAINS = {"roll": (1.0, 0.3, 0.2), "pitch": (0.3, 1.0, 0.2), "yaw": (0.2, 0.2, 1.0),
              "any": (0.6, 0.6, 0.4)}


def frame_modes() -> list[tuple[float, float, str]]:
    """(frequency Hz, damping, axis) of the invented catalog frame."""
    data = tomllib.loads((REPO / "clashcheck" / "catalogs" / "frames.toml").read_text(encoding="utf-8"))
    frame = next(f for f in data["frame"] if f["id"] == FRAME_ID)
    return [(float(m["frequency"].split()[0]), float(m["damping"]), m.get("axis", "any"))
            for m in frame["modes"]]


def rotor_of_throttle():
    """The demo build's drive model (nominal pack), or a stand-in if it cannot load."""
    try:
        from clashcheck.inputs.buildfile import load_build
        from clashcheck.model.drive import Drive

        drive = Drive.from_build(load_build(BUILD))
        return lambda thr: np.asarray(drive.rotor_hz(np.asarray(thr), "nominal"), dtype=float)
    except Exception:  # noqa: BLE001 - a demo script: fall back and say so
        print("note: the demo build did not load; using rotor = 20 Hz + 380 Hz × throttle")
        return lambda thr: 20.0 + 380.0 * np.asarray(thr)


def make_tap(path: Path) -> None:
    modes = [SynthMode(f, z, (1.0 if axis != "yaw" else 0.6,)) for f, z, axis in frame_modes()]
    write_tap_wav(path, tap_signal(modes, 8000.0, impacts=6, interval_s=2.0, noise_rms=2e-4, seed=11),
                  8000.0)


#: An invented 7-inch frame whose arms are clamped to the plates (issue 14's demo):
#: (frequency Hz, viscous ζ, friction drop per cycle as a fraction of a full tap's amplitude).
JOINT_BEFORE = [(150.0, 0.004, 0.01), (310.0, 0.01, 0.0), (520.0, 0.02, 0.0)]   # through-bolts
JOINT_AFTER = [(158.0, 0.004, 0.002), (312.0, 0.01, 0.0), (522.0, 0.02, 0.0)]   # press nuts, threadlocker


def make_joint_pair(before: Path, after: Path) -> None:
    """Graded taps (full, half, quarter strength) before and after the joint change."""
    gains = (1.0, 0.7, 0.5)
    for path, figures, seed in ((before, JOINT_BEFORE, 21), (after, JOINT_AFTER, 22)):
        modes = [SynthMode(f, z, (g,), friction_per_cycle=d) for (f, z, d), g in zip(figures, gains)]
        write_tap_wav(path, tap_signal(modes, 8000.0, impacts=6, interval_s=1.8, noise_rms=2e-4,
                                       amplitude=0.6, strengths=(1.0, 0.5, 0.25), seed=seed), 8000.0)


def make_flight(path: Path) -> None:
    modes = [SynthMode(f, z, AXIS_GAINS.get(axis, AXIS_GAINS["any"])) for f, z, axis in frame_modes()]
    # invented line strengths (deg/s per axis): blade pass strongest, then 1× rotor
    orders = [SynthOrder(1, (3.0, 3.0, 1.0)), SynthOrder(2, (1.0, 1.0, 0.4)),
              SynthOrder(3, (6.0, 5.0, 2.0)), SynthOrder(6, (1.5, 1.5, 0.6)),
              SynthOrder(7, (0.8, 0.8, 0.8))]
    blocks = flight_blocks(modes, orders, 1600.0, 20.0,
                           throttle=step_throttle((0.25, 0.4, 0.55, 0.7, 0.5, 0.32), 2.6, 0.7),
                           rotor_hz=rotor_of_throttle(), forcing_rms=6.0, noise_rms=0.1,
                           full_scale=2000.0, bits=16, seed=12)
    # no time column (the rate is stated: --rate "1.6 kHz") and 2 decimals keep it under 1 MB
    write_flight_csv(path, blocks, time_column=None, signal_format="%.2f")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=HERE / "recordings")
    parser.add_argument("--force", action="store_true",
                        help="replace recordings already there (this script's own outputs)")
    args = parser.parse_args()
    args.out.mkdir(parents=True, exist_ok=True)
    names = ("tap.wav", "flight.csv", "tap-bolted.wav", "tap-pressnut.wav")
    if args.force:
        for name in names:
            (args.out / name).unlink(missing_ok=True)
    make_tap(args.out / "tap.wav")
    make_flight(args.out / "flight.csv")
    make_joint_pair(args.out / "tap-bolted.wav", args.out / "tap-pressnut.wav")
    for name in names:
        p = args.out / name
        print(f"wrote {p} ({p.stat().st_size / 1e3:.0f} kB)")


if __name__ == "__main__":
    main()
