"""Long fuzz of the recording readers, modes files and build files (issue 12).

Runs the cases of ``tests/test_fuzz_recordings.py`` (same seeds, same
mutations, same command lines) for N minutes, drawn from a seeded PRNG, and
prints counts by outcome.  Each case runs in this process under a time limit
(``--limit``, 60 s by default); a case past it counts as a ``hang``.  Python
warnings are errors, as in the test suite, so a numeric overflow on a
mutated file counts as a traceback.

Usage::

    python bench/fuzz.py --minutes 10 [--seed 1] [--limit 60] [--show 5]

It prints, at the end: cases run, counts per outcome, the slowest case, the
peak resident memory of the process, and the first ``--show`` failures with
their mutations.  Exit 1 when any traceback, unclear message or hang was seen.
"""

from __future__ import annotations

import argparse
import collections
import os
import random
import resource
import signal
import sys
import tempfile
import time
import traceback
import warnings
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from test_fuzz_recordings import GOOD, make_case, run_case  # noqa: E402


class _Hang(Exception):
    pass


def _alarm(signum, frame):
    raise _Hang()


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--limit", type=int, default=60, help="seconds per case before it counts as a hang")
    ap.add_argument("--show", type=int, default=5, help="failures to print in full")
    ap.add_argument("--cases", type=int, default=0, help="stop after this many cases (0: no limit)")
    args = ap.parse_args()

    os.environ.setdefault("CLASHCHECK_CACHE_DIR", tempfile.mkdtemp(prefix="clashcheck-fuzz-cache-"))
    os.environ["CLASHCHECK_WORKER"] = "off"
    warnings.simplefilter("error")
    signal.signal(signal.SIGALRM, _alarm)
    rng = random.Random(args.seed)
    counts: collections.Counter[str] = collections.Counter()
    by_kind: dict[str, collections.Counter[str]] = collections.defaultdict(collections.Counter)
    failures: list[tuple[str, str, object]] = []
    slowest = (0.0, "")
    end = time.monotonic() + 60.0 * args.minutes
    with tempfile.TemporaryDirectory(prefix="clashcheck-fuzz-") as tmp:
        n = 0
        while time.monotonic() < end and (not args.cases or n < args.cases):
            n += 1
            case = make_case(rng)
            folder = Path(tmp, f"c{n % 50}")
            folder.mkdir(exist_ok=True)
            start = time.monotonic()
            signal.alarm(args.limit)
            try:
                outcome, detail = run_case(case, folder)
            except _Hang:
                outcome, detail = "hang", f"over {args.limit} s"
            except Exception as exc:  # the harness itself, e.g. an alarm inside click's runner
                outcome, detail = "traceback", "".join(traceback.format_exception_only(exc)).strip()
            finally:
                signal.alarm(0)
            took = time.monotonic() - start
            if took > slowest[0]:
                slowest = (took, f"{case.kind} {case.mutations} {case.options}")
            counts[outcome] += 1
            by_kind[case.kind][outcome] += 1
            if outcome not in GOOD:
                failures.append((outcome, detail, (case.kind, case.mutations, case.options)))
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"fuzz: {n} cases in {args.minutes:g} min (seed {args.seed}, limit {args.limit} s per case)")
    for outcome in ("result", "refused", "traceback", "unclear", "hang"):
        print(f"  {outcome:10s} {counts.get(outcome, 0)}")
    print("by kind:")
    for kind in sorted(by_kind):
        parts = ", ".join(f"{k} {v}" for k, v in sorted(by_kind[kind].items()))
        print(f"  {kind:11s} {parts}")
    print(f"slowest case: {slowest[0]:.2f} s ({slowest[1][:160]})")
    print(f"peak resident memory of the process: {peak_mb:.0f} MB")
    for outcome, detail, what in failures[: args.show]:
        print(f"FAIL {outcome}: {detail}\n     case: {what}")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
