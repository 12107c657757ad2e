"""The corpus of awkward inputs from issue 12, one regression test per class.

The shapes are generated here by small fixtures (no stored files): each test
states the input and what the command must do with it: a result equal to the
clean input's, or one line on stderr and exit 2 naming the field or file.
The recordings are made by this file's own generator (decaying sines after
each tap, written with the stated rounding), not by ``clashcheck.identify.synth``.
"""

from __future__ import annotations

import io
import json
import os
import stat
import struct
import subprocess
import sys
import wave
from pathlib import Path

import numpy as np
import pytest

from clashcheck.cli import main

REPO = Path(__file__).resolve().parent.parent
EXAMPLE = REPO / "examples" / "freestyle-5in.toml"

BUILD = """\
name = "corpus quad"
[frame]
motors = 4
mass = "690 g"
[[frame.modes]]
name = "arm flap"
frequency = "186 Hz"
damping = 0.03
[motor]
kv = "1950 rpm/V"
poles = 14
slots = 12
resistance = "45 mohm"
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

FS_TAP = 4000.0


def _taps(fs: float = FS_TAP, seconds: float = 1.5, seed: int = 1) -> np.ndarray:
    """Three taps ringing at 180 Hz (ζ 0.02) and 410 Hz (ζ 0.015), with noise (stated here)."""
    rng = np.random.default_rng(seed)
    n = int(fs * seconds)
    t = np.arange(n) / fs
    x = 0.002 * rng.standard_normal(n)
    for t0 in (0.2, 0.7, 1.2):
        on = t >= t0
        tau = t[on] - t0
        x[on] += np.exp(-2 * np.pi * 180 * 0.02 * tau) * np.sin(2 * np.pi * 180 * tau)
        x[on] += 0.6 * np.exp(-2 * np.pi * 410 * 0.015 * tau) * np.sin(2 * np.pi * 410 * tau)
    return x


def _one_line_error(res, pattern: str) -> str:
    assert res.exit_code == 2, (res.exit_code, res.output)
    err = res.stderr.strip()
    assert err.count("\n") == 0 and len(err) < 400, err
    assert "Traceback" not in res.output
    import re

    assert re.search(pattern, err), err
    return err


def _modes_json(runner, path: Path, *args: str) -> list[tuple[float, str]]:
    res = runner.invoke(main, ["modes", str(path), "--kind", "tap", *args, "--format", "json"])
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    return [round(m["frequency_hz"], 3) for m in doc["modes"]]


def _wav_bytes(x: np.ndarray, fs: int = 8000, width: int = 2, channels: int = 1) -> bytes:
    buf = io.BytesIO()
    with wave.open(buf, "wb") as w:
        w.setnchannels(channels)
        w.setsampwidth(width)
        w.setframerate(fs)
        if width == 1:
            w.writeframes(np.clip(np.round(128 + 100 * x), 0, 255).astype(np.uint8).tobytes())
        else:
            w.writeframes(np.round(x * 12000).astype("<i2").tobytes())
    return buf.getvalue()


# ----------------------------------------------------------------- tracebacks, now one line


def test_kv_near_zero_is_refused_up_front(runner, tmp_path):
    p = tmp_path / "kv.toml"
    p.write_text(BUILD.replace('"1950 rpm/V"', '"1e-300 rpm/V"'))
    _one_line_error(runner.invoke(main, ["check", str(p)]), r"motor\.kv: expected a value from 1 rpm/V")


def test_mode_frequency_near_zero_is_refused_not_inf_in_json(runner, tmp_path):
    p = tmp_path / "f.toml"
    p.write_text(BUILD.replace('"186 Hz"', '"1e-308 Hz"'))
    _one_line_error(runner.invoke(main, ["check", str(p), "--format", "json"]),
                    r"frame\.modes\[0\]\.frequency: expected a value from 0\.1 Hz")


@pytest.mark.parametrize("offset, value, fmt, pattern", [
    (22, 0, "<H", "0 channels"),
    (24, 0, "<I", "sample rate of 0 Hz"),
    (36, b"junk", None, "no data chunk"),
    (40, 0xFFFFFF00, "<I", "cut short"),
])
def test_damaged_wav_headers(runner, tmp_path, offset, value, fmt, pattern):
    data = bytearray(_wav_bytes(_taps(8000.0)))
    data[offset:offset + (4 if fmt in ("<I", None) else 2)] = (value if fmt is None
                                                                 else struct.pack(fmt, value))
    p = tmp_path / "bad.wav"
    p.write_bytes(bytes(data))
    _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap"]), pattern)


def test_truncated_riff_header(runner, tmp_path):
    p = tmp_path / "cut.wav"
    p.write_bytes(_wav_bytes(_taps(8000.0))[:30])
    _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap"]), "cut short|no data chunk")


def test_eight_bit_wav_is_refused_not_read_into_false_modes(runner, tmp_path):
    p = tmp_path / "u8.wav"
    p.write_bytes(_wav_bytes(_taps(8000.0) * 0.9, width=1))
    _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap"]), "8-bit samples")


@pytest.mark.parametrize("array, pattern", [
    (np.zeros((100, 0)), "no columns"),
    (np.zeros((), dtype=[("t", "f8"), ("gx", "f8")]), "must be 1-D"),
    (np.zeros(10, dtype=[("t", "f8"), ("gx", "U4")]), "field 'gx' holds <U4"),
    (np.zeros(10, dtype=[("t", "f8"), ("gx", "f4", (3,))]), "only plain numbers"),
    (np.array([1 + 2j]), "only plain numbers"),
])
def test_awkward_npy_shapes(runner, tmp_path, array, pattern):
    p = tmp_path / "a.npy"
    np.save(p, array)
    _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap", "--rate", "4 kHz"]), pattern)


def test_npy_that_is_not_npy_is_not_called_a_pickle(runner, tmp_path):
    p = tmp_path / "x.npy"
    p.write_text("hello, not an array")
    err = _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap", "--rate", "4 kHz"]),
                          "not a NumPy .npy file")
    assert "pickle" not in err


def test_npy_of_objects_is_refused_without_advice_to_load_unsafely(runner, tmp_path):
    p = tmp_path / "o.npy"
    np.save(p, np.array([{"a": 1}], dtype=object), allow_pickle=True)
    err = _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap", "--rate", "4 kHz"]),
                          "holds Python objects")
    assert "allow_pickle" not in err and "unsafe" not in err


@pytest.fixture
def tap_csv(tmp_path) -> Path:
    x = _taps()
    t = np.arange(x.size) / FS_TAP
    p = tmp_path / "tap.csv"
    p.write_text("t,ax\n" + "".join(f"{a:.6f},{b:.6f}\n" for a, b in zip(t, x)))
    return p


@pytest.mark.parametrize("args, pattern", [
    (["--min-frequency", "1900 Hz"], r"--min-frequency: expected a frequency below 1600 Hz"),
    (["--resolution", "1e-6 Hz"], r"--resolution: expected a resolution from"),
    (["--max-frequency", "5 kHz"], r"needs at least|--max-frequency"),
])
def test_empty_or_absurd_band_is_one_input_error(runner, tap_csv, args, pattern):
    res = runner.invoke(main, ["modes", str(tap_csv), "--kind", "tap", "--time-column", "t", "--signal", "ax",
                               *args])
    _one_line_error(res, pattern)


def test_absurd_rate_is_refused_before_allocation(runner, tmp_path):
    p = tmp_path / "r.npy"
    np.save(p, _taps()[:, None])
    res = runner.invoke(main, ["modes", str(p), "--kind", "flight", "--rate", "1e12 Hz",
                               "--throttle-column", "0"])
    _one_line_error(res, r"--rate: expected a sample rate up to 1 MHz")


def test_integer_microseconds_without_time_unit_hint(runner, tmp_path):
    x = _taps()
    t_us = np.round(1e6 * np.arange(x.size) / FS_TAP).astype(np.int64)
    p = tmp_path / "us.csv"
    p.write_text("t,ax\n" + "".join(f"{a},{b:.6f}\n" for a, b in zip(t_us, x)))
    res = runner.invoke(main, ["modes", str(p), "--kind", "tap", "--time-column", "t", "--signal", "ax"])
    _one_line_error(res, r"sample rate .*got 0\.004.*--time-unit")
    q = tmp_path / "plain.npy"
    np.save(q, x[:, None])
    assert _modes_json(runner, p, "--time-column", "t", "--signal", "ax", "--time-unit", "us") == \
        _modes_json(runner, q, "--rate", "4 kHz")


# ----------------------------------------------------------------- unbounded work, refused up front


def test_build_with_24000_modes_is_refused_quickly(runner, tmp_path):
    modes = ",".join(f'{{name="{i}",frequency="{20 + i * 0.01:.2f} Hz"}}' for i in range(24000))
    p = tmp_path / "many.toml"
    p.write_text(BUILD.replace('mass = "690 g"\n', f'mass = "690 g"\nmodes = [{modes}]\n', 1).replace(
        '[[frame.modes]]\nname = "arm flap"\nfrequency = "186 Hz"\ndamping = 0.03\n', ""))
    assert p.stat().st_size < 1_000_000
    _one_line_error(runner.invoke(main, ["check", str(p)]), "at most 200 modes")


def test_modes_file_with_20000_modes_is_refused(runner, tmp_path):
    b = tmp_path / "b.toml"
    b.write_text(BUILD)
    m = tmp_path / "m.toml"
    m.write_text("[frame]\nmodes = [" + ",".join(f'{{name="{i}",frequency="{20 + i * 0.01:.2f} Hz"}}'
                                                  for i in range(20000)) + "]\n")
    _one_line_error(runner.invoke(main, ["check", str(b), "--modes", str(m)]), r"m\.toml.*at most 200 modes")


def test_pick_product_of_axes_is_bounded(runner, tmp_path):
    b = tmp_path / "b.toml"
    b.write_text(BUILD)
    res = runner.invoke(main, ["pick", str(b), "--kv-from", "1000 rpm/V", "--kv-to", "2000 rpm/V",
                               "--kv-step", "0.01 rpm/V", "--cells", "3,4,5,6", "--poles", "12,14"])
    _one_line_error(res, "at most 200000 candidates")


def test_csv_row_of_a_million_fields_is_refused(runner, tap_csv):
    lines = tap_csv.read_text().splitlines()
    lines[500] += ",1" * 1_000_000
    tap_csv.write_text("\n".join(lines) + "\n")
    res = runner.invoke(main, ["modes", str(tap_csv), "--kind", "tap", "--time-column", "t", "--signal", "ax"])
    _one_line_error(res, r"row 501: malformed row")


def test_csv_header_of_a_million_fields_is_refused(runner, tmp_path):
    p = tmp_path / "wide.csv"
    p.write_text("t," + ",".join(f"c{i}" for i in range(100_000)) + "\n0,1\n")
    _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap", "--time-column", "t",
                                         "--signal", "c1"]), "longer than 64 KiB")


# ----------------------------------------------------------------- silently wrong, now right


def test_trailing_delimiters_do_not_shift_columns(runner, tap_csv, tmp_path):
    clean = _modes_json(runner, tap_csv, "--time-column", "t", "--signal", "ax")
    lines = tap_csv.read_text().splitlines()
    rows_only = tmp_path / "rows.csv"
    rows_only.write_text("\n".join([lines[0]] + [ln + "," for ln in lines[1:]]) + "\n")
    both = tmp_path / "both.csv"
    both.write_text("\n".join(ln + "," for ln in lines) + "\n")
    assert clean and _modes_json(runner, rows_only, "--time-column", "t", "--signal", "ax") == clean
    assert _modes_json(runner, both, "--time-column", "t", "--signal", "ax") == clean


def test_ms_timestamps_with_one_decimal_give_the_modes_of_the_stated_rate(runner, tmp_path):
    x = _taps()
    t_ms = 1e3 * np.arange(x.size) / FS_TAP  # 0.25 ms steps printed to 0.1 ms
    p = tmp_path / "ms.csv"
    p.write_text("t,ax\n" + "".join(f"{a:.1f},{b:.6f}\n" for a, b in zip(t_ms, x)))
    q = tmp_path / "plain.npy"
    np.save(q, x[:, None])
    assert _modes_json(runner, p, "--time-column", "t", "--signal", "ax", "--time-unit", "ms") == \
        _modes_json(runner, q, "--rate", "4 kHz")


def test_throttle_as_pulse_width_is_recognised(tmp_path):
    from clashcheck.identify.checks import Conditioner
    from clashcheck.identify.readers import Columns, open_recording

    n = 4000
    pulse = 1000 + 1000 * (0.3 + 0.2 * np.sin(np.arange(n) / 400.0))  # µs, 1100–1500
    p = tmp_path / "thr.csv"
    p.write_text("gx,thr\n" + "".join(f"{i % 7 * 0.1:.2f},{v:.0f}\n" for i, v in enumerate(pulse)))
    rec = open_recording(p, Columns(signals=("gx",), sample_rate_hz=1000.0, throttle_column="thr"))
    cond = Conditioner(rec)
    thr = np.concatenate([r.throttle for b in rec.blocks() for r in cond.feed(b)])
    f = cond.finish()
    np.testing.assert_allclose(thr, (np.round(pulse) - 1000) / 1000)  # derived: (µs − 1000) / 1000
    assert any("1000–2000 µs pulse width" in w for w in f.warnings)


def test_throttle_of_unknown_range_is_refused_with_the_option(runner, tmp_path):
    p = tmp_path / "thr.csv"
    p.write_text("gx,thr\n" + "".join(f"{i % 5 * 0.1:.1f},{5000 + i}\n" for i in range(6000)))
    res = runner.invoke(main, ["modes", str(p), "--kind", "flight", "--rate", "1 kHz", "--signal", "gx",
                               "--throttle-column", "thr"])
    _one_line_error(res, r"--throttle-unit: expected a throttle column")


@pytest.mark.parametrize("lines, pattern", [
    (['damping = 0.05', 'damping_low = 0.01', 'damping_high = 0.03'], "within its own stated range"),
    (['damping_low = 0.03', 'damping_high = 0.01'], "not below damping_low"),
])
def test_modes_file_damping_outside_its_own_range(runner, tmp_path, lines, pattern):
    b = tmp_path / "b.toml"
    b.write_text(BUILD)
    m = tmp_path / "m.toml"
    m.write_text('[[frame.modes]]\nname = "m1"\nfrequency = "200 Hz"\n' + "\n".join(lines) + "\n")
    _one_line_error(runner.invoke(main, ["check", str(b), "--modes", str(m)]), pattern)


def test_690_gr_is_refused_as_ambiguous(runner, tmp_path):
    p = tmp_path / "gr.toml"
    p.write_text(BUILD.replace('mass = "690 g"', 'mass = "690 gr"'))
    _one_line_error(runner.invoke(main, ["check", str(p)]), r"frame\.mass.*write 'g' for grams")


def test_pick_props_comma_is_refused(runner, tmp_path):
    b = tmp_path / "b.toml"
    b.write_text(BUILD)
    _one_line_error(runner.invoke(main, ["pick", str(b), "--props", ","]), r"--props: expected 'catalog'")


def test_output_to_fifo_or_device_is_refused(runner, tmp_path):
    fifo = tmp_path / "out.json"
    os.mkfifo(fifo)
    _one_line_error(runner.invoke(main, ["check", str(EXAMPLE), "-o", str(fifo)]), "FIFO")
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)
    _one_line_error(runner.invoke(main, ["check", str(EXAMPLE), "-o", os.devnull]), "is a device")
    assert stat.S_ISCHR(os.stat(os.devnull).st_mode)


def test_wrong_unit_cache_file_changes_nothing(tmp_path, monkeypatch):
    import clashcheck.inputs.units as units

    monkeypatch.setenv("CLASHCHECK_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(units, "_memo", {})
    monkeypatch.setattr(units, "_memo_loaded", False)
    entries = {"(1 / minute)/V": [999.0, "1 / [current] / [length] ** 2 / [mass] * [time] ** 2"]}
    doc = {"key": units._rules_key(), "checksum": "0" * 64, "entries": entries}  # edited by hand
    (tmp_path / units._CACHE_NAME).write_text(json.dumps(doc))
    assert units.parse("1950 rpm/V", "rpm/V", "motor.kv") == pytest.approx(32.5)  # 1950/60, derived


# ----------------------------------------------------------------- unclear, now one clear line


def test_compare_names_the_bad_file(runner, tmp_path):
    bad = tmp_path / "b-bad.toml"
    bad.write_text(BUILD.replace('cells = 6', 'cells = "six"'))
    _one_line_error(runner.invoke(main, ["compare", str(EXAMPLE), str(bad)]), r"b-bad\.toml: battery\.cells")


def test_byte_order_mark_in_build_and_modes_file_is_accepted(runner, tmp_path):
    b = tmp_path / "bom.toml"
    b.write_bytes(b"\xef\xbb\xbf" + BUILD.encode())
    m = tmp_path / "modes.toml"
    m.write_bytes(b"\xef\xbb\xbf" + b'[[frame.modes]]\nname = "m1"\nfrequency = "250 Hz"\n')
    res = runner.invoke(main, ["check", str(b), "--modes", str(m), "--format", "json"])
    assert res.exit_code in (0, 1), res.output


def test_modes_without_kind_is_one_line(runner, tap_csv):
    _one_line_error(runner.invoke(main, ["modes", str(tap_csv)]), r"Missing option '--kind'.*tap, flight")


def test_long_header_errors_are_short(runner, tmp_path):
    p = tmp_path / "rep.csv"
    p.write_text(",".join(["t"] + ["gx"] * 900) + "\n" + ",".join(["0"] * 901) + "\n")
    _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap", "--time-column", "t",
                                         "--signal", "gx"]), "repeats the name 'gx'")


def test_fifo_named_csv_is_called_a_fifo(runner, tmp_path):
    p = tmp_path / "pipe.csv"
    os.mkfifo(p)
    _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap", "--rate", "4 kHz"]),
                    "a FIFO .*regular file")


def test_path_with_newline_stays_on_one_line(runner, tmp_path):
    p = tmp_path / "two\nlines.csv"
    p.write_text("t,ax\n0,1\n")
    err = _one_line_error(runner.invoke(main, ["modes", str(p), "--kind", "tap", "--time-column", "t",
                                               "--signal", "ax"]), r"two\\nlines\.csv")
    assert "\n" not in err


def test_full_standard_output_is_one_line(tmp_path):
    if not os.path.exists("/dev/full"):
        pytest.skip("no /dev/full on this system")
    with open("/dev/full", "w") as full:
        proc = subprocess.run([sys.executable, "-m", "clashcheck", "check", str(EXAMPLE)], stdout=full,
                              stderr=subprocess.PIPE, text=True, timeout=60,
                              env={**os.environ, "PYTHONPATH": str(REPO)})
    assert proc.returncode == 2
    assert proc.stderr.strip() == "clashcheck: error: standard output: cannot write (No space left on device)"


# ----------------------------------------------------------------- valid input, now read


def test_quoted_headers_and_trailing_empty_column(runner, tap_csv, tmp_path):
    clean = _modes_json(runner, tap_csv, "--time-column", "t", "--signal", "ax")
    lines = tap_csv.read_text().splitlines()
    quoted = tmp_path / "q.csv"
    quoted.write_text('"t","ax"\n' + "\n".join(lines[1:]) + "\n")
    assert _modes_json(runner, quoted, "--time-column", "t", "--signal", "ax") == clean
    empty_col = tmp_path / "e.csv"
    empty_col.write_text("t,ax,\n" + "\n".join(ln + "," for ln in lines[1:]) + "\n")
    assert _modes_json(runner, empty_col, "--time-column", "t", "--signal", "ax") == clean


def test_two_percent_short_rows_keep_the_recording_whole(runner, tmp_path):
    x = _taps()
    t = np.arange(x.size) / FS_TAP
    rng = np.random.default_rng(3)
    short = set(rng.choice(np.arange(10, x.size - 10, 4), int(0.02 * x.size), replace=False).tolist())
    p = tmp_path / "short.csv"
    p.write_text("t,ax,ay\n" + "".join(f"{a:.6f},{b:.6f}" + ("" if i in short else f",{b:.6f}") + "\n"
                                       for i, (a, b) in enumerate(zip(t, x))))
    res = runner.invoke(main, ["modes", str(p), "--kind", "tap", "--time-column", "t", "--signal", "ax,ay",
                               "--format", "json"])
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert doc["modes"]
    assert any("filled from their neighbours" in w for w in doc["warnings"])


def test_ohm_sign_is_read_as_ohm(runner, tmp_path):
    a = tmp_path / "a.toml"
    a.write_text(BUILD)
    b = tmp_path / "b.toml"
    b.write_text(BUILD.replace('"45 mohm"', '"45 m\u2126"'))
    ra = runner.invoke(main, ["check", str(a), "--format", "json"])
    rb = runner.invoke(main, ["check", str(b), "--format", "json"])
    assert rb.exit_code == ra.exit_code and json.loads(rb.stdout)["windows"] == json.loads(ra.stdout)["windows"]
