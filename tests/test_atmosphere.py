"""Tests of clashcheck.model.atmosphere: ISA troposphere density."""

from __future__ import annotations

import math

import numpy as np
import pytest

from clashcheck.errors import InputError
from clashcheck.model.atmosphere import geopotential_height_m, isa_density

# REFERENCES.md §6: US Standard Atmosphere 1976 / ISO 2533 troposphere (same formulas)
R_AIR = 287.05287  # J/(kg·K)


@pytest.mark.parametrize(
    "geopotential_m, rho",
    [
        (0.0, 1.2250),  # REFERENCES.md §6 check values (US Std Atm 1976)
        (1000.0, 1.111643),
        (2000.0, 1.006490),
    ],
)
def test_formula_values_at_geopotential_height(geopotential_m, rho):
    # the table is rounded to 6 decimals (1.1116425 sits on a rounding edge): ±1e-6
    assert isa_density(geopotential_m, geometric=False) == pytest.approx(rho, abs=1e-6)


def test_pressure_at_1000_m():
    # REFERENCES.md §6: p = 89874.6 Pa at geopotential 1000 m; p = ρ·R·T with T = 288.15 − 6.5 K
    rho = isa_density(1000.0, geometric=False)
    assert rho * R_AIR * (288.15 - 6.5) == pytest.approx(89874.6, abs=0.05)


def test_geometric_1000_m():
    # REFERENCES.md §6: at geometric 1000 m, ρ = 1.111660 (ambiance / ICAO 1993)
    assert isa_density(1000.0) == pytest.approx(1.111660, abs=5e-7)


@pytest.mark.parametrize("h_m", [0.0, 350.0, 1000.0, 2500.0, 4000.0, 6000.0, 8000.0, 10000.0])
def test_against_ambiance(h_m):
    # reference library: ambiance (ICAO 1993, same troposphere); it takes geometric height
    from ambiance import Atmosphere

    expected = float(np.asarray(Atmosphere(h_m).density).reshape(-1)[0])
    assert isa_density(h_m, geometric=True) == pytest.approx(expected, rel=1e-4)


@pytest.mark.parametrize("h_m", [0.0, 1000.0, 5000.0, 11000.0])
def test_geopotential_height_against_ambiance(h_m):
    # reference library: ambiance's geometric → geopotential conversion (r = 6356766 m)
    from ambiance import Atmosphere

    expected = float(np.asarray(Atmosphere.geom2geop_height(h_m)).reshape(-1)[0])
    assert geopotential_height_m(h_m) == pytest.approx(expected, rel=1e-9, abs=1e-9)


def test_temperature_offset():
    # ISA + ΔT convention (DESIGN.md physics step 4): same pressure, warmer air:
    # ρ(ΔT) = ρ_std · T_std/(T_std + ΔT) (derived from ρ = p/(R T))
    t_std = 288.15 - 0.0065 * 500.0
    assert isa_density(500.0, 15.0, geometric=False) == pytest.approx(
        isa_density(500.0, geometric=False) * t_std / (t_std + 15.0), rel=1e-12
    )
    assert isa_density(0.0, -10.0) > isa_density(0.0)


def test_density_falls_with_height():
    values = [isa_density(h) for h in np.linspace(-500.0, 11000.0, 24)]
    assert all(a > b for a, b in zip(values, values[1:]))


@pytest.mark.parametrize(
    "args, field",
    [
        ((20000.0,), "flight.altitude"),
        ((-1000.0,), "flight.altitude"),
        ((math.nan,), "flight.altitude"),
        ((0.0, 100.0), "flight.temperature_offset"),
        ((0.0, -100.0), "flight.temperature_offset"),
    ],
)
def test_refusals(args, field):
    with pytest.raises(InputError) as info:
        isa_density(*args)
    assert info.value.field == field
