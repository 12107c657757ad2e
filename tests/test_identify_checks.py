"""Recording checks: jitter, gaps, missing values, clipping, DC offset, duration and rate."""

from __future__ import annotations

import numpy as np
import pytest

from clashcheck.errors import RecordingError
from clashcheck.identify.checks import (
    JITTER_REFUSE,
    Conditioner,
    require_duration,
    require_sample_rate,
)
from clashcheck.identify.readers import Columns, open_recording


def _write(path, t, x, extra=None):
    cols = [t, x] if extra is None else [t, x, extra]
    header = "t,gx" if extra is None else "t,gx,rpm"
    np.savetxt(path, np.column_stack(cols), fmt="%.9f", delimiter=",", header=header, comments="")
    return path


def _run(path, block_rows=4096, **cols):
    rec = open_recording(path, Columns(signals=("gx",), time_column="t", **cols))
    cond = Conditioner(rec)
    runs = []
    for blk in rec.blocks(block_rows):
        runs.extend(cond.feed(blk))
    return cond.finish(), runs


def test_uniform_timestamps_pass_through(tmp_path):
    t = np.arange(5000) / 1000.0
    x = np.sin(2 * np.pi * 13 * t)
    f, runs = _run(_write(tmp_path / "u.csv", t, x))
    assert f.sample_rate_hz == pytest.approx(1000.0)
    assert not f.resampled and f.warnings == []
    np.testing.assert_allclose(np.concatenate([r.signals[:, 0] for r in runs]), x, atol=1e-9)
    assert {r.run for r in runs} == {0}


def test_small_jitter_is_resampled(tmp_path):
    rng = np.random.default_rng(1)
    n = 6000
    t = np.arange(n) / 1000.0 + rng.uniform(-0.02, 0.02, n) / 1000.0  # ±2 % of the interval
    f_sig = 37.0
    x = np.sin(2 * np.pi * f_sig * t)
    f, runs = _run(_write(tmp_path / "j.csv", t, x), block_rows=1000)
    assert f.resampled
    # uniform jitter of ±a has std a/√3 (derived)
    assert f.jitter == pytest.approx(0.02 * np.sqrt(2 / 3), rel=0.1)
    assert any("resampled onto a uniform 1000.0 Hz grid" in w for w in f.warnings)
    y = np.concatenate([r.signals[:, 0] for r in runs])
    grid = t[0] + np.arange(y.size) / f.sample_rate_hz
    # linear interpolation of a 37 Hz sine at 1 kHz: error below (πf/fs)²/2 ≈ 0.7 % (derived)
    assert np.max(np.abs(y - np.sin(2 * np.pi * f_sig * grid))) < 0.01
    assert abs(y.size - n) <= 2


def test_large_jitter_is_refused(tmp_path):
    rng = np.random.default_rng(2)
    dt = rng.uniform(0.3, 1.7, 3000) / 1000.0  # std ≈ 40 % of the interval
    t = np.cumsum(dt)
    with pytest.raises(RecordingError, match=f"more than the {100 * JITTER_REFUSE:.0f} %"):
        _run(_write(tmp_path / "big.csv", t, np.zeros_like(t)))


def test_time_going_backwards_names_the_row(tmp_path):
    t = np.arange(100) / 100.0
    t[50] = t[48]
    with pytest.raises(RecordingError, match=r"row 52: the time goes backwards"):
        _run(_write(tmp_path / "back.csv", t, np.zeros_like(t)))


def test_gaps_split_runs_and_are_reported(tmp_path):
    t = np.r_[np.arange(1000), np.arange(1250, 2250)] / 1000.0  # a 0.25 s hole
    x = np.ones_like(t)
    f, runs = _run(_write(tmp_path / "g.csv", t, x), block_rows=700)
    assert f.gaps == 1
    assert len({r.run for r in runs}) == 2
    assert any("1 gaps in the timestamps (longest 0.251 s, at row 1002)" in w for w in f.warnings)
    assert f.rows_used == 2000


def test_missing_values_are_skipped_and_counted(tmp_path):
    path = tmp_path / "nan.csv"
    lines = ["t,gx"] + [f"{i / 100:.2f},{'' if 30 <= i < 35 else 1.0}" for i in range(100)]
    path.write_text("\n".join(lines) + "\n")
    f, runs = _run(path)
    assert f.rows_missing == 5 and f.rows_used == 95
    assert len({r.run for r in runs}) == 2
    assert any("5 rows (5 %) have missing values (first at row 32)" in w for w in f.warnings)


