"""Fuzz: recordings, modes files and build files through the commands (issue 12).

Each case starts from a small well-formed seed made here (CSV flight and tap
logs, WAV and ``.npy`` recordings, a modes file, a build file), applies a few
byte-level and structure-level mutations, runs the matching command in
process and sorts the end into one outcome:

- ``result``: exit 0 or 1;
- ``refused``: exit 2 with one short line on stderr;
- ``traceback``: any exception outside the clashcheck error family;
- ``unclear``: exit 2 with more than one line, or a line over 400 characters;
- ``hang``: the case ran past its time limit (``bench/fuzz.py`` only).

The test below runs a bounded number of cases under hypothesis; every case
must end in ``result`` or ``refused``.  ``bench/fuzz.py`` drives the same
:func:`make_case` and :func:`run_case` with a seeded PRNG for N minutes and
prints counts by outcome.
"""

from __future__ import annotations

import io
import os
import random
import struct
import wave
from dataclasses import dataclass
from functools import cache
from pathlib import Path

import numpy as np
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clashcheck.cli import main

#: Outcomes that pass.
GOOD = ("result", "refused")

_BUILD = """\
name = "fuzz quad"
[frame]
motors = 4
mass = "690 g"
[[frame.modes]]
name = "arm flap"
frequency = "186 Hz"
damping = 0.03
axis = "roll"
[[frame.modes]]
name = "plate"
frequency = "420 Hz"
[motor]
kv = "1950 rpm/V"
poles = 14
slots = 12
resistance = "45 mohm"
no_load_current = "1.1 A"
[prop]
diameter = "5.1 in"
blades = 3
thrust_coefficient = 0.12
power_coefficient = 0.06
[battery]
cells = 6
chemistry = "lipo"
[flight]
idle = "4 %"
cruise = "55 %"
"""

_MODES = """\
# a modes file as the modes command writes it
[[frame.modes]]
name = "mode 1"
frequency = "181.20 Hz"
damping = 0.021
damping_low = 0.015
damping_high = 0.03
axis = "roll"
confidence = 0.8
method = "half-power"

[[frame.modes]]
name = "mode 2"
frequency = "402.00 Hz"
damping_high = 0.01
axis = "any"

[[order_strengths]]
order = 3.0
family = "blade"
relative_strength = 0.7
"""


def _sdof_taps(fs: float, seconds: float, taps: int, rng: np.random.Generator) -> np.ndarray:
    """Decaying 180 Hz and 410 Hz rings after each tap, with noise (the test's own generator)."""
    n = int(fs * seconds)
    x = 0.003 * rng.standard_normal(n)
    t = np.arange(n) / fs
    for k in range(taps):
        t0 = (k + 0.5) * seconds / (taps + 0.5)
        on = t >= t0
        tau = t[on] - t0
        x[on] += 0.5 * np.exp(-2 * np.pi * 180 * 0.02 * tau) * np.sin(2 * np.pi * 180 * tau)
        x[on] += 0.3 * np.exp(-2 * np.pi * 410 * 0.015 * tau) * np.sin(2 * np.pi * 410 * tau)
    return x


def _flight(fs: float, seconds: float, rng: np.random.Generator) -> tuple[np.ndarray, ...]:
    n = int(fs * seconds)
    t = np.arange(n) / fs
    rotor = 120 + 40 * np.sin(2 * np.pi * 0.3 * t)  # Hz
    phase = 2 * np.pi * np.cumsum(rotor) / fs
    g = [np.sin(k * phase) * 0.2 + 0.05 * rng.standard_normal(n) for k in (1, 3, 2)]
    return t, g[0], g[1], g[2], rotor * 60


