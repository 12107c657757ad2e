"""The fleet end to end on recordings generated here: store, re-runs, errors, workers, drift.

The tap-test generator below is the test's own (not ``clashcheck.identify.synth``):
each impact rings three damped modes, h(t) = e^{−ζωt} sin(ω_d t) (Rao,
Mechanical Vibrations 5th ed. §2.6, free response of an underdamped SDOF
system), with the conditions of a real tap test on a bench: the impacts vary in
strength and spacing, some are double hits, the loudest clip the converter,
50 Hz mains hum and noise are added, and the samples are 16-bit integers.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import sqlite3
from pathlib import Path

import numpy as np
import pytest

from clashcheck.cli import main
from clashcheck.fleet.pipeline import analyse_fleet, assess_fleet, plan_fleet
from clashcheck.fleet.store import Store
from clashcheck.inputs.manifest import load_manifest

RATE_HZ = 4000
#: (frequency Hz, damping, gain) of the generated frame's modes (stated for the test).
MODES = ((180.0, 0.025, 1.0), (290.0, 0.03, 0.8), (455.0, 0.035, 0.6))
BUILD = """name = "test quad"
[frame]
motors = 4
mass = "700 g"
[[frame.modes]]
name = "arm flap"
frequency = "180 Hz"
damping = 0.025
[[frame.modes]]
name = "arm torsion"
frequency = "290 Hz"
damping = 0.03
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


def tap_wav(path: Path, modes, seed: int) -> None:
    """Write a 16-bit WAV tap test of ``modes`` ((f, ζ, gain), ...)."""
    from scipy.io import wavfile

    rng = np.random.default_rng(seed)
    n = int(3.6 * RATE_HZ)
    t = np.arange(n) / RATE_HZ
    x = np.zeros(n)
    starts = 0.2 + 0.8 * np.arange(4) + rng.uniform(-0.03, 0.03, 4)
    for k, t0 in enumerate(starts):
        hits = [(t0, rng.uniform(0.7, 1.3))]
        if k == 2:  # a double hit: the hammer bounced
            hits.append((t0 + 0.012, 0.3))
        for th, a in hits:
            tau = t - th
            on = tau >= 0
            for f, z, g in modes:
                wn = 2 * math.pi * f
                wd = wn * math.sqrt(1 - z * z)
                x[on] += a * g * np.exp(-z * wn * tau[on]) * np.sin(wd * tau[on])
    x *= 0.5 / np.max(np.abs(x))
    x[: int(1.6 * RATE_HZ)] *= 1.5  # the first two taps were hard: their peaks clip at 0.6
    x = np.clip(x, -0.6, 0.6)
    x += 0.004 * np.sin(2 * math.pi * 50.0 * t + rng.uniform(0, 6.28))  # mains hum
    x += 3e-4 * rng.standard_normal(n)
    wavfile.write(path, RATE_HZ, np.round(x * 32767).astype(np.int16))


def aircraft_modes(change: str, i: int, rng: np.random.Generator):
    """One recording's modes: 0.3 % frequency and 8 % damping scatter; a change from the 9th on."""
    common = 0.002 * rng.standard_normal()
    out = []
    for j, (f, z, g) in enumerate(MODES):
        f = f * (1 + common + 0.002 * rng.standard_normal())
        z = z * math.exp(0.08 * rng.standard_normal())
        if i >= 8 and j == 0 and change == "drop":
            f *= 0.96
        if i >= 8 and j == 0 and change == "slip":
            z *= 1.9
        out.append((f, z, g))
    return out


def write_fleet(root: Path, plan: dict[str, str], n: int = 9) -> Path:
    """A fleet under ``root``: aircraft id → change ("none", "drop", "slip"); returns the manifest."""
    (root / "quad.toml").write_text(BUILD, encoding="utf-8")
    lines = []
    for a, (ident, change) in enumerate(plan.items()):
        rng = np.random.default_rng(1000 + a)
        (root / ident).mkdir(exist_ok=True)
        lines += ["[[aircraft]]", f'id = "{ident}"', 'build = "quad.toml"']
        for i in range(n):
            day = dt.date(2026, 9, 1) + dt.timedelta(days=7 * i)
            tap_wav(root / ident / f"{i:02d}.wav", aircraft_modes(change, i, rng), seed=100 * a + i)
            lines += ["[[aircraft.recordings]]", f'path = "{ident}/{i:02d}.wav"', f"date = {day}",
                      'kind = "tap"', 'max_frequency = "1 kHz"']
    manifest = root / "fleet.toml"
    manifest.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return manifest


