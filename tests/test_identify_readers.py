"""Recording readers: CSV (pandas and numpy paths), WAV, .npy, and malformed files."""

from __future__ import annotations

import numpy as np
import pytest

from clashcheck.errors import InputError, RecordingError
from clashcheck.identify import readers
from clashcheck.identify.readers import Columns, open_recording


def _csv(path, rows, header="t,gx,gy,thr"):
    path.write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return path


@pytest.fixture
def table():
    rng = np.random.default_rng(3)
    n = 1000
    t = np.arange(n) / 1000.0
    data = np.column_stack([t, rng.normal(size=n), rng.normal(size=n), np.linspace(0.2, 0.8, n)])
    return data


@pytest.fixture
def csv_file(tmp_path, table):
    path = tmp_path / "rec.csv"
    np.savetxt(path, table, fmt="%.6f", delimiter=",", header="t,gx,gy,thr", comments="")
    return path


@pytest.fixture(params=["pandas", "numpy"])
def csv_path(request, monkeypatch):
    """Run each CSV test through both readers: chunked pandas and the numpy fallback."""
    if request.param == "pandas":
        pytest.importorskip("pandas")
    else:
        monkeypatch.setattr(readers, "_pandas", lambda: None)
    return request.param


COLS = Columns(signals=("gx", "gy"), time_column="t", throttle_column="thr")


def test_csv_round_trip_in_blocks(csv_path, csv_file, table):
    rec = open_recording(csv_file, COLS)
    blocks = list(rec.blocks(block_rows=300))  # several blocks, last one short
    assert [b.first_row for b in blocks] == [0, 300, 600, 900]
    sig = np.concatenate([b.signals for b in blocks])
    # the file was written with 6 decimals: values agree to that (derived)
    np.testing.assert_allclose(sig, table[:, 1:3], atol=5e-7)
    np.testing.assert_allclose(np.concatenate([b.time_s for b in blocks]), table[:, 0], atol=5e-7)
    np.testing.assert_allclose(np.concatenate([b.throttle for b in blocks]), table[:, 3], atol=5e-7)
    assert rec.signal_names == ("gx", "gy")
    assert abs(rec.rows_estimate - 1000) < 50


def test_csv_pandas_and_numpy_paths_agree(csv_file, monkeypatch):
    pytest.importorskip("pandas")
    a = open_recording(csv_file, COLS).read_all()
    monkeypatch.setattr(readers, "_pandas", lambda: None)
    b = open_recording(csv_file, COLS).read_all()
    np.testing.assert_array_equal(a.signals, b.signals)
    np.testing.assert_array_equal(a.time_s, b.time_s)


def test_csv_rotor_columns_are_averaged_and_scaled(csv_path, tmp_path):
    path = _csv(tmp_path / "r.csv", ["0,1,6000,6600", "0.001,2,6000,6600"], "t,gx,m1,m2")
    rec = open_recording(path, Columns(signals=("gx",), time_column="t", rpm_columns=("m1", "m2")))
    blk = rec.read_all()
    # 6300 rpm mean = 105 Hz (60 rpm = 1 Hz, REFERENCES.md units note; derived)
    np.testing.assert_allclose(blk.rotor_hz, [105.0, 105.0])


def test_csv_blank_cells_become_missing_values(csv_path, tmp_path):
    path = _csv(tmp_path / "gap.csv", ["0,1,2,0.5", "0.001,,2,0.5", "0.002,3,4,0.5"])
    blk = open_recording(path, COLS).read_all()
    assert np.isnan(blk.signals[1, 0]) and blk.signals[2, 0] == 3.0


def test_csv_bad_cell_names_its_row(csv_path, tmp_path):
    rows = [f"{i / 1000:.3f},1,2,0.5" for i in range(50)]
    rows[40] = "0.040,1,abc,0.5"
    path = _csv(tmp_path / "bad.csv", rows)
    with pytest.raises(RecordingError, match=r"bad\.csv, row 42: 'abc' is not a number"):
        open_recording(path, COLS).read_all()


def test_csv_ragged_row_names_its_row(csv_path, tmp_path):
    rows = [f"{i / 1000:.3f},1,2,0.5" for i in range(20)]
    rows[9] = "0.009,1,2,0.5,7,8"
    path = _csv(tmp_path / "ragged.csv", rows)
    with pytest.raises(RecordingError, match=r"row 11: malformed row"):
        open_recording(path, COLS).read_all()


def test_csv_missing_column_lists_the_header(tmp_path):
    path = _csv(tmp_path / "c.csv", ["0,1,2,0.5"])
    with pytest.raises(RecordingError, match=r"row 1: no signal column 'gz'; the header has: t, gx, gy, thr"):
        open_recording(path, Columns(signals=("gz",), time_column="t"))


def test_csv_needs_time_or_rate(tmp_path):
    path = _csv(tmp_path / "c.csv", ["0,1,2,0.5"])
    with pytest.raises(InputError, match="time_column"):
        open_recording(path, Columns(signals=("gx",)))


