"""The runner: small records, friction figures where present, worker failures as results."""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from clashcheck.fleet.runner import Workers, _mode_record


def _mode(**extra):
    return SimpleNamespace(name="mode 1", frequency_hz=172.0, damping=0.03, damping_low=0.02, damping_high=0.04,
                           axis="any", confidence=0.9, **extra)


def test_friction_figures_are_read_from_the_damping_against_amplitude_result():
    amp = SimpleNamespace(viscous_damping=0.02, friction_drop_per_cycle=0.004)
    r = _mode_record(_mode(amplitude_damping=amp))
    assert (r.viscous_damping, r.friction_drop_per_cycle) == (0.02, 0.004)


def test_friction_figures_on_the_mode_itself_or_absent():
    assert _mode_record(_mode(viscous_damping=0.01, friction_drop_per_cycle=0.0)).viscous_damping == 0.01
    r = _mode_record(_mode())
    assert r.viscous_damping is None and r.friction_drop_per_cycle is None and r.frequency_hz == 172.0


def _boom(x: int) -> int:
    if x == 2:
        raise RuntimeError("worker lost")
    return x * 10


def test_a_failed_worker_becomes_a_result_and_the_others_complete():
    pytest.importorskip("dask.distributed")
    with Workers(jobs=2, scheduler="local", processes=False) as w:
        out = sorted(w.map_unordered(_boom, [1, 2, 3], lambda item, exc: (item, str(exc))), key=str)
    assert out == [(2, "worker lost"), 10, 30]


def test_jobs_must_be_positive():
    from clashcheck.errors import InputError

    with pytest.raises(InputError, match="jobs"):
        Workers(jobs=0)


def test_in_process_map_keeps_order():
    with Workers() as w:
        assert list(w.map_unordered(_boom, [1, 3])) == [10, 30]