@pytest.fixture(scope="module")
def small_fleet(tmp_path_factory) -> Path:
    return write_fleet(tmp_path_factory.mktemp("fleet"), {"A-1": "none", "A-2": "drop", "A-3": "slip"})


@pytest.fixture(scope="module")
def fleet_run(small_fleet):
    """The small fleet analysed once through the command line (store next to the manifest)."""
    from click.testing import CliRunner

    res = CliRunner().invoke(main, ["fleet", str(small_fleet), "--format", "json", "-q"])
    return res


def _run(manifest: Path, store_path: Path, **kw):
    fleet = load_manifest(manifest)
    with Store(store_path) as store:
        plan = plan_fleet(fleet, store)
        run = analyse_fleet(plan, store, **kw)
        return run, assess_fleet(fleet, store, plan, run)


def test_the_changed_aircraft_are_flagged_and_the_healthy_one_is_not(fleet_run):
    res = fleet_run
    assert res.exit_code == 1, res.output
    doc = json.loads(res.stdout)
    assert doc["schema_version"] == 1
    by_id = {a["id"]: a for a in doc["aircraft"]}
    assert {a for a, v in by_id.items() if v["flagged"]} == {"A-2", "A-3"}
    (drop,) = [f for f in by_id["A-2"]["findings"] if f["kind"] == "drift"]
    assert drop["mode"] == "arm flap" and drop["feature"] == "frequency_hz"
    assert drop["change_fraction"] == pytest.approx(-0.04, abs=0.01)
    assert drop["since"].startswith("2026-10-27")  # the 9th recording
    assert any(f["feature"] == "damping" for f in by_id["A-3"]["findings"])
    assert all(len(a["latest_modes"]) >= 2 for a in doc["aircraft"])
    assert {m["track"] for m in by_id["A-1"]["latest_modes"]} >= {"arm flap", "arm torsion"}


def test_a_rerun_analyses_nothing_and_a_new_recording_only_itself(small_fleet, fleet_run, tmp_path):
    root = tmp_path / "copy"
    for p in small_fleet.parent.rglob("*"):  # the fleet and its store, as the first run left them
        if p.is_file():
            (root / p.relative_to(small_fleet.parent)).parent.mkdir(parents=True, exist_ok=True)
            (root / p.relative_to(small_fleet.parent)).write_bytes(p.read_bytes())
    manifest, store = root / "fleet.toml", root / "fleet-store.sqlite"
    assert json.loads(fleet_run.stdout)["run"]["analysed"] == 27
    again, _ = _run(manifest, store)
    assert (again.analysed, again.reused) == (0, 27)
    tap_wav(root / "A-1" / "09.wav", MODES, seed=999)
    with manifest.open("a", encoding="utf-8") as fh:
        fh.write('\n[[aircraft]]\nid = "A-4"\nbuild = "quad.toml"\n[[aircraft.recordings]]\n'
                 'path = "A-1/09.wav"\ndate = 2026-12-01\nkind = "tap"\nmax_frequency = "1 kHz"\n')
    third, result = _run(manifest, store)
    assert (third.analysed, third.reused) == (1, 27)
    assert result.aircraft[-1].drift.status == "baseline"


def test_a_corrupt_recording_is_reported_and_the_others_complete(small_fleet, tmp_path, runner):
    root = tmp_path / "bad"
    root.mkdir()
    (root / "quad.toml").write_text(BUILD, encoding="utf-8")
    good = small_fleet.parent / "A-1"
    lines = ['[[aircraft]]', 'id = "B-1"', 'build = "quad.toml"']
    for i in range(3):
        (root / f"{i}.wav").write_bytes((good / f"0{i}.wav").read_bytes())
    (root / "1.wav").write_bytes(b"RIFF\x00\x00\x00\x00WAVEjunk")  # truncated header
    for i in range(3):
        lines += ["[[aircraft.recordings]]", f'path = "{i}.wav"', f"date = 2026-09-0{i + 1}", 'kind = "tap"']
    (root / "fleet.toml").write_text("\n".join(lines) + "\n", encoding="utf-8")
    res = runner.invoke(main, ["fleet", str(root / "fleet.toml"), "--format", "json", "-q"])
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert doc["run"] == {"analysed": 3, "failed": 1, "reused": 0, "elapsed_s": doc["run"]["elapsed_s"]}
    (err,) = doc["aircraft"][0]["errors"]
    assert err["recording"] == "1.wav" and "\n" not in err["error"] and err["error"]
    assert doc["aircraft"][0]["latest_recording"] == "2.wav"
    table = runner.invoke(main, ["fleet", str(root / "fleet.toml"), "-q"])
    assert "failed: 1.wav:" in table.stdout