@pytest.mark.parametrize(
    "content, where, what",
    [
        (b"", "row 1", "empty"),
        (b"1,2,3\n4,5,6\n", "row 1", "header row"),
        (b"t,gx\n0,1\n\x00\x01\x02", "byte 9", "NUL"),
        (b"t,gx\n0,1\n0.1,\xff\xfe2\n" + b"0,1\n" * 10, "byte 13", "not UTF-8"),
    ],
)
def test_csv_malformed_files(tmp_path, content, where, what):
    path = tmp_path / "m.csv"
    path.write_bytes(content)
    with pytest.raises(RecordingError, match=f"{where}: .*{what}"):
        open_recording(path, Columns(signals=("gx",), time_column="t")).read_all()


def test_unknown_extension_and_missing_file(tmp_path):
    with pytest.raises(RecordingError, match="no such file"):
        open_recording(tmp_path / "nope.csv", COLS)
    other = tmp_path / "x.bin"
    other.write_bytes(b"123")
    with pytest.raises(InputError, match=r"\.csv, \.wav or \.npy"):
        open_recording(other, COLS)


@pytest.mark.parametrize("dtype, scale", [(np.int16, 32768.0), (np.int32, 2.0**31), (np.float32, 1.0)])
def test_wav_types_are_scaled_to_full_scale_one(tmp_path, dtype, scale):
    from scipy.io import wavfile

    raw = np.array([[0, 1000], [-2000, 3000], [100, -100]], dtype=np.float64)
    data = (raw / 4000.0 * (scale if dtype != np.float32 else 1.0)).astype(dtype)
    path = tmp_path / "s.wav"
    wavfile.write(path, 8000, data)
    rec = open_recording(path, Columns())
    assert rec.sample_rate_hz == 8000.0 and rec.full_scale == 1.0
    assert rec.signal_names == ("ch0", "ch1")
    got = rec.read_all().signals
    # integer samples divided by 2^(bits-1) (derived)
    np.testing.assert_allclose(got, data.astype(np.float64) / (scale if dtype != np.float32 else 1.0),
                               rtol=1e-6)
    one = open_recording(path, Columns(signals=("1",))).read_all().signals
    np.testing.assert_allclose(one[:, 0], got[:, 1])


def test_wav_malformed(tmp_path):
    path = tmp_path / "bad.wav"
    path.write_bytes(b"RIFX" + b"\x00" * 40)
    with pytest.raises(RecordingError, match=r"bad\.wav, byte 0: not a RIFF/WAV"):
        open_recording(path, Columns())
    path.write_bytes(b"RIFF\x24\x00\x00\x00AVI " + b"\x00" * 40)
    with pytest.raises(RecordingError, match="byte 8: a RIFF file but not WAVE"):
        open_recording(path, Columns())
    path.write_bytes(b"RIFF\x24\x00\x00\x00WAVEfmt \x10\x00\x00\x00" + b"\x01\x00")
    with pytest.raises(RecordingError, match="cut short"):
        open_recording(path, Columns())


def test_wav_channel_out_of_range(tmp_path):
    from scipy.io import wavfile

    path = tmp_path / "m.wav"
    wavfile.write(path, 1000, np.zeros(10, dtype=np.int16))
    with pytest.raises(InputError, match="channel numbers 0–0"):
        open_recording(path, Columns(signals=("3",)))


def test_npy_plain_and_structured(tmp_path):
    arr = np.arange(12, dtype=np.float64).reshape(6, 2)
    plain = tmp_path / "p.npy"
    np.save(plain, arr)
    rec = open_recording(plain, Columns(sample_rate_hz=100.0))
    np.testing.assert_array_equal(rec.read_all().signals, arr)
    blocks = list(rec.blocks(block_rows=4))
    assert [b.signals.shape[0] for b in blocks] == [4, 2]
    rec = open_recording(plain, Columns(signals=("1",), sample_rate_hz=100.0))
    np.testing.assert_array_equal(rec.read_all().signals[:, 0], arr[:, 1])
    st = np.zeros(3, dtype=[("t", "f8"), ("gx", "f4"), ("rpm", "f8")])
    st["t"], st["gx"], st["rpm"] = [0, 0.01, 0.02], [1, 2, 3], [600, 600, 1200]
    sp = tmp_path / "s.npy"
    np.save(sp, st)
    blk = open_recording(sp, Columns(signals=("gx",), time_column="t", rpm_columns=("rpm",))).read_all()
    np.testing.assert_allclose(blk.rotor_hz, [10.0, 10.0, 20.0])  # rpm/60 (derived)
    np.testing.assert_allclose(blk.signals[:, 0], [1, 2, 3])


def test_npy_malformed(tmp_path):
    path = tmp_path / "bad.npy"
    path.write_bytes(b"\x93NUMPY\x01\x00garbage")
    with pytest.raises(RecordingError, match=r"bad\.npy, header: unreadable"):
        open_recording(path, Columns(sample_rate_hz=10.0))
    obj = tmp_path / "obj.npy"
    np.save(obj, np.array(["a", "b"]))
    with pytest.raises(RecordingError, match="unsupported array type"):
        open_recording(obj, Columns(sample_rate_hz=10.0))
