"""Regenerate every figure type from the shipped demo into docs/figures/.

    python docs/make_figures.py            # needs the [plot] extra (matplotlib)

Each figure is made by the command a user would run (through ``clashcheck``'s
own command line, in this process), from the invented demo builds in
``examples/`` and the demo recordings in ``examples/recordings/``:

- campbell-freestyle-5in.png   check --plot (5-inch demo: close modes 235/245/255 Hz, dwell zones)
- campbell-longrange-7in.png   plot (7-inch demo with a 2 kHz sensor: aliased orders)
- compare-freestyle-5in.png    compare --plot (the motor swap that makes it worse, stacked on an A4 page)
- flight.png, flight-time.png  modes --kind flight --plot (spectra against rotor speed, and time)
- tap.png                      modes --kind tap --plot (bolted 7-inch frame: friction decay)
- frame-heron-s5.png           frame --plot (mode shapes of the whole-frame model; drawn by report/frame.py)
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EX = ROOT / "examples"
REC = EX / "recordings"
OUT = ROOT / "docs" / "figures"

RUNS = [
    ["check", str(EX / "freestyle-5in.toml"), "--plot", str(OUT / "campbell-freestyle-5in.png")],
    ["plot", str(EX / "longrange-7in.toml"), "--plot", str(OUT / "campbell-longrange-7in.png")],
    ["compare", str(EX / "freestyle-5in.toml"), str(EX / "freestyle-5in-swap.toml"),
     "--plot", str(OUT / "compare-freestyle-5in.png")],
    ["modes", str(REC / "flight.csv"), "--kind", "flight", "--signal", "gx,gy,gz", "--rate", "1.6 kHz",
     "--resolution", "2 Hz", "--rpm-columns", "rpm", "--blades", "3", "--poles", "14",
     "--plot", str(OUT / "flight.png")],
    ["modes", str(REC / "tap-bolted.wav"), "--kind", "tap", "--plot", str(OUT / "tap.png")],
    ["frame", str(EX / "frame" / "heron-s5.toml"), "--plot", str(OUT / "frame-heron-s5.png")],
]


def _shrink(png: Path) -> None:
    """Store a line figure with a 256-colour palette (keeps the repository small; it uses few colours)."""
    from PIL import Image

    with Image.open(png) as im:
        small = im.convert("RGB").quantize(colors=256, method=Image.Quantize.FASTOCTREE, dither=Image.Dither.NONE)
    small.save(png, optimize=True)


def main() -> int:
    """Run every figure command; return 0 when all of them wrote their figure."""
    from click.testing import CliRunner

    from clashcheck.cli import main as cli

    OUT.mkdir(parents=True, exist_ok=True)
    runner = CliRunner()
    failed = 0
    for args in RUNS:
        res = runner.invoke(cli, [*args, "--force"])  # the figures here are this script's own
        if res.exit_code not in (0, 1):      # 1: the demo build clashes, as it is meant to
            print(f"failed ({res.exit_code}): clashcheck {' '.join(args)}\n{res.stderr}", file=sys.stderr)
            failed += 1
    for png in sorted(OUT.glob("*.png")):
        if not png.name.startswith("flight"):   # the spectra maps keep their full colour scale
            _shrink(png)
        print(f"{png.relative_to(ROOT)}  {png.stat().st_size // 1024} KB")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