def test_missing_values_without_timestamps(tmp_path):
    arr = np.ones((50, 1))
    arr[10:13] = np.nan  # three rows: more than MAX_FILLED_ROWS, so a break
    p = tmp_path / "n.npy"
    np.save(p, arr)
    rec = open_recording(p, Columns(sample_rate_hz=100.0))
    cond = Conditioner(rec)
    runs = [r for b in rec.blocks() for r in cond.feed(b)]
    f = cond.finish()
    assert f.rows_missing == 3 and [r.signals.shape[0] for r in runs] == [10, 37]
    assert runs[0].run != runs[1].run


def test_clipping_against_full_scale_in_wav(tmp_path):
    from scipy.io import wavfile

    x = 0.5 * np.sin(2 * np.pi * np.arange(10000) / 50.0)
    x[:100] = 1.0  # 1 % of the samples pinned at full scale
    p = tmp_path / "clip.wav"
    wavfile.write(p, 8000, np.clip(np.round(x * 32768), -32768, 32767).astype(np.int16))
    rec = open_recording(p, Columns())
    cond = Conditioner(rec)
    for b in rec.blocks(3000):
        list(cond.feed(b))
    f = cond.finish()
    assert f.clipped_fraction[0] == pytest.approx(0.01)  # 100 of 10000 (derived)
    assert any("1 % of the samples are clipped" in w for w in f.warnings)


def test_flat_top_clipping_without_full_scale(tmp_path):
    rng = np.random.default_rng(4)
    x = rng.normal(0, 1, 20000)
    clipped = np.clip(x, -5, 2.0)  # P(x > 2) = 2.28 % for a normal variable (derived)
    p = tmp_path / "c.npy"
    np.save(p, clipped[:, None])
    rec = open_recording(p, Columns(sample_rate_hz=1000.0))
    cond = Conditioner(rec)
    for b in rec.blocks(6000):
        list(cond.feed(b))
    f = cond.finish()
    assert f.clipped_fraction[0] == pytest.approx(np.mean(x >= 2.0))
    # unclipped noise: no flat top
    np.save(p, x[:, None])
    rec = open_recording(p, Columns(sample_rate_hz=1000.0))
    cond = Conditioner(rec)
    for b in rec.blocks(6000):
        list(cond.feed(b))
    assert cond.finish().clipped_fraction[0] == 0.0


def test_dc_offset_is_reported(tmp_path):
    t = np.arange(2000) / 1000.0
    x = 5.0 + 0.1 * np.sin(2 * np.pi * 20 * t)
    f, _ = _run(_write(tmp_path / "dc.csv", t, x))
    assert f.dc_offset[0] == pytest.approx(5.0, abs=1e-3)
    assert any("DC offset 5" in w and "removed from each segment" in w for w in f.warnings)


def test_require_duration_says_what_is_needed():
    require_duration("r.csv", 10.0, 8.0, "x")
    with pytest.raises(RecordingError, match=r"r\.csv: the recording has 2 s of usable data; "
                                             r"a resolution of 0\.5 Hz needs at least 8\.5 s"):
        require_duration("r.csv", 2.0, 8.5, "a resolution of 0.5 Hz")


def test_require_sample_rate_says_the_rate_needed():
    require_sample_rate("r.wav", 8000.0, 1000.0)
    with pytest.raises(RecordingError, match=r"sampled at 1000 Hz, too slow for modes up to "
                                             r"900 Hz; that needs at least 2250 Hz"):
        require_sample_rate("r.wav", 1000.0, 900.0)


# --- timestamps as people export them (issue 11, deliver 4) ---------------------------------
# The logs are written here with a stated rounding; the generator is this test's own.


def _rounded_log(path, t_true, x, fmt, header="t,gx"):
    """A CSV with the true times printed in ``fmt`` (the export's rounding)."""
    with open(path, "w") as fh:
        fh.write(header + "\n")
        for ti, xi in zip(t_true, x):
            fh.write(f"{fmt % ti},{xi:.9f}\n")
    return path


def _signal(n, fs, seed=0):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    return np.sin(2 * np.pi * 123.0 * t) + 0.1 * rng.standard_normal(n)


def test_tenth_ms_at_4khz_is_uniform_not_resampled(tmp_path):
    fs, n = 4000.0, 40000
    t = 2.0 + np.arange(n) / fs
    x = _signal(n, fs)
    f, runs = _run(_rounded_log(tmp_path / "r.csv", t, x, "%.4f"), block_rows=8192)
    # printed to 0.1 ms: 0.25 ms steps show as 0.2 and 0.3 ms, std 0.05 ms = 20 % (derived)
    assert f.rounded_uniform and not f.resampled
    assert f.time_precision_s == pytest.approx(1e-4)
    assert f.apparent_jitter == pytest.approx(0.2, rel=0.05)
    assert f.jitter < 0.01  # real jitter: none was added
    assert f.sample_rate_hz == pytest.approx(fs, rel=1e-6)
    y = np.concatenate([r.signals[:, 0] for r in runs])
    np.testing.assert_allclose(y, np.round(x, 9), atol=1e-9)  # passed through, never interpolated
    assert {r.run for r in runs} == {0} and f.gaps == 0
    assert any("printed to 0.1 ms" in w and "20 % jittery" in w and "real jitter" in w
               for w in f.warnings)


