"""Bench: `clashcheck fleet` on a fleet of short recordings (issue 16 §5).

Prints, for a generated fleet of 100 aircraft × 10 short tap tests (1,000
recordings):

- **Throughput** (recordings analysed per second, wall time of the analysis
  phase, fresh store each time) serially, with 2 local processes (``--jobs
  2``) and on a 2-worker Dask ``LocalCluster``; the ratio of each to serial,
  measured in the same run, interleaved over ``--runs`` rounds.  Target: at
  least 1.7× serial with 2 workers on a 2-core machine.
- **Per-task overhead:** wall time × workers − the analyses' own time, per
  recording (what scheduling, pickling, storing and the coordinator cost).
- **Peak memory** of the coordinating process (``ru_maxrss``) for 250 and
  1,000 recordings: flat in the number of recordings because at most
  4 tasks per worker are in flight and records are small.

Each configuration runs in a fresh Python process (so peak memory is its own);
worker start-up (process spawn, imports) is inside the measured wall time, as
a user would see it.  The load average is printed: other work on the machine
shows in every figure.

    python bench/bench_fleet.py [--runs 2] [--recordings 1000] [--ceiling]

It ends with the machine's own ceiling: 120 of the files analysed in one
process, then split over 2 plain processes (no fleet code).  Where that is
not near 2×, no scheduler can do better on the machine at that moment.

Recordings go to bench/_data/fleet/ (gitignored) and are reused.  Bench files
are not tests and CI does not run them.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DATA = ROOT / "bench" / "_data" / "fleet"
RATE_HZ = 4000.0
PER_AIRCRAFT = 10

BUILD = """name = "bench quad"
[frame]
motors = 4
mass = "700 g"
[[frame.modes]]
name = "arm flap"
frequency = "180 Hz"
damping = 0.025
[motor]
kv = "1950 rpm/V"
poles = 14
slots = 12
[prop]
diameter = "5.1 in"
blades = 3
[battery]
cells = 6
"""


def make_fleet(n: int) -> Path:
    """A manifest of ``n`` short tap tests (generated once, reused)."""
    import numpy as np

    from clashcheck.identify.synth import SynthMode, tap_signal, write_tap_wav

    DATA.mkdir(parents=True, exist_ok=True)
    (DATA / "quad.toml").write_text(BUILD, encoding="utf-8")
    lines = []
    for i in range(n):
        ac, k = divmod(i, PER_AIRCRAFT)
        path = DATA / f"a{ac:04d}-{k:02d}.wav"
        if not path.exists():
            rng = np.random.default_rng(i)
            modes = [SynthMode(f * (1 + 0.003 * rng.standard_normal()), z, (g,))
                     for f, z, g in ((180.0, 0.025, 1.0), (290.0, 0.03, 0.8), (455.0, 0.035, 0.6))]
            write_tap_wav(path, tap_signal(modes, RATE_HZ, impacts=3, interval_s=0.6, lead_s=0.1,
                                           noise_rms=3e-4, seed=i), RATE_HZ)
        if k == 0:
            lines += ["[[aircraft]]", f'id = "A{ac:04d}"', 'build = "quad.toml"']
        lines += ["[[aircraft.recordings]]", f'path = "{path.name}"', f"date = 2026-09-{k + 1:02d}",
                  'kind = "tap"', 'max_frequency = "1 kHz"']
    manifest = DATA / f"fleet-{n}.toml"
    manifest.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return manifest


def child(manifest: str, mode: str, store: str) -> None:
    """One configuration in this process; prints a JSON line of figures."""
    import resource

    from clashcheck.fleet.pipeline import analyse_fleet, plan_fleet
    from clashcheck.fleet.store import Store
    from clashcheck.inputs.manifest import load_manifest

    fleet = load_manifest(manifest)
    busy: list[float] = []
    arrivals: list[float] = []

    def tally(record) -> None:
        busy.append(record.elapsed_s)
        arrivals.append(time.perf_counter())

    with Store(store) as st:
        plan = plan_fleet(fleet, st)
        kw: dict = {"serial": {}, "jobs2": {"jobs": 2}, "cluster2": {"jobs": 2, "scheduler": "local"}}[mode]
        t0 = time.perf_counter()
        run = analyse_fleet(plan, st, on_record=tally, **kw)
        wall = time.perf_counter() - t0
    workers = 1 if mode == "serial" else 2
    # steady state: from the first record's arrival to the last (worker start-up excluded)
    steady = arrivals[-1] - arrivals[0]
    print(json.dumps({
        "mode": mode, "n": run.analysed, "failed": run.failed, "wall_s": wall,
        "startup_s": arrivals[0] - t0, "steady_per_s": (len(arrivals) - 1) / steady,
        "busy_ms": 1e3 * sum(busy) / len(busy),
        "overhead_ms": 1e3 * (steady * workers - sum(busy[1:])) / max(len(busy) - 1, 1),
        "rss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
    }))


def _analyse_files(files: list[str]) -> tuple[float, float]:
    """Analyse ``files`` in this process: (wall s, CPU s) after one warm-up analysis."""
    from clashcheck.identify import analyse_tap, open_recording
    from clashcheck.identify.options import recording_plan

    plan = recording_plan("tap", max_frequency=1000.0)
    analyse_tap(open_recording(files[0], plan.columns), plan.settings)
    t, c = time.perf_counter(), time.process_time()
    for f in files:
        analyse_tap(open_recording(f, plan.columns), plan.settings)
    return time.perf_counter() - t, time.process_time() - c


def ceiling(n: int = 120) -> None:
    """What 2 plain processes give on this machine now, without the fleet code (the ceiling)."""
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    files = sorted(str(p) for p in DATA.glob("a*.wav"))[:n]
    wall, cpu = _analyse_files(files)
    print(f"ceiling: {n} files in 1 process: {wall:.1f} s (CPU {1e3 * cpu / n:.0f} ms per file)")
    with ProcessPoolExecutor(2, mp_context=multiprocessing.get_context("spawn")) as ex:
        ex.submit(time.sleep, 0).result()
        t0 = time.perf_counter()
        parts = list(ex.map(_analyse_files, [files[: n // 2], files[n // 2:]]))
        both = time.perf_counter() - t0
    print(f"ceiling: {n} files in 2 plain processes: {both:.1f} s ({wall / both:.2f}× one process; "
          f"CPU {1e3 * sum(c for _, c in parts) / n:.0f} ms per file); load average "
          f"{' '.join(f'{x:.1f}' for x in os.getloadavg())}")


def run_child(manifest: Path, mode: str) -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        out = subprocess.run([sys.executable, __file__, "--child", mode, str(manifest), str(Path(tmp) / "s.sqlite")],
                             check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=2)
    parser.add_argument("--recordings", type=int, default=1000)
    parser.add_argument("--ceiling", action="store_true",
                        help="only measure 2 plain processes against 1 on 120 of the files")
    parser.add_argument("--child", nargs=3, metavar=("MODE", "MANIFEST", "STORE"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        mode, manifest, store = args.child
        child(manifest, mode, store)
        return
    n = args.recordings
    t0 = time.perf_counter()
    big, small = make_fleet(n), make_fleet(n // 4)
    if args.ceiling:
        ceiling()
        return
    print(f"fleet: {n} tap tests of {RATE_HZ / 1e3:.0f} kHz, ~1.9 s each, made/reused in "
          f"{time.perf_counter() - t0:.1f} s; cpus {os.cpu_count()}; load average before: "
          f"{' '.join(f'{x:.1f}' for x in os.getloadavg())}")
    modes = ("serial", "jobs2", "cluster2")
    results: dict[str, list[dict]] = {m: [] for m in modes}
    for r in range(args.runs):  # interleaved: serial, jobs 2, cluster, serial, ...
        for m in modes:
            res = run_child(big, m)
            results[m].append(res)
            print(f"  run {r + 1} {m:9s} {res['n']} recordings in {res['wall_s']:.1f} s "
                  f"(start-up {res['startup_s']:.1f} s), failed {res['failed']}")
    base = statistics.median(x["n"] / x["wall_s"] for x in results["serial"])
    base_steady = statistics.median(x["steady_per_s"] for x in results["serial"])
    print(f"\n{'mode':9s} {'rec/s':>7s} {'×serial':>8s} {'steady rec/s':>13s} {'×serial':>8s} "
          f"{'start-up s':>11s} {'analysis ms':>12s} {'overhead ms/task':>17s} {'peak RSS MiB':>13s}")
    for m in modes:
        med = lambda key: statistics.median(x[key] for x in results[m])  # noqa: E731
        thr = statistics.median(x["n"] / x["wall_s"] for x in results[m])
        rss = max(x["rss_mib"] for x in results[m])
        print(f"{m:9s} {thr:7.1f} {thr / base:8.2f} {med('steady_per_s'):13.1f} "
              f"{med('steady_per_s') / base_steady:8.2f} {med('startup_s'):11.1f} {med('busy_ms'):12.1f} "
              f"{med('overhead_ms'):17.1f} {rss:13.0f}")
    print(f"\npeak RSS of the coordinating process, {n // 4} vs {n} recordings:")
    for m in ("serial", "jobs2", "cluster2"):
        small_rss = run_child(small, m)["rss_mib"]
        big_rss = max(x["rss_mib"] for x in results[m])
        print(f"  {m:9s} {small_rss:6.0f} MiB vs {big_rss:6.0f} MiB ({big_rss / small_rss:.2f}×)")
    ceiling()
    print(f"load average after: {' '.join(f'{x:.1f}' for x in os.getloadavg())}")


if __name__ == "__main__":
    main()
