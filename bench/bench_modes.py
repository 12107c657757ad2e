"""Bench: `clashcheck modes` on long flight recordings (issue 3 §8).

Targets, as ratios against baselines measured in the same run:

- **Speed.** End-to-end `clashcheck modes` (a subprocess) on a 10-minute,
  8 kHz, 3-axis CSV flight recording with throttle (about 170 MB) takes at most
  2× the time of `pandas.read_csv` loading the same file (also a subprocess,
  including its import).
- **Memory.** Peak RSS at most 400 MB, and the 20-minute file peaks within
  10 % of the 10-minute one (the analysis streams in blocks).  A long recording
  streams in a second process (``clashcheck.identify.worker``), so the figure
  is the peak of the *sum* of both processes' resident sets, sampled every
  2 ms (shared library pages count twice, so it errs high); each process's own
  peak (``ru_maxrss``) is printed beside it.
- **Wiring.** `clashcheck check` does not import scipy (or pandas); `modes` may.

The run also prints what the imports alone cost (click, numpy, pandas, scipy),
as a ratio to the same baseline: scipy.signal's import is about one baseline by
itself on the target machine, so the speed target leaves little for the work.

Run from the repository root with the project installed:

    python bench/bench_modes.py [--runs 3] [--keep]

The recordings are generated into bench/_data/ (gitignored) on the first run
and reused afterwards.  Bench files are not tests and CI does not run them.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DATA = ROOT / "bench" / "_data"
BUILD = ROOT / "examples" / "freestyle-5in.toml"
FS = 8000.0

#: Runs one command in-process and writes its own and its children's peak RSS [KiB].
_RSS = (
    "import resource, sys\n"
    "from clashcheck.cli import main\n"
    "try:\n"
    "    main(sys.argv[2:], standalone_mode=False)\n"
    "finally:\n"
    "    with open(sys.argv[1], 'w') as fh:\n"
    "        fh.write(f'{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss} '\n"
    "                 f'{resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss}')\n"
)


def make_recording(minutes: float) -> Path:
    """A synthetic flight CSV (t, gx, gy, gz, throttle) of the given length."""
    from clashcheck.identify.synth import (
        SynthMode,
        SynthOrder,
        flight_blocks,
        step_throttle,
        write_flight_csv,
    )

    path = DATA / f"flight_{minutes:g}min.csv"
    if path.exists():
        return path
    DATA.mkdir(parents=True, exist_ok=True)
    rotor = _rotor_of_throttle()
    modes = [SynthMode(172.0, 0.022, (0.3, 1.0, 0.2)), SynthMode(186.0, 0.03, (1.0, 0.3, 0.2)),
             SynthMode(305.0, 0.035, (0.2, 0.2, 1.0)), SynthMode(420.0, 0.04, (0.6, 0.6, 0.3)),
             SynthMode(560.0, 0.05, (0.5, 0.5, 0.5))]
    orders = [SynthOrder(1, (3.0, 3.0, 1.0)), SynthOrder(2, (1.0, 1.0, 0.4)), SynthOrder(3, (6.0, 5.0, 2.0)),
              SynthOrder(6, (1.5, 1.5, 0.6)), SynthOrder(7, (0.8, 0.8, 0.8))]
    t0 = time.perf_counter()
    blocks = flight_blocks(modes, orders, FS, minutes * 60.0, throttle=step_throttle(dwell_s=8.0, ramp_s=2.0),
                           rotor_hz=rotor, forcing_rms=6.0, noise_rms=0.1, seed=1, block_rows=1 << 18)
    write_flight_csv(path, blocks, rpm_column=None)
    print(f"generated {path.name}: {path.stat().st_size / 1e6:.0f} MB in {time.perf_counter() - t0:.0f} s")
    return path


def _rotor_of_throttle():
    import numpy as np

    from clashcheck.inputs.buildfile import load_build
    from clashcheck.model.drive import Drive

    drive = Drive.from_build(load_build(BUILD))
    return lambda thr: np.asarray(drive.rotor_hz(np.asarray(thr), "nominal"), dtype=float)


def modes_cmd(path: Path) -> list[str]:
    return [sys.executable, "-m", "clashcheck", "modes", str(path), "--kind", "flight",
            "--signal", "gx,gy,gz", "--time-column", "t", "--throttle-column", "throttle",
            "--build", str(BUILD), "--format", "json", "--quiet"]


def read_csv_cmd(path: Path) -> list[str]:
    return [sys.executable, "-c", f"import pandas; pandas.read_csv({str(path)!r})"]


def _once(cmd: list[str], env: dict | None = None) -> float:
    t0 = time.perf_counter()
    subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True, env=env)
    return time.perf_counter() - t0


def wall(cmd: list[str], runs: int, env: dict | None = None) -> float:
    """Median wall time [s] of ``runs`` runs."""
    return statistics.median(_once(cmd, env) for _ in range(runs))


def interleaved(jobs: list[tuple[list[str], dict | None]], runs: int) -> list[float]:
    """Median wall times [s] of several commands run in turn, round after round,
    so a slow spell of the machine falls on all of them alike."""
    times: list[list[float]] = [[] for _ in jobs]
    for _ in range(runs):
        for k, (cmd, env) in enumerate(jobs):
            times[k].append(_once(cmd, env))
    return [statistics.median(t) for t in times]


def _rss_kib(pid: int) -> int:
    try:
        with open(f"/proc/{pid}/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1])
    except OSError:
        pass
    return 0


def _tree(pid: int) -> list[int]:
    """The process and its descendants (Linux /proc)."""
    out, todo = [], [pid]
    while todo:
        p = todo.pop()
        out.append(p)
        try:
            with open(f"/proc/{p}/task/{p}/children", encoding="ascii") as fh:
                todo.extend(int(c) for c in fh.read().split())
        except OSError:
            pass
    return out


def peak_rss_mb(cmd: list[str]) -> float:
    """Peak RSS [MB] of a plain command (ru_maxrss of the child)."""
    code = ("import resource, subprocess, sys\n"
            "subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, check=True)\n"
            "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)\n")
    out = subprocess.run([sys.executable, "-c", code, *cmd], capture_output=True, text=True, check=True)
    return int(out.stdout.strip()) / 1024.0  # ru_maxrss is in KiB on Linux


def modes_rss_mb(path: Path) -> tuple[float, float, float]:
    """`clashcheck modes` memory [MB]: sampled peak of the process tree's summed RSS,
    the main process's own peak and its child's peak."""
    import tempfile

    with tempfile.TemporaryDirectory() as tmp:
        report = os.path.join(tmp, "rss")
        args = modes_cmd(path)[3:]  # without "python -m clashcheck"
        proc = subprocess.Popen([sys.executable, "-c", _RSS, report, *args],
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        peak = 0
        while proc.poll() is None:
            peak = max(peak, sum(_rss_kib(p) for p in _tree(proc.pid)))
            time.sleep(0.002)
        if proc.returncode != 0:
            raise SystemExit(f"clashcheck modes failed with exit code {proc.returncode}")
        with open(report, encoding="ascii") as fh:
            own, child = (int(v) for v in fh.read().split())
    return peak / 1024.0, own / 1024.0, child / 1024.0


def imports(args: list[str]) -> tuple[bool, bool]:
    code = ("import sys\nfrom clashcheck.cli import main\ntry:\n    main(sys.argv[1:], standalone_mode=False)\n"
            "except SystemExit:\n    pass\nprint('scipy' in sys.modules, 'pandas' in sys.modules)\n")
    out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, check=False)
    last = out.stdout.strip().splitlines()[-1].split()
    return last[0] == "True", last[1] == "True"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3, help="timed runs of each command (median)")
    parser.add_argument("--keep", action="store_true", help="keep the generated recordings")
    args = parser.parse_args()
    ten = make_recording(10)
    twenty = make_recording(20)
    # warm the page cache and the unit cache once
    subprocess.run(read_csv_cmd(ten), check=True)
    subprocess.run(modes_cmd(ten), stdout=subprocess.DEVNULL, check=True)

    one = dict(os.environ, CLASHCHECK_WORKER="off")
    t_read, t_modes, t_one = interleaved([(read_csv_cmd(ten), None), (modes_cmd(ten), None),
                                          (modes_cmd(ten), one)], args.runs)
    ratio = t_modes / t_read
    print(f"10-minute CSV ({ten.stat().st_size / 1e6:.0f} MB), median of {args.runs}, interleaved:")
    print(f"  pandas.read_csv (subprocess, with import)  {t_read:6.2f} s   baseline")
    print(f"  clashcheck modes (end to end)             {t_modes:6.2f} s   {ratio:.2f}× baseline "
          f"(target ≤ 2×: {'met' if ratio <= 2 else 'NOT met'})")
    print(f"  ... in one process (CLASHCHECK_WORKER=off) {t_one:6.2f} s   {t_one / t_read:.2f}× baseline")

    # where the time goes: what a process pays before it reads a byte
    t_imports = wall([sys.executable, "-c", "import click, numpy, pandas, scipy.signal, scipy.ndimage, "
                      "scipy.optimize"], args.runs)
    t_scipy = wall([sys.executable, "-c", "import scipy.signal, scipy.ndimage, scipy.optimize"], args.runs)
    print(f"  imports alone (click, numpy, pandas, scipy) {t_imports:6.2f} s   {t_imports / t_read:.2f}× baseline")
    print(f"  scipy.signal/ndimage/optimize import alone  {t_scipy:6.2f} s   {t_scipy / t_read:.2f}× baseline")

    rss_read = peak_rss_mb(read_csv_cmd(ten))
    rss10, own10, child10 = modes_rss_mb(ten)
    rss20, own20, child20 = modes_rss_mb(twenty)
    growth = rss20 / rss10
    print("peak RSS:")
    print(f"  pandas.read_csv, 10 min                    {rss_read:6.0f} MB")
    print(f"  clashcheck modes, 10 min (both processes)  {rss10:6.0f} MB   "
          f"(target ≤ 400 MB: {'met' if rss10 <= 400 else 'NOT met'}); "
          f"main {own10:.0f} MB, reader {child10:.0f} MB on their own")
    print(f"  clashcheck modes, 20 min (both processes)  {rss20:6.0f} MB   {growth:.3f}× the 10-minute "
          f"peak (target ≤ 1.10×: {'met' if growth <= 1.10 else 'NOT met'}); "
          f"main {own20:.0f} MB, reader {child20:.0f} MB")

    check_scipy, check_pandas = imports(["check", str(BUILD)])
    imports(["check", str(BUILD)])  # a first run may have filled the unit cache
    check_scipy, check_pandas = imports(["check", str(BUILD)])
    modes_scipy, modes_pandas = imports(["modes", str(ROOT / "examples" / "recordings" / "tap.wav"),
                                         "--kind", "tap"])
    print("imports:")
    print(f"  clashcheck check: scipy {'yes' if check_scipy else 'no'}, pandas {'yes' if check_pandas else 'no'}"
          f"   (target: neither: {'met' if not (check_scipy or check_pandas) else 'NOT met'})")
    print(f"  clashcheck modes (tap WAV): scipy {'yes' if modes_scipy else 'no'}, "
          f"pandas {'yes' if modes_pandas else 'no'}")
    if not args.keep:
        for p in (ten, twenty):
            os.unlink(p)
    ok = ratio <= 2 and rss10 <= 400 and growth <= 1.10 and not check_scipy
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