def test_six_significant_digits_past_100_s_repeat_but_are_accepted(tmp_path):
    fs, n = 4000.0, 60000  # 95 s to 110 s: past 100 s six digits leave 1 ms, times repeat
    t = 95.0 + np.arange(n) / fs
    x = _signal(n, fs, seed=3)
    f, runs = _run(_rounded_log(tmp_path / "g.csv", t, x, "%.6g"), block_rows=16384)
    assert f.rounded_uniform and not f.resampled
    assert f.time_precision_s == pytest.approx(1e-3)
    assert f.sample_rate_hz == pytest.approx(fs, rel=1e-5)
    assert sum(r.signals.shape[0] for r in runs) == n and f.gaps == 0
    assert any("repeat" in w and "--rate" in w for w in f.warnings)


def test_integer_microseconds_with_time_unit(tmp_path):
    fs, n = 8000.0, 16000
    t_us = np.round(1e6 * np.arange(n) / fs + 12345)
    x = _signal(n, fs, seed=4)
    p = _rounded_log(tmp_path / "us.csv", t_us, x, "%d")
    f, runs = _run(p, time_scale_s=1e-6)
    assert f.sample_rate_hz == pytest.approx(fs, rel=1e-9) and not f.resampled
    assert sum(r.signals.shape[0] for r in runs) == n


def test_integer_milliseconds_at_4khz_with_time_unit(tmp_path):
    fs, n = 4000.0, 40000  # four samples share each printed millisecond
    t_ms = np.floor(1e3 * np.arange(n) / fs)
    x = _signal(n, fs, seed=5)
    f, runs = _run(_rounded_log(tmp_path / "ms.csv", t_ms, x, "%d"), time_scale_s=1e-3)
    assert f.rounded_uniform and f.time_precision_s == pytest.approx(1e-3)
    assert f.sample_rate_hz == pytest.approx(fs, rel=1e-4)
    assert sum(r.signals.shape[0] for r in runs) == n


def test_real_jitter_is_told_apart_from_rounding(tmp_path):
    fs, n = 1000.0, 20000
    rng = np.random.default_rng(6)
    t = np.arange(n) / fs + rng.normal(0, 0.03e-3, n)  # 3 % real jitter, printed to 1 µs
    x = _signal(n, fs, seed=6)
    f, _runs = _run(_rounded_log(tmp_path / "j.csv", t, x, "%.6f"), block_rows=8192)
    assert not f.rounded_uniform and f.resampled
    # jitter of the intervals: √2 × 3 % (derived); 1 µs rounding adds little
    assert f.jitter == pytest.approx(0.03 * np.sqrt(2), rel=0.1)


def test_repeated_time_in_full_precision_is_refused_with_rate_hint(tmp_path):
    t = np.arange(2000) / 1000.0
    t[700] = t[699]  # a duplicated time although printed in full
    with pytest.raises(RecordingError, match=r"row 702: the time repeats.*--rate"):
        _run(_write(tmp_path / "d.csv", t, np.sin(t)))


def test_isolated_short_rows_are_filled_not_split(tmp_path):
    fs, n = 1000.0, 20000
    rng = np.random.default_rng(7)
    t = np.arange(n) / fs
    x = np.sin(2 * np.pi * 50 * t)
    short = np.sort(rng.choice(np.arange(5, n - 5), 400, replace=False))  # 2 % short rows
    short = short[np.diff(np.r_[-10, short]) > 3]  # isolated ones
    lines = ["t,gx,gy"] + [f"{ti:.6f},{xi:.6f},{xi:.6f}" for ti, xi in zip(t, x)]
    for k in short:
        lines[k + 1] = f"{t[k]:.6f},{x[k]:.6f}"  # the last field is missing
    p = tmp_path / "short.csv"
    p.write_text("\n".join(lines) + "\n")
    rec = open_recording(p, Columns(signals=("gx", "gy"), time_column="t"))
    cond = Conditioner(rec)
    runs = [r for b in rec.blocks() for r in cond.feed(b)]
    f = cond.finish()
    assert {r.run for r in runs} == {0} and f.rows_used == n
    assert f.rows_filled == short.size and f.rows_missing == short.size
    y = np.concatenate([r.signals for r in runs])
    # linear interpolation of a 50 Hz sine across one missing row (neighbours 2 ms apart):
    # error below (2π·50 · 0.002)²/8 ≈ 4.9 % (derived)
    assert np.max(np.abs(y[:, 1] - x)) < 0.0494