@cache
def seeds() -> dict[str, bytes]:
    """The well-formed seed files, by kind."""
    rng = np.random.default_rng(12)
    out: dict[str, bytes] = {}
    t, gx, gy, gz, rpm = _flight(1000.0, 3.0, rng)
    lines = ["t,gx,gy,gz,rpm"] + [f"{a:.4f},{b:.5f},{c:.5f},{d:.5f},{e:.1f}"
                                  for a, b, c, d, e in zip(t, gx, gy, gz, rpm)]
    out["csv_flight"] = ("\n".join(lines) + "\n").encode()
    x = _sdof_taps(4000.0, 1.2, 3, rng)
    tt = np.arange(x.size) / 4000.0
    out["csv_tap"] = ("t,ax\n" + "".join(f"{a:.5f},{b:.5f}\n" for a, b in zip(tt, x))).encode()
    buf = io.BytesIO()
    with wave.open(buf, "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(2)
        w.setframerate(8000)
        w.writeframes(np.round(_sdof_taps(8000.0, 1.2, 3, rng) * 20000).astype("<i2").tobytes())
    out["wav_tap"] = buf.getvalue()
    buf = io.BytesIO()
    np.save(buf, _sdof_taps(4000.0, 1.2, 3, rng)[:, None].astype(np.float32))
    out["npy_tap"] = buf.getvalue()
    rec = np.zeros(t.size, dtype=[("t", "<f8"), ("gx", "<f4"), ("gy", "<f4"), ("thr", "<f4")])
    rec["t"], rec["gx"], rec["gy"] = t, gx, gy
    rec["thr"] = 0.3 + 0.2 * np.sin(2 * np.pi * 0.3 * t)
    buf = io.BytesIO()
    np.save(buf, rec)
    out["npy_flight"] = buf.getvalue()
    out["modes_file"] = _MODES.encode()
    out["build_file"] = _BUILD.encode()
    return out


SUFFIX = {"csv_flight": ".csv", "csv_tap": ".csv", "wav_tap": ".wav", "npy_tap": ".npy",
          "npy_flight": ".npy", "modes_file": ".toml", "build_file": ".toml"}

ARGS = {
    "csv_flight": ["--kind", "flight", "--signal", "gx,gy,gz", "--time-column", "t",
                   "--rpm-columns", "rpm", "--blades", "3", "--resolution", "4 Hz"],
    "csv_tap": ["--kind", "tap", "--signal", "ax", "--time-column", "t"],
    "wav_tap": ["--kind", "tap"],
    "npy_tap": ["--kind", "tap", "--rate", "4 kHz"],
    "npy_flight": ["--kind", "flight", "--signal", "gx,gy", "--time-column", "t",
                   "--throttle-column", "thr", "--blades", "3", "--resolution", "4 Hz"],
}

ODD_OPTIONS = [
    ("--min-frequency", ["0.001 Hz", "20 Hz", "900 Hz", "5 kHz", "1e300 Hz", "-3 Hz"]),
    ("--max-frequency", ["25 Hz", "300 Hz", "1 MHz", "1e-300 Hz"]),
    ("--resolution", ["1e-6 Hz", "0.01 Hz", "0.5 Hz", "50 Hz", "1e9 Hz"]),
    ("--time-unit", ["ms", "us", "s", "min", "kg"]),
]

# ---------------------------------------------------------------- byte-level mutations
TOKENS = [b",", b";", b"\n", b"\r\n", b'"', b"\x00", b"\xef\xbb\xbf", b"nan", b"1e308", b"-",
          b",,,,,,", b"\xff\xfe", b"inf", b"0", b"  ", b"\t", b"=", b"[[", b"]]", b"#"]


def _flip(data: bytes, rng: random.Random) -> bytes:
    if not data:
        return data
    i = rng.randrange(len(data))
    return data[:i] + bytes([rng.randrange(256)]) + data[i + 1:]


def _insert(data: bytes, rng: random.Random) -> bytes:
    i = rng.randrange(len(data) + 1)
    return data[:i] + rng.choice(TOKENS) * rng.choice((1, 1, 2, 50)) + data[i:]


def _delete(data: bytes, rng: random.Random) -> bytes:
    if not data:
        return data
    i = rng.randrange(len(data))
    return data[:i] + data[i + rng.choice((1, 4, 40, 400)):]


def _truncate(data: bytes, rng: random.Random) -> bytes:
    return data[: rng.choice((0, 4, 12, 40, 44, 60, 128, len(data) // 2, max(len(data) - 3, 0)))]


def _duplicate(data: bytes, rng: random.Random) -> bytes:
    if not data:
        return data
    i = rng.randrange(len(data))
    j = min(len(data), i + rng.choice((8, 64, 512)))
    return data[:j] + data[i:j] + data[j:]


BYTE_MUTATIONS = (_flip, _insert, _delete, _truncate, _duplicate)

# ---------------------------------------------------------------- CSV structure


def _csv_lines(data: bytes) -> list[str]:
    return data.decode("utf-8", errors="replace").splitlines()


def _csv_join(lines: list[str]) -> bytes:
    return ("\n".join(lines) + "\n").encode("utf-8", errors="replace")


def _csv_quote_header(data, rng):
    lines = _csv_lines(data)
    lines[0] = ",".join(f'"{h}"' for h in lines[0].split(","))
    return _csv_join(lines)


def _csv_trailing(data, rng):
    lines = _csv_lines(data)
    start = 0 if rng.random() < 0.5 else 1
    return _csv_join(lines[:start] + [ln + "," for ln in lines[start:]])


def _csv_short_rows(data, rng):
    lines = _csv_lines(data)
    for k in range(1, len(lines)):
        if rng.random() < 0.02:
            lines[k] = lines[k].rsplit(",", 1)[0]
    return _csv_join(lines)


def _csv_long_row(data, rng):
    lines = _csv_lines(data)
    k = rng.randrange(len(lines))
    lines[k] += ",1" * rng.choice((1, 30, 5000, 200_000))
    return _csv_join(lines)


def _csv_round_time(data, rng):
    lines = _csv_lines(data)
    fmt = rng.choice(("%.3f", "%.6g", "%d", "%.1f", "%.2e"))
    scale = rng.choice((1.0, 1e3, 1e6, 100.0))
    out = [lines[0]]
    for ln in lines[1:]:
        head, _, rest = ln.partition(",")
        try:
            v = float(head) * scale + (95.0 if fmt == "%.6g" else 0.0)
            head = fmt % v
        except ValueError:
            pass
        out.append(head + "," + rest)
    return _csv_join(out)


def _csv_repeat_or_swap(data, rng):
    lines = _csv_lines(data)
    if len(lines) < 4:
        return data
    k = rng.randrange(1, len(lines) - 1)
    if rng.random() < 0.5:
        lines.insert(k, lines[k])
    else:
        lines[k], lines[k + 1] = lines[k + 1], lines[k]
    return _csv_join(lines)


def _csv_cells(data, rng):
    lines = _csv_lines(data)
    for _ in range(rng.choice((1, 5, 200))):
        k = rng.randrange(1, max(len(lines), 2)) if len(lines) > 1 else 0
        cells = lines[k].split(",")
        cells[rng.randrange(len(cells))] = rng.choice(("", "nan", "1e308", "-inf", "x", "1,2", '"3"'))
        lines[k] = ",".join(cells)
    return _csv_join(lines)


def _csv_header(data, rng):
    lines = _csv_lines(data)
    names = lines[0].split(",")
    pick = rng.randrange(5)
    if pick == 0:
        names[-1] = names[0]
    elif pick == 1:
        names[rng.randrange(len(names))] = ""
    elif pick == 2:
        names = names + [f"c{i}" for i in range(rng.choice((10, 3000, 20000)))]
    elif pick == 3:
        lines = ["\ufeff" + lines[0].replace(",", ";")] + [ln.replace(",", ";") for ln in lines[1:]]
        return _csv_join(lines)
    else:
        lines = lines[1:]  # no header
        return _csv_join(lines)
    lines[0] = ",".join(names)
    return _csv_join(lines)


def _csv_crlf_blank(data, rng):
    text = data.replace(b"\n", b"\r\n") if rng.random() < 0.5 else data.replace(b"\n", b"\n\n")
    return text


CSV_MUTATIONS = (_csv_quote_header, _csv_trailing, _csv_short_rows, _csv_long_row, _csv_round_time,
                 _csv_repeat_or_swap, _csv_cells, _csv_header, _csv_crlf_blank)

# ---------------------------------------------------------------- WAV structure


def _wav_field(data, rng):
    if len(data) < 44:
        return data
    b = bytearray(data)
    pick = rng.randrange(7)
    if pick == 0:
        b[22:24] = struct.pack("<H", 0)  # channels
    elif pick == 1:
        b[24:28] = struct.pack("<I", 0)  # rate
    elif pick == 2:
        b[34:36] = struct.pack("<H", rng.choice((8, 12, 4, 64)))  # bits
    elif pick == 3:
        b[36:40] = b"junk"  # no data chunk
    elif pick == 4:
        b[40:44] = struct.pack("<I", rng.choice((0xFFFFFFF0, 3, 0)))  # data size
    elif pick == 5:
        b[4:8] = struct.pack("<I", rng.choice((0, 4, 0xFFFFFFFF)))  # RIFF size
    else:
        b[20:22] = struct.pack("<H", rng.choice((3, 0xFFFE, 2, 0)))  # format tag
    return bytes(b)


def _wav_eight_bit(data, rng):
    buf = io.BytesIO()
    with wave.open(buf, "wb") as w:
        w.setnchannels(rng.choice((1, 2)))
        w.setsampwidth(1)
        w.setframerate(8000)
        w.writeframes((128 + 100 * np.sin(np.arange(8000) / 5.0)).astype(np.uint8).tobytes())
    return buf.getvalue()


WAV_MUTATIONS = (_wav_field, _wav_field, _wav_eight_bit)

# ---------------------------------------------------------------- .npy structure


def _npy_shape(data, rng):
    pick = rng.randrange(8)
    if pick == 0:
        arr = np.zeros((100, 0))
    elif pick == 1:
        arr = np.zeros((), dtype=[("t", "f8"), ("gx", "f8")])
    elif pick == 2:
        arr = np.zeros(100, dtype=[("t", "f8"), ("gx", "U4"), ("gy", "f4"), ("thr", "f4")])
    elif pick == 3:
        arr = np.zeros(100, dtype=[("t", "f8"), ("gx", "f4", (3,)), ("gy", "f4"), ("thr", "f4")])
    elif pick == 4:
        arr = np.zeros((4, 5, 6))
    elif pick == 5:
        arr = np.zeros((2, rng.choice((5000, 100_000))))
    elif pick == 6:
        arr = np.array([1 + 2j, 3j])
    else:
        arr = np.zeros((0, 2))
    buf = io.BytesIO()
    np.save(buf, arr)
    return buf.getvalue()


def _npy_header(data, rng):
    head, body = data[:128], data[128:]
    text = head.decode("latin-1")
    swaps = [("<f8", "|O"), ("<f4", "<U3"), ("False", "True"), ("(", "(0, "), ("'t'", "'tt'"),
             ("<f4", "<c8"), ("'descr'", "'dscr'"), ("}", "}}")]
    a, b = rng.choice(swaps)
    return text.replace(a, b, 1).encode("latin-1") + body


NPY_MUTATIONS = (_npy_shape, _npy_header)

# ---------------------------------------------------------------- TOML structure

TOML_LINES = [
    'frequency = "1e-308 Hz"', 'damping = 0.9', 'damping_low = 0.5', 'kv = "1e-300 rpm/V"',
    'resistance = "45 m\u2126"', 'mass = "690 gr"', 'frequency = "nan Hz"', 'name = "a\nb"',
    'frequency = "0 Hz"', 'damping = -1', 'frequency = "99999999 kHz"',
]


def _toml_line(data, rng):
    lines = data.decode("utf-8", errors="replace").splitlines()
    k = rng.randrange(len(lines) + 1)
    lines.insert(k, rng.choice(TOML_LINES))
    return ("\n".join(lines) + "\n").encode()


def _toml_many_modes(data, rng):
    n = rng.choice((3, 250, 3000))
    extra = "".join(f'\n[[frame.modes]]\nname = "m{i}"\nfrequency = "{50 + i * 0.5:.1f} Hz"\n'
                    for i in range(n))
    return data + extra.encode()


def _toml_bom(data, rng):
    return b"\xef\xbb\xbf" + data


TOML_MUTATIONS = (_toml_line, _toml_many_modes, _toml_bom)

STRUCTURE = {"csv_flight": CSV_MUTATIONS, "csv_tap": CSV_MUTATIONS, "wav_tap": WAV_MUTATIONS,
             "npy_tap": NPY_MUTATIONS, "npy_flight": NPY_MUTATIONS, "modes_file": TOML_MUTATIONS,
             "build_file": TOML_MUTATIONS}


@dataclass
class Case:
    """One fuzz case: a file and the command line that reads it."""

    kind: str
    data: bytes
    options: list[str]
    mutations: list[str]


def make_case(rng: random.Random) -> Case:
    """A mutated seed and its command options, drawn from ``rng``.

    Parameters
    ----------
    rng : random.Random
        The source of every choice.

    Returns
    -------
    Case
    """
    kind = rng.choice(sorted(seeds()))
    data = seeds()[kind]
    names = []
    for _ in range(rng.choice((0, 1, 1, 2, 3))):
        pool = STRUCTURE[kind] if rng.random() < 0.6 else BYTE_MUTATIONS
        mutate = rng.choice(pool)
        try:
            data = mutate(data, rng)
        except (IndexError, ValueError, OverflowError):  # a mutation that does not fit this data
            continue
        names.append(mutate.__name__)
    options = list(ARGS.get(kind, []))
    if kind in ARGS and rng.random() < 0.3:
        flag, values = rng.choice(ODD_OPTIONS)
        options += [flag, rng.choice(values)]
    return Case(kind, data, options, names)


def run_case(case: Case, folder: Path) -> tuple[str, str]:
    """Run one case through the command line in this process.

    Parameters
    ----------
    case : Case
        The case.
    folder : Path
        A folder for its files.

    Returns
    -------
    outcome : str
        One of ``result``, ``refused``, ``traceback``, ``unclear``.
    detail : str
        The exception type or the error line.
    """
    path = folder / f"case{SUFFIX[case.kind]}"
    path.write_bytes(case.data)
    if case.kind == "modes_file":
        build = folder / "build.toml"
        build.write_text(_BUILD)
        argv = ["check", str(build), "--modes", str(path), "--format", "json"]
    elif case.kind == "build_file":
        argv = ["check", str(path), "--format", "json"]
    else:
        argv = ["modes", str(path), *case.options, "--format", "json"]
    result = CliRunner().invoke(main, argv, env={"CLASHCHECK_WORKER": "off"})
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        return "traceback", f"{type(result.exception).__name__}: {result.exception}"[:300]
    if result.exit_code in (0, 1):
        return "result", ""
    err = result.stderr.strip()
    if result.exit_code == 2 and err.count("\n") == 0 and 0 < len(err) <= 400:
        return "refused", err
    return "unclear", f"exit {result.exit_code}: {err[:300]!r}"


@given(rng=st.randoms(use_true_random=False))
@settings(max_examples=int(os.environ.get("CLASHCHECK_FUZZ_EXAMPLES", "70")), deadline=None,
          derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
def test_mutated_recordings_end_in_a_result_or_one_line(rng, tmp_path_factory):
    case = make_case(rng)
    outcome, detail = run_case(case, tmp_path_factory.mktemp("fuzz"))
    assert outcome in GOOD, (case.kind, case.mutations, case.options, detail)


def test_every_seed_reads_cleanly(tmp_path):
    """The seeds themselves end in a result: the fuzz starts from valid files."""
    for kind in seeds():
        case = Case(kind, seeds()[kind], list(ARGS.get(kind, [])), [])
        outcome, detail = run_case(case, tmp_path)
        assert outcome == "result", (kind, detail)


def test_every_recording_format_is_fuzzed():
    """A format the readers accept without a fuzz seed would go unfuzzed (the recipe in DEVELOPERS.md)."""
    from clashcheck.identify.readers import FORMATS

    seeded = {kind.split("_")[0] for kind in seeds()}
    assert set(FORMATS.values()) <= seeded
