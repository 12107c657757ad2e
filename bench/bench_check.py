"""Bench: whole-process wall time of `clashcheck check` on the demo build.

Target (issue 2 §9): the median of at least 5 runs is at most 3× the median
of `python -c "import numpy"`, measured in the same run, and the check does
not import scipy or matplotlib.

Run from the repository root with the project installed:

    python bench/bench_check.py [--runs 9]

The unit-conversion cache is warmed once first (a first run ever imports pint
to fill it), so the figures are for the normal, warm case; the cold figure is
printed too.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "examples" / "freestyle-5in.toml"


def _time(cmd: list[str], env: dict[str, str], runs: int) -> list[float]:
    out = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
        out.append(time.perf_counter() - t0)
    return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=9)
    args = ap.parse_args()
    runs = max(5, args.runs)
    cache = tempfile.mkdtemp(prefix="clashcheck-bench-")
    env = dict(os.environ, CLASHCHECK_CACHE_DIR=cache)
    check = [sys.executable, "-m", "clashcheck", "check", str(DEMO), "--fail-on", "never"]

    cold = _time(check, env, 1)[0]
    baseline = _time([sys.executable, "-c", "import numpy"], env, runs)
    warm = _time(check, env, runs)

    probe = (
        "import sys, runpy; sys.argv = ['clashcheck', 'check', %r, '--fail-on', 'never'];\n"
        "try:\n    runpy.run_module('clashcheck', run_name='__main__')\n"
        "except SystemExit:\n    pass\n"
        "heavy = sorted(m for m in ('scipy', 'matplotlib', 'pint', 'pandas') if m in sys.modules)\n"
        "print(','.join(heavy), file=sys.stderr)\n" % str(DEMO)
    )
    res = subprocess.run([sys.executable, "-c", probe], env=env, capture_output=True, text=True)
    heavy = res.stderr.strip().splitlines()[-1] if res.stderr.strip() else ""

    b, w = statistics.median(baseline), statistics.median(warm)
    print(f"python -c 'import numpy'  median {b * 1000:7.1f} ms over {runs} runs (baseline 1.00)")
    print(f"clashcheck check (warm)   median {w * 1000:7.1f} ms over {runs} runs  ratio {w / b:5.2f}  target <= 3.00")
    print(f"clashcheck check (cold)   one run {cold * 1000:7.1f} ms           ratio {cold / b:5.2f}  (fills the unit cache)")
    print(f"heavy modules imported by check: {heavy or 'none'}")
    ok = w / b <= 3.0 and not ({"scipy", "matplotlib"} & set(heavy.split(",")))
    print("PASS" if ok else "FAIL")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
