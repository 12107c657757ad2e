"""Benchmark: vectorised ``pick`` against a brute-force loop, in the same run.

The search covers about 10⁵ candidates (a Kv sweep × pole counts × cell
counts × catalog propellers) for the 5-inch example frame: 6 modes × all
order families (7 orders) × 3 pack states, with the example's 8 kHz sensor
and its anti-alias filter.

The brute-force reference takes a random 10³-candidate subset and, for each
candidate, builds it, runs the core engine's full ``check_build`` (exact clash
windows) and computes the peak weighted response with scalar arithmetic.
Its time is scaled up linearly to the full candidate count.  The bench also
counts disagreements between the two on the subset (expected: none).

Run from the repository root::

    python bench/bench_pick.py            # 100050 candidates, 1000 brute-force
    python bench/bench_pick.py --kv-count 334 --subset 200   # a quick run
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from clashcheck.analysis.pick import (  # noqa: E402
    candidate_build,
    pick,
    score_candidates,
    search_space,
)
from clashcheck.inputs.buildfile import load_build  # noqa: E402

sys.path.insert(0, str(ROOT / "tests"))
from _reference_scorer import reference_score  # noqa: E402  (the tests' reference, shared)


def brute_force(cand):
    """(flies, band clear, peak weighted response) of one candidate, one scalar at a time."""
    row = reference_score(cand)
    return row["flies"], row["band_clear"], row["response"]


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--build", default=str(ROOT / "examples" / "freestyle-5in.toml"))
    parser.add_argument("--kv-count", type=int, default=3335,
                        help="Kv values in the sweep (3335 → 100050 candidates)")
    parser.add_argument("--subset", type=int, default=1000, help="candidates in the brute-force loop")
    parser.add_argument("--seed", type=int, default=20261120)
    args = parser.parse_args(argv)

    build = load_build(args.build)
    low, high = 1200 / 60, 2867 / 60
    step = (high - low) / (args.kv_count - 1)
    space = search_space(build, kv_range=(low, high + 1e-9, step), poles=(12, 14), cells=(4, 5, 6),
                         props=["5in-2b", "5in-3b-low", "5in-3b-mid", "5in-3b-high", "5in-4b"])
    n = space.size
    orders = len(build.orders())
    print(f"build: {build.name}")
    print(f"candidates: {n} = {len(space.motors)} Kv × {len(space.poles)} pole counts × {len(space.cells)} cell "
          f"counts × {len(space.props)} props")
    print(f"against {len(build.modes)} modes × {orders} orders × {len(build.check.pack_states)} pack states, "
          f"sensor {build.sensor.sample_rate_hz:g} Hz" if build.sensor else "")

    t0 = time.perf_counter()
    result = pick(build, space, top=5)
    t_vec = time.perf_counter() - t0
    print(f"vectorised pick (score all, rank, full check of the top 5): {t_vec:.2f} s")

    rng = np.random.default_rng(args.seed)
    subset = np.sort(rng.choice(n, size=min(args.subset, n), replace=False))
    t0 = time.perf_counter()
    rows = [brute_force(candidate_build(build, space, int(i))) for i in subset]
    t_brute = time.perf_counter() - t0
    scaled = t_brute * n / subset.size
    print(f"brute-force loop over {subset.size} candidates: {t_brute:.2f} s "
          f"→ scaled to {n}: {scaled:.0f} s")

    scores = score_candidates(build, space)
    bad = 0
    for i, (flies, clear, response) in zip(subset, rows):
        same = (bool(scores.flies[i]) == flies and bool(scores.band_clear[i]) == clear
                and math.isclose(float(scores.response[i]), response, rel_tol=1e-9))
        bad += not same
    print(f"disagreements on the subset: {bad} of {subset.size}")
    from clashcheck.report.decide import pick_reasons

    print(f"best: {result.top[0].label} ({'; '.join(pick_reasons(result.top[0], result.hover_range))})")
    print(f"speedup: {scaled / t_vec:.0f}x (target >= 50x)")
    return 0 if bad == 0 else 1


if __name__ == "__main__":
    raise SystemExit(main())