def _figures(result):
    return {(a.id, label, m.name): (m.frequency_hz, m.damping, m.damping_low, m.damping_high, m.axis)
            for a in result.aircraft for label, m in a.latest_modes} | {
        (a.id, "findings"): tuple((f.mode, f.feature, f.latest_value, f.limit_fraction)
                                  for f in a.drift.findings) for a in result.aircraft}


def _small(small_fleet: Path, tmp_path: Path) -> Path:
    """Two aircraft of the small fleet with their first two recordings (a quick fleet)."""
    src = load_manifest(small_fleet)
    lines = []
    for ac in src.aircraft[:2]:
        lines += ["[[aircraft]]", f'id = "{ac.id}"', f'build = "{ac.build_path}"']
        for r in ac.recordings[:2]:
            lines += ["[[aircraft.recordings]]", f'path = "{r.path}"', f"date = {r.date.date()}", 'kind = "tap"']
    path = tmp_path / "small.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_a_two_worker_local_cluster_gives_the_serial_results_exactly(small_fleet, tmp_path):
    pytest.importorskip("dask.distributed")  # in the test extra; the fleet extra for users
    manifest = _small(small_fleet, tmp_path)
    _, serial = _run(manifest, tmp_path / "serial.sqlite")
    run, cluster = _run(manifest, tmp_path / "cluster.sqlite", jobs=2, scheduler="local", processes=False)
    assert run.analysed == 4
    assert _figures(cluster) == _figures(serial)


def test_local_processes_give_the_serial_results_exactly(small_fleet, tmp_path):
    manifest = _small(small_fleet, tmp_path)
    _, serial = _run(manifest, tmp_path / "serial.sqlite")
    _, procs = _run(manifest, tmp_path / "procs.sqlite", jobs=2)
    assert _figures(procs) == _figures(serial)


def test_the_store_follows_its_documented_schema(small_fleet, tmp_path):
    manifest = _small(small_fleet, tmp_path)
    _run(manifest, tmp_path / "s.sqlite")
    db = sqlite3.connect(tmp_path / "s.sqlite")
    assert db.execute("SELECT value FROM meta WHERE key='schema_version'").fetchone() == ("1",)
    assert db.execute("SELECT count(*), sum(ok) FROM analyses").fetchone() == (4, 4)
    cols = [r[1] for r in db.execute("PRAGMA table_info(modes)")]
    assert cols[:6] == ["content_sha256", "settings_key", "idx", "name", "frequency_hz", "damping"]
    assert db.execute("SELECT count(*) FROM modes WHERE frequency_hz BETWEEN 170 AND 190").fetchone()[0] == 4
    db.close()


def test_scheduler_without_dask_says_what_to_install(small_fleet, tmp_path, runner, monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "dask.distributed", None)  # as if not installed
    res = runner.invoke(main, ["fleet", str(_small(small_fleet, tmp_path)), "--scheduler", "local", "-q",
                               "--store", str(tmp_path / "x.sqlite")])
    assert res.exit_code == 2
    assert "pip install 'clashcheck[fleet]'" in res.stderr and "Traceback" not in res.output


def test_the_store_is_never_an_input(small_fleet, tmp_path, runner):
    manifest = _small(small_fleet, tmp_path)
    res = runner.invoke(main, ["fleet", str(manifest), "--store", str(manifest), "-q"])
    assert res.exit_code == 2 and "refusing to overwrite an input" in res.stderr


def test_a_running_cluster_by_address_gives_the_serial_results(small_fleet, tmp_path, runner, monkeypatch):
    """DASK_SCHEDULER_ADDRESS names a running scheduler (here on the loopback address)."""
    dd = pytest.importorskip("dask.distributed")
    manifest = _small(small_fleet, tmp_path)
    serial = runner.invoke(main, ["fleet", str(manifest), "--store", str(tmp_path / "a.sqlite"),
                                  "--format", "json", "-q"])
    with dd.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp",
                         host="127.0.0.1", dashboard_address=":0") as cluster:
        monkeypatch.setenv("DASK_SCHEDULER_ADDRESS", cluster.scheduler_address)
        remote = runner.invoke(main, ["fleet", str(manifest), "--store", str(tmp_path / "b.sqlite"),
                                      "--format", "json", "-q"])
    assert serial.exit_code == remote.exit_code == 0, remote.output
    a, b = json.loads(serial.stdout), json.loads(remote.stdout)
    assert b["run"]["analysed"] == 4
    assert [x["latest_modes"] for x in a["aircraft"]] == [x["latest_modes"] for x in b["aircraft"]]
