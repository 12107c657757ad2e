"""End to end: the shipped example builds against a hand computation written out here.

For every build in ``examples/`` the test resolves the build by hand (reading the
TOML and the catalog files itself, converting units with the factors below),
then computes, without the library's drive, atmosphere or margin code:

- ISA density at the field altitude (REFERENCES.md §6, US Standard Atmosphere 1976),
- the pack voltage per pack state (DESIGN.md step 1; chemistries REFERENCES.md §7),
- the hover rotor rate from N·C_T·ρ·n²·D⁴ = m·g (DESIGN.md step 6, REFERENCES.md §5),
- the throttle at a rotor rate, by ``scipy.optimize.brentq`` on the steady-state
  equation d·V = Ke·ω + I·(R_m + N·d²·R_pack), I = I0 + kq·ω²/Ke (DESIGN.md step 5),
- the required margin from the API rule (REFERENCES.md §1),

and compares hover and the 1× crossings and window edges with the JSON of
``clashcheck check --format json``.
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import pytest

from clashcheck.cli import main

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((REPO / "examples").glob("*.toml"))
CATALOGS = REPO / "clashcheck" / "catalogs"
STATES = ("full", "nominal", "empty")

# Unit factors to SI, written out (NIST SP 811: 1 in = 0.0254 m exactly; 60 rpm = 1 rev/s)
FACTORS = {
    "rpm/V": 1 / 60, "mohm": 1e-3, "ohm": 1.0, "A": 1.0, "V": 1.0, "in": 0.0254, "mm": 1e-3, "m": 1.0,
    "g": 1e-3, "kg": 1.0, "Hz": 1.0, "kHz": 1e3, "%": 0.01, "K": 1.0,
}
G_N = 9.80665  # standard gravity, ISO 80000-3


def si(text: str) -> float:
    number, unit = text.split()
    return float(number) * FACTORS[unit]


def _catalog(kind: str, table: str) -> dict[str, dict]:
    data = tomllib.loads((CATALOGS / f"{kind}.toml").read_text(encoding="utf-8"))
    return {item["id"]: item for item in data[table]}


def _merged(raw: dict, kind: str, table: str) -> dict:
    if "catalog" not in raw:
        return dict(raw)
    out = dict(_catalog(kind, table)[raw["catalog"]])
    out.update({k: v for k, v in raw.items() if k != "catalog"})
    return out


def isa_density(z_m: float, dt_k: float) -> float:
    """ISA troposphere (REFERENCES.md §6): H = r·z/(r + z), T = 288.15 − 0.0065·H,
    p = 101325·(T/288.15)^5.25588, ρ = p/(R·(T + ΔT)), R = 287.05287, r = 6356766 m."""
    h = 6356766.0 * z_m / (6356766.0 + z_m)
    t = 288.15 - 0.0065 * h
    p = 101325.0 * (t / 288.15) ** 5.25588
    return p / (287.05287 * (t + dt_k))


def api_margin(zeta: float) -> float:
    """REFERENCES.md §1, mode-below curve applied symmetrically (DESIGN.md §9)."""
    af = 1 / (2 * zeta)
    return 0.0 if af < 2.5 else min(0.16, 0.17 * (1 - 1 / (af - 1.5)))


class HandBuild:
    """An example build resolved and computed by hand."""

    def __init__(self, path: Path):
        doc = tomllib.loads(path.read_text(encoding="utf-8"))
        frame = doc["frame"]
        base_frame = _catalog("frames", "frame")[frame["catalog"]] if "catalog" in frame else {}
        self.n = frame.get("motors", base_frame.get("motors"))
        self.mass_kg = si(frame["mass"])
        own = {m["name"]: m for m in frame.get("modes", [])}
        modes = [m for m in base_frame.get("modes", []) if m["name"] not in own] + list(own.values())
        check = doc.get("check", {})
        default_zeta = check.get("default_damping", 0.03)
        policy = check.get("policy", "damping")
        self.modes = {}
        for m in modes:
            zeta = m.get("damping", default_zeta)
            if policy == "fixed":
                sm = si(check["margin"])
            elif policy == "half-power":
                sm = zeta
            else:
                sm = api_margin(zeta)
            self.modes[m["name"]] = (si(m["frequency"]), sm)
        motor = _merged(doc["motor"], "motors", "motor")
        prop = _merged(doc["prop"], "props", "prop")
        battery = doc["battery"]
        chem = _catalog("batteries", "chemistry")[battery.get("chemistry", "lipo")]
        cells = battery["cells"]
        self.volts = {s: cells * si(battery.get(f"cell_{s}", chem[s])) for s in STATES}
        self.r_pack = cells * si(battery.get("cell_resistance", "0 ohm"))
        self.ke = 1 / (2 * math.pi * si(motor["kv"]))  # Ke = 60/(2π·Kv[rpm/V]), REFERENCES.md §4
        self.r_m = si(motor.get("resistance", "0 ohm"))
        self.i0 = si(motor.get("no_load_current", "0 A"))
        flight = doc.get("flight", {})
        self.idle = si(flight.get("idle", "4 %"))
        self.max = si(flight.get("max", "100 %"))
        self.stated_hover = si(flight["hover"]) if "hover" in flight else None
        self.rho = isa_density(si(flight.get("altitude", "0 m")), si(flight.get("temperature_offset", "0 K")))
        self.d_m = si(prop["diameter"])
        self.ct = prop.get("thrust_coefficient")
        cp = prop.get("power_coefficient")
        self.kq = 0.0 if cp is None else cp * self.rho * self.d_m**5 / (8 * math.pi**3)  # DESIGN.md step 3

    def residual(self, d: float, omega: float, state: str) -> float:
        current = self.i0 + self.kq * omega**2 / self.ke
        return d * self.volts[state] - self.ke * omega - current * (self.r_m + self.n * d**2 * self.r_pack)

    def throttle_at_hz(self, rotor_hz: float, state: str) -> float:
        """The smallest throttle with steady rotor rate ``rotor_hz``, by brentq (inf if none)."""
        from scipy.optimize import brentq

        omega = 2 * math.pi * rotor_hz
        current = self.i0 + self.kq * omega**2 / self.ke
        sag = self.n * self.r_pack * current
        top = self.volts[state] / (2 * sag) if sag > 0 else 10.0  # the residual's top in d
        if self.residual(top, omega, state) < 0:
            return math.inf
        return brentq(self.residual, 0.0, top, args=(omega, state), xtol=1e-15, rtol=1e-14)

    def hover_hz(self) -> float:
        return math.sqrt(self.mass_kg * G_N / (self.n * self.ct * self.rho * self.d_m**4))

    def hover_throttle(self, state: str) -> float:
        if self.stated_hover is not None:
            return self.stated_hover
        return self.throttle_at_hz(self.hover_hz(), state)


def _check_json(runner, path: Path) -> dict:
    result = runner.invoke(main, ["check", str(path), "--format", "json", "--fail-on", "never"])
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def _direct_1x(data: dict, mode: str, state: str) -> list[dict]:
    return [w for w in data["windows"] if w["mode"] == mode and w["pack_state"] == state
            and w["family"] == "rotor" and w["order"] == 1.0 and not w["aliased"]]


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_hover_matches_the_hand_computation(runner, path):
    hand = HandBuild(path)
    data = _check_json(runner, path)
    for state in STATES:
        if state not in data["hover"]:
            continue
        expected = hand.hover_throttle(state)
        got = data["hover"][state]["throttle"]
        if expected > 1.0:
            assert data["hover"][state]["can_hover"] is False
        else:
            assert got == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_1x_crossings_match_the_hand_computation(runner, path):
    hand = HandBuild(path)
    data = _check_json(runner, path)
    assert {m["name"] for m in data["modes"]} == set(hand.modes)
    compared = {s: 0 for s in STATES}
    for name, (f_m, sm) in hand.modes.items():
        for state in data["hover"]:
            windows = _direct_1x(data, name, state)
            if sm == 0.0:
                # REFERENCES.md §1: AF < 2.5 needs no margin, so the mode has no window at all
                assert not [w for w in data["windows"] if w["mode"] == name]
                continue
            crossing = hand.throttle_at_hz(f_m, state)
            low = max(hand.idle, hand.throttle_at_hz(f_m * (1 - sm), state))
            high = min(hand.max, hand.throttle_at_hz(f_m * (1 + sm), state))
            if not low < high:
                assert windows == []
                continue
            assert len(windows) == 1
            w = windows[0]
            assert w["required_margin"] == pytest.approx(sm, rel=1e-12)
            assert w["throttle_low"] == pytest.approx(low, rel=1e-9)
            assert w["throttle_high"] == pytest.approx(high, rel=1e-9)
            if hand.idle <= crossing <= hand.max:
                assert w["crossing_throttle"] == pytest.approx(crossing, rel=1e-9)
                compared[state] += 1
            else:
                assert w["crossing_throttle"] is None
    if any(sm > 0 for _, sm in hand.modes.values()) and data["verdict"] != "clear":
        assert all(compared[s] >= 1 for s in data["hover"]), compared
    # a clear build: the hand computation puts every 1× margin band outside [idle, max] (checked above)


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_examples_run_in_every_format(runner, path):
    for fmt in ("table", "markdown", "json"):
        result = runner.invoke(main, ["check", str(path), "--format", fmt])
        assert result.exit_code in (0, 1), result.output
        assert "propellers removed" in result.stdout.lower() or "props off" in result.stdout.lower()


def test_examples_cover_clash_and_clear(runner):
    # issue 2 §7: at least three demo builds; at least one has a clash and one is clear
    verdicts = {p.stem: _check_json(runner, p)["verdict"] for p in EXAMPLES}
    assert len(EXAMPLES) >= 3
    assert "clash" in verdicts.values() and "clear" in verdicts.values()


def test_freestyle_hand_numbers(runner):
    """The numbers of the hand computation for examples/freestyle-5in.toml, written out (derived).

    If the demo build changes, recompute these with HandBuild and update the comment.
    """
    hand = HandBuild(REPO / "examples" / "freestyle-5in.toml")
    data = _check_json(runner, REPO / "examples" / "freestyle-5in.toml")
    # ρ at geometric 20 m (ISA): 1.222650 kg/m³
    assert hand.rho == pytest.approx(1.222650, abs=5e-7)
    # pack: 6 lipo cells → 25.20 / 22.20 / 21.00 V; R_pack = 6 × 3 mΩ = 18 mΩ
    assert [hand.volts[s] for s in STATES] == pytest.approx([25.2, 22.2, 21.0])
    # hover: n = √(0.690·9.80665 / (4 · C_T · ρ · D⁴)) = HOVER_HZ; throttles per pack state below
    assert hand.hover_hz() == pytest.approx(HOVER_HZ, rel=1e-6)
    assert data["hover"]["nominal"]["rotor_hz"] == pytest.approx(HOVER_HZ, rel=1e-6)
    for state, d in zip(STATES, HOVER_THROTTLE):
        assert hand.hover_throttle(state) == pytest.approx(d, abs=1e-6)
        assert data["hover"][state]["throttle"] == pytest.approx(d, abs=1e-6)
    # 1× window of "arm flap, roll" (235 Hz, ζ 0.030 → AF 16.7 → SM 15.88 %) per pack state
    f_m, sm = hand.modes["arm flap, roll"]
    assert (f_m, sm) == pytest.approx((235.0, 0.158791), abs=1e-6)
    for state, d, low in zip(STATES, ROLL_1X_CROSSING, ROLL_1X_LOW):
        assert hand.throttle_at_hz(f_m, state) == pytest.approx(d, abs=1e-6)
        assert hand.throttle_at_hz(f_m * (1 - sm), state) == pytest.approx(low, abs=1e-6)
        window = _direct_1x(data, "arm flap, roll", state)[0]
        assert window["crossing_throttle"] == pytest.approx(d, abs=1e-6)
        assert window["throttle_low"] == pytest.approx(low, abs=1e-6)
        # the window starts above hover but inside the dwell zone, hover ± 3 points (the default spread)
        hover = data["hover"][state]["throttle"]
        assert hover < window["throttle_low"] < hover + DWELL_SPREAD
    roll = next(m for m in data["modes"] if m["name"] == "arm flap, roll")
    assert roll["verdict"] == "clash"
    assert all(m["verdict"] != "clash" for m in data["modes"] if m["name"] != "arm flap, roll")
    assert data["verdict"] == "clash"


# Hand-computed values for examples/freestyle-5in.toml (derived, from HandBuild above):
#   inputs: frame "freestyle-5in-a" (4 motors), m = 0.690 kg; motor "2207-1950kv": Kv 1950 rpm/V →
#   Ke = 60/(2π·1950) = 0.00489708 V·s/rad, R_m = 64 mΩ, I0 = 1.1 A; prop "5in-3b-mid": D = 5.1 in =
#   0.12954 m, C_T 0.150, C_P 0.085; 6 lipo cells at 3 mΩ; field 20 m → ρ = 1.222650 kg/m³;
#   kq = C_P ρ D⁵/(8π³) = 1.52827e-8 N·m·s².
#   hover: n = √(0.690 · 9.80665 / (4 · 0.150 · 1.222650 · 0.12954⁴)) = 180.98828 rev/s;
#   throttle (brentq on the steady state) full 0.234839, nominal 0.266842, empty 0.282239.
#   "arm flap, roll" 235 Hz, ζ 0.030 → AF 16.67 → SM = 17 %·(1 − 1/15.17) = 15.879 %;
#   1× crossing (235 rev/s) at throttle full 0.309167, nominal 0.351667, empty 0.372164; the window
#   starts at 235·(1 − SM) rev/s, throttle full 0.257515, nominal 0.292685, empty 0.309617: 2.3 to
#   2.7 points above hover, inside the 3-point dwell spread (DESIGN.md verdict): the demo's CLASH.
HOVER_HZ = 180.98828
HOVER_THROTTLE = (0.234839, 0.266842, 0.282239)
ROLL_1X_CROSSING = (0.309167, 0.351667, 0.372164)
ROLL_1X_LOW = (0.257515, 0.292685, 0.309617)
DWELL_SPREAD = 0.03  # the documented default [flight] dwell_spread (DESIGN.md, README)
