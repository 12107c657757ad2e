"""Arm bending modes from beam theory, for builds with nothing measured.

An arm is modelled as an Euler–Bernoulli cantilever of uniform section,
clamped at the centre body and carrying the motor (plus propeller and
hardware) as a mass at its free end.  Two bending planes are solved:

``flap``
    out of the frame's plane (the arm's ``thickness`` is the bending depth);
``lead-lag``
    in the frame's plane (the arm's ``width`` is the bending depth).

The model
---------
**Exact equation.**  The natural frequencies come from the exact frequency
equation of a cantilever with a tip mass (Karnovsky & Lebed, *Formulas for
Structural Dynamics*, 2004, §7.5.3, table 7.6)::

    1 + cos λ cosh λ + μλ(cos λ sinh λ − sin λ cosh λ) = 0,   μ = M/(ρAL)

extended by the tip's rotary inertia J, with j = J/(ρAL³)::

    … − jλ³(cosh λ sin λ + sinh λ cos λ) + μjλ⁴(1 − cos λ cosh λ) = 0

The rotary-inertia terms were derived here from the tip boundary conditions
EI·y''(L) = ω²J·y'(L) and EI·y'''(L) = −ω²M·y(L); the form matches the one
recalled for the published case (Laura, Pombo & Susemihl, J. Sound Vib.,
1974; recalled from memory, not checked against the paper).  The tests hold it
against the boundary-condition determinant and a finite-element model.  Roots
are bracketed on a fine scan for sign changes and refined with
:func:`scipy.optimize.brentq`.  Then f = λ²/(2πL²)·√(EI/(ρA)).

**Clamp.**  By default the clamp is rigid, and the result says so.  Two
optional corrections exist, and only one may be given:

- ``clamp_stiffness``: a rotational spring at the root, in N·m/rad.  The
  equation is then the 4 × 4 boundary-condition determinant of the beam with a
  root spring, a tip mass and a tip rotary inertia, solved the same way.
- ``effective_length_factor``: the arm is modelled as a rigidly clamped beam
  of length ``factor × length`` (factor from 1 to 2), the trade's way of
  accounting for a clamp that lets the root rotate.

**Rayleigh cross-check.**  The first mode of each plane is also estimated
with Rayleigh's quotient on the static-deflection shape: k = 3EI/L³ and
m_eff = M + (33/140)·m (with a root spring and rotary inertia the same shape is
used, with their terms added).  It is an upper bound; the relative difference
from the exact root is reported.  With a point tip mass it reads at most
1.465 % high (the bare beam); a large tip rotary inertia makes the static
shape a poorer guess and the difference grows (about 10 % at j = 0.5, μ = 0).

**Tip.**  The tip body's centre is taken at the beam's end; its rotary
inertia (``tip_inertia``, about its own centre) is used for both planes.
Clamp stiffness is read per radian, a radian counting as 1 as in SI.

**Uncertainty.**  The material catalog gives low, nominal and high modulus
and density.  The low frequency takes (E low, ρ high), the high frequency
(E high, ρ low).  A stiffer beam raises every natural frequency and a denser
one (more mass everywhere, same tip) lowers every one, so these two corners
bound the frequency over the whole box of material data.

**Left out.**  Shear deformation and the section's own rotary inertia
(Timoshenko effects; they matter for stubby arms, which get a note), the
motor's height above the arm, gyroscopic effects of a spinning propeller, and
the motion of the centre body and the other arms: the clamp is fixed ground.

Section and material rules
--------------------------
- A rectangular section has ``width`` (in the frame's plane) and ``thickness``
  (out of it).  The thickness may not exceed the width: flat arms cut from
  plate are wider than thick, and a larger thickness almost always means the
  two were swapped, which would swap the flap and lead-lag estimates.
- A round tube has ``outer_diameter`` and ``wall``; the wall must be less
  than the outer radius.  Both planes then give the same frequencies.
- ``material`` names a catalog entry (``catalogs/materials.toml``).  An
  explicit ``modulus`` or ``density`` overrides the catalog's value and is
  taken as exact: that property's range collapses to the given value, while
  the other keeps its catalog range.  Without ``material`` both ``modulus``
  and ``density`` are required and the estimate has no material range.

This module is pure computation; scipy is imported inside the functions that
use it.  The material catalog is read through :mod:`clashcheck.catalog`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import MISSING, InputError
from .modes import Mode

__all__ = [
    "PLANES",
    "SECTIONS",
    "ARM_KEYS",
    "MAX_FREQUENCY_HZ",
    "Material",
    "ArmGeometry",
    "ArmModeEstimate",
    "ArmEstimate",
    "estimate_arm",
    "estimated_modes",
    "tip_mass_equation",
    "frequency_parameters",
    "beam_frequency_hz",
    "rayleigh_frequency_hz",
]

#: Bending planes: out of the frame's plane, and in it.
PLANES = ("flap", "lead-lag")
#: Cross-section kinds.
SECTIONS = ("rectangular", "tube")
#: Keys a ``[frame.arm]`` table may hold.
ARM_KEYS = (
    "length",
    "width",
    "thickness",
    "outer_diameter",
    "wall",
    "material",
    "modulus",
    "density",
    "shear_modulus",
    "tip_mass",
    "tip_inertia",
    "clamp_stiffness",
    "effective_length_factor",
)
#: Modes whose low estimate lies at or above this are not reported [Hz].
MAX_FREQUENCY_HZ = 2000.0

#: Gyro axis each plane shows on: flap tilts the craft (roll and pitch on an
#: X layout), lead-lag turns it about the vertical axis.
_PLANE_AXIS = {"flap": "any", "lead-lag": "yaw"}
#: Below this length-to-depth ratio shear deformation starts to matter.
_SLENDER_RATIO = 10.0
_EQUATION_SOURCE = "Karnovsky & Lebed 2004 §7.5.3"
_TIP_MASS_ORIGINS = ("given", "motor + prop")
_GROUND_NOTE = (
    "The centre body is taken as fixed ground; the motion of the body and the other arms, "
    "the motor's height above the arm and propeller gyroscopic effects are left out."
)


# --------------------------------------------------------------------------
# Result and input dataclasses


def _check_positive(value: float, field_name: str, expected: str, *, length: bool = False) -> None:
    if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
        raise InputError(field_name, expected, _shown(value) if length else value)


def _shown(value_m: object) -> object:
    """A length in metres as the text a user would write, for error messages."""
    if isinstance(value_m, (int, float)) and math.isfinite(value_m):
        return f"{value_m * 1e3:g} mm"
    return value_m


@dataclass(frozen=True)
class Material:
    """An arm material with the spread of its data.

    Examples
    --------
    >>> m = Material("custom", "test", 200e9, 200e9, 200e9, 7850.0, 7850.0, 7850.0)
    >>> m.has_range
    False
    """

    #: Catalog id, or ``"custom"`` for explicit values.
    id: str
    #: One line saying what the material is.
    description: str
    #: Nominal Young's modulus along the arm [Pa].
    modulus_pa: float
    #: Lowest plausible modulus [Pa].
    modulus_low_pa: float
    #: Highest plausible modulus [Pa].
    modulus_high_pa: float
    #: Nominal density [kg/m³].
    density_kg_m3: float
    #: Lowest plausible density [kg/m³].
    density_low_kg_m3: float
    #: Highest plausible density [kg/m³].
    density_high_kg_m3: float
    #: Where the figures came from (citation, or "typical ...").
    source: str = ""
    #: Nominal shear modulus for torsion of the arm [Pa]; ``None`` when not
    #: known (only the frame model, :mod:`clashcheck.model.frame`, needs it).
    shear_modulus_pa: float | None = None

    def __post_init__(self) -> None:
        where = f"material {self.id!r}"
        if self.shear_modulus_pa is not None:
            _check_positive(self.shear_modulus_pa, f"{where}.shear_modulus",
                            "a shear modulus above 0 Pa")
        for name, low, mid, high, unit in (
            ("modulus", self.modulus_low_pa, self.modulus_pa, self.modulus_high_pa, "Pa"),
            ("density", self.density_low_kg_m3, self.density_kg_m3, self.density_high_kg_m3,
             "kg/m^3"),
        ):
            for value in (low, mid, high):
                _check_positive(value, f"{where}.{name}", f"a {name} above 0 {unit}")
            if not low <= mid <= high:
                raise InputError(
                    f"{where}.{name}", f"{name}_low ≤ {name} ≤ {name}_high", (low, mid, high)
                )

    @property
    def has_range(self) -> bool:
        """True when modulus or density carries a spread."""
        return (self.modulus_low_pa, self.density_low_kg_m3) != (
            self.modulus_high_pa,
            self.density_high_kg_m3,
        )


@dataclass(frozen=True)
class ArmGeometry:
    """One arm: free length, cross-section, material, tip load and clamp.

    Validates itself; error messages name fields under :attr:`where`
    (``"frame.arm"`` when read from a build file).

    Examples
    --------
    >>> steel = Material("custom", "steel", 200e9, 200e9, 200e9, 7850.0, 7850.0, 7850.0)
    >>> arm = ArmGeometry(1.0, steel, 0.0, width_m=0.01, thickness_m=0.01)
    >>> round(arm.section_properties("flap")[1] * 1e12, 3)   # I in mm⁴
    833.333
    """

    #: Free length from the clamp to the motor centre [m].
    length_m: float
    #: Arm material.
    material: Material
    #: Mass at the tip: motor, propeller and hardware [kg].
    tip_mass_kg: float
    #: ``"rectangular"`` (width × thickness) or ``"tube"`` (outer_diameter, wall).
    section: str = "rectangular"
    #: Rectangular section: size in the frame's plane [m].
    width_m: float | None = None
    #: Rectangular section: size out of the frame's plane [m].
    thickness_m: float | None = None
    #: Tube: outer diameter [m].
    outer_diameter_m: float | None = None
    #: Tube: wall thickness [m].
    wall_m: float | None = None
    #: Rotary inertia of the tip body about its centre, for rotation in the
    #: bending plane [kg·m²]; 0 treats the tip as a point mass.  The same value
    #: is used for both planes.
    tip_inertia_kg_m2: float = 0.0
    #: Rotational stiffness of the clamp [N·m/rad]; ``None`` for none given.
    clamp_stiffness_n_m_per_rad: float | None = None
    #: Effective-length factor (1 to 2); ``None`` for none given.
    effective_length_factor: float | None = None
    #: Where the tip mass came from: ``"given"`` or ``"motor + prop"``.
    tip_mass_origin: str = "given"
    #: Dotted path used in error messages.
    where: str = field(default="arm", compare=False)

    def __post_init__(self) -> None:
        w = self.where
        _check_positive(self.length_m, f"{w}.length", "a free length above 0 m, like '110 mm'",
                        length=True)
        if not isinstance(self.material, Material):
            raise InputError(f"{w}.material", "a Material", self.material)
        if not (math.isfinite(self.tip_mass_kg) and self.tip_mass_kg >= 0):
            raise InputError(f"{w}.tip_mass", "a tip mass of 0 g or more", self.tip_mass_kg)
        if not (math.isfinite(self.tip_inertia_kg_m2) and self.tip_inertia_kg_m2 >= 0):
            raise InputError(
                f"{w}.tip_inertia", "a rotary inertia of 0 kg*m^2 or more", self.tip_inertia_kg_m2
            )
        if self.tip_mass_origin not in _TIP_MASS_ORIGINS:
            raise InputError(
                f"{w}.tip_mass_origin", "one of " + ", ".join(_TIP_MASS_ORIGINS),
                self.tip_mass_origin,
            )
        if self.section == "rectangular":
            self._check_rectangle()
        elif self.section == "tube":
            self._check_tube()
        else:
            raise InputError(f"{w}.section", "one of " + ", ".join(SECTIONS), self.section)
        depth = max(self.depth_m(p) for p in PLANES)
        if depth >= self.length_m:
            raise InputError(
                f"{w}.length",
                "a length larger than the section's size (a beam)",
                _shown(self.length_m),
                f"the section is {depth * 1e3:g} mm deep",
            )
        if self.clamp_stiffness_n_m_per_rad is not None:
            _check_positive(
                self.clamp_stiffness_n_m_per_rad,
                f"{w}.clamp_stiffness",
                "a rotational stiffness above 0, like '150 N*m/rad'",
            )
        if self.effective_length_factor is not None:
            factor = self.effective_length_factor
            if not (math.isfinite(factor) and 1.0 <= factor <= 2.0):
                raise InputError(
                    f"{w}.effective_length_factor", "a number from 1 to 2", factor
                )
            if self.clamp_stiffness_n_m_per_rad is not None:
                raise InputError(
                    f"{w}.effective_length_factor",
                    "either clamp_stiffness or effective_length_factor, not both",
                    factor,
                    "both describe the same clamp flexibility",
                )

    def _check_rectangle(self) -> None:
        w = self.where
        if self.outer_diameter_m is not None or self.wall_m is not None:
            raise InputError(
                f"{w}.outer_diameter", "no tube sizes on a rectangular section",
                self.outer_diameter_m,
            )
        for name, value in (("width", self.width_m), ("thickness", self.thickness_m)):
            if value is None:
                raise InputError(f"{w}.{name}", f"a {name} like '5 mm'", MISSING)
            _check_positive(value, f"{w}.{name}", f"a {name} above 0 m", length=True)
        assert self.width_m is not None and self.thickness_m is not None
        if self.thickness_m > self.width_m:
            raise InputError(
                f"{w}.thickness",
                f"a thickness no larger than the width ({self.width_m * 1e3:g} mm)",
                _shown(self.thickness_m),
                "thickness is the size out of the frame's plane and width the size in it; "
                "were they swapped?",
            )

    def _check_tube(self) -> None:
        w = self.where
        if self.width_m is not None or self.thickness_m is not None:
            raise InputError(f"{w}.width", "no width/thickness on a tube", self.width_m)
        for name, value in (("outer_diameter", self.outer_diameter_m), ("wall", self.wall_m)):
            if value is None:
                raise InputError(f"{w}.{name}", f"a tube {name} like '1 mm'", MISSING)
            _check_positive(value, f"{w}.{name}", f"a tube {name} above 0 m", length=True)
        assert self.outer_diameter_m is not None and self.wall_m is not None
        if self.wall_m >= self.outer_diameter_m / 2.0:
            raise InputError(
                f"{w}.wall",
                f"a wall thinner than the outer radius ({self.outer_diameter_m * 500:g} mm)",
                _shown(self.wall_m),
                "a tube needs a bore",
            )

    @property
    def clamp_rigid(self) -> bool:
        """True when no clamp correction was given (the clamp is taken as rigid)."""
        return self.clamp_stiffness_n_m_per_rad is None and self.effective_length_factor is None

    @property
    def model_length_m(self) -> float:
        """Length of the modelled beam: the free length times any effective-length factor [m]."""
        return self.length_m * (self.effective_length_factor or 1.0)

    def depth_m(self, plane: str) -> float:
        """Section size in the bending direction of ``plane`` [m].

        Parameters
        ----------
        plane : str
            ``flap`` or ``lead-lag``.

        Returns
        -------
        float
            Section depth in that bending plane [m].
        """
        _check_plane(plane)
        if self.section == "tube":
            assert self.outer_diameter_m is not None
            return self.outer_diameter_m
        assert self.width_m is not None and self.thickness_m is not None
        return self.thickness_m if plane == "flap" else self.width_m

    def section_properties(self, plane: str) -> tuple[float, float]:
        """Area [m²] and second moment of area [m⁴] for bending in ``plane``.

        Rectangle: A = w·t; flap I = w·t³/12, lead-lag I = t·w³/12.  Tube:
        A = π(D² − d²)/4 and I = π(D⁴ − d⁴)/64 in both planes, d = D − 2·wall.

        Parameters
        ----------
        plane : str
            ``flap`` or ``lead-lag``.
        """
        _check_plane(plane)
        if self.section == "tube":
            assert self.outer_diameter_m is not None and self.wall_m is not None
            outer = self.outer_diameter_m
            inner = outer - 2.0 * self.wall_m
            return math.pi * (outer**2 - inner**2) / 4.0, math.pi * (outer**4 - inner**4) / 64.0
        assert self.width_m is not None and self.thickness_m is not None
        b, t = self.width_m, self.thickness_m
        if plane == "flap":
            return b * t, b * t**3 / 12.0
        return b * t, t * b**3 / 12.0

    def beam_mass_kg(self, density_kg_m3: float | None = None) -> float:
        """Mass of the free length of arm (nominal density unless given) [kg].

        Parameters
        ----------
        density_kg_m3 : float, optional
            Material density [kg/m³]; the material's nominal density when omitted.

        Returns
        -------
        float
            Mass of the free length [kg].
        """
        rho = self.material.density_kg_m3 if density_kg_m3 is None else density_kg_m3
        return rho * self.section_properties("flap")[0] * self.length_m


def _check_plane(plane: str) -> None:
    if plane not in PLANES:
        raise InputError("plane", "one of " + ", ".join(PLANES), plane)


@dataclass(frozen=True)
class ArmModeEstimate:
    """One estimated arm bending mode, with its material spread."""

    #: Mode name, e.g. ``"arm flap (est.)"`` or ``"arm lead-lag 2 (est.)"``.
    name: str
    #: ``"flap"`` or ``"lead-lag"``.
    plane: str
    #: 1 for the first mode of the plane, 2 for the second.
    mode_index: int
    #: Nominal natural frequency [Hz].
    frequency_hz: float
    #: Frequency at low modulus and high density [Hz].
    frequency_low_hz: float
    #: Frequency at high modulus and low density [Hz].
    frequency_high_hz: float
    #: Root λ of the frequency equation at nominal material (dimensionless).
    frequency_parameter: float
    #: Rayleigh estimate at nominal material [Hz]; first mode only, else None.
    rayleigh_hz: float | None
    #: (Rayleigh − exact)/exact, as a fraction; first mode only, else None.
    rayleigh_difference: float | None
    #: How the figure was computed, in words.
    method: str

    def __post_init__(self) -> None:
        _check_plane(self.plane)
        if not (isinstance(self.mode_index, int) and self.mode_index >= 1):
            raise InputError(f"{self.name}.mode_index", "a mode number from 1", self.mode_index)
        if not (0 < self.frequency_low_hz <= self.frequency_hz <= self.frequency_high_hz
                and math.isfinite(self.frequency_high_hz)):
            raise InputError(
                f"{self.name}.frequency",
                "low ≤ nominal ≤ high, all above 0 Hz",
                (self.frequency_low_hz, self.frequency_hz, self.frequency_high_hz),
            )


@dataclass(frozen=True)
class ArmEstimate:
    """Result of :func:`estimate_arm`: the modes found and what was assumed."""

    #: The arm that was estimated.
    geometry: ArmGeometry
    #: Modes below the frequency limit, flap first, in mode order.
    estimates: tuple[ArmModeEstimate, ...]
    #: Assumptions and omissions, one sentence each, for the report.
    notes: tuple[str, ...]
    #: Modes whose low estimate lies at or above this were dropped [Hz].
    max_frequency_hz: float = MAX_FREQUENCY_HZ

    @property
    def material(self) -> Material:
        """The arm's material."""
        return self.geometry.material

    @property
    def tip_mass_kg(self) -> float:
        """Tip mass [kg]."""
        return self.geometry.tip_mass_kg

    @property
    def beam_mass_kg(self) -> float:
        """Mass of the free length of arm at nominal density [kg].

        The physical free length; with an effective-length factor the modelled
        beam is longer and heavier by that factor.
        """
        return self.geometry.beam_mass_kg()

    @property
    def mass_ratio(self) -> float:
        """μ = tip mass / beam mass at nominal density (dimensionless)."""
        return self.tip_mass_kg / self.beam_mass_kg

    @property
    def clamp_rigid(self) -> bool:
        """True when the clamp was taken as rigid."""
        return self.geometry.clamp_rigid


# --------------------------------------------------------------------------
# The beam equations


def tip_mass_equation(
    lam: np.ndarray | float, mass_ratio: float, inertia_ratio: float = 0.0
) -> np.ndarray | float:
    """Left side of the cantilever-with-tip-mass frequency equation.

    1 + cos λ cosh λ + μλ(cos λ sinh λ − sin λ cosh λ)
    − jλ³(cosh λ sin λ + sinh λ cos λ) + μjλ⁴(1 − cos λ cosh λ)

    Karnovsky & Lebed (2004) §7.5.3 for j = 0; the rotary-inertia terms are
    derived from the tip boundary conditions (see the module notes).

    Parameters
    ----------
    lam : float or array
        Frequency parameter λ = L·(ω²ρA/EI)^¼ (dimensionless).
    mass_ratio : float
        μ = tip mass / beam mass (dimensionless).
    inertia_ratio : float, optional
        j = tip rotary inertia / (beam mass · L²) (dimensionless).

    Returns
    -------
    float or array
        Zero at the natural frequencies.

    Examples
    --------
    >>> abs(tip_mass_equation(1.87510407, 0.0)) < 1e-6
    True
    """
    lam = np.asarray(lam, dtype=float)
    c, s, ch, sh = np.cos(lam), np.sin(lam), np.cosh(lam), np.sinh(lam)
    mu, j = mass_ratio, inertia_ratio
    out = (
        1.0
        + c * ch
        + mu * lam * (c * sh - s * ch)
        - j * lam**3 * (ch * s + sh * c)
        + mu * j * lam**4 * (1.0 - c * ch)
    )
    return float(out) if out.ndim == 0 else out


def _boundary_determinant(
    lam: np.ndarray, mass_ratio: float, inertia_ratio: float, root_flexibility: float
) -> np.ndarray:
    """Determinant of the boundary conditions with a root spring, scaled by cosh λ.

    Mode shape Y(ξ) = A cosh λξ + B sinh λξ + C cos λξ + D sin λξ on ξ = x/L.
    Rows (each divided by a power of λ so that λ = 0 is not a trivial root):
    Y(0) = 0; Y'(0) = φ·Y''(0) with φ = EI/(k_θ L); Y''(1) = jλ⁴·Y'(1);
    Y'''(1) = −μλ⁴·Y(1).  With φ = 0 it equals twice :func:`tip_mass_equation`.
    """
    lam = np.asarray(lam, dtype=float)
    c, s, ch, sh = np.cos(lam), np.sin(lam), np.cosh(lam), np.sinh(lam)
    mu, j, phi = mass_ratio, inertia_ratio, root_flexibility
    one, zero = np.ones_like(lam), np.zeros_like(lam)
    rows = [
        [one, zero, one, zero],
        [-phi * lam, one, phi * lam, one],
        [ch - j * lam**3 * sh, sh - j * lam**3 * ch, -c + j * lam**3 * s, -s - j * lam**3 * c],
        [sh + mu * lam * ch, ch + mu * lam * sh, s + mu * lam * c, -c + mu * lam * s],
    ]
    matrix = np.moveaxis(np.array(rows), (0, 1), (-2, -1))
    return np.linalg.det(matrix) / ch


def frequency_parameters(
    mass_ratio: float = 0.0,
    inertia_ratio: float = 0.0,
    root_flexibility: float = 0.0,
    count: int = 2,
) -> tuple[float, ...]:
    """The first roots λ₁ < λ₂ < … of the arm's frequency equation.

    Parameters
    ----------
    mass_ratio : float, optional
        μ = tip mass / beam mass (dimensionless, ≥ 0).
    inertia_ratio : float, optional
        j = tip rotary inertia / (beam mass · L²) (dimensionless, ≥ 0).
    root_flexibility : float, optional
        φ = EI/(k_θ·L) for a clamp of rotational stiffness k_θ [N·m/rad];
        0 for a rigid clamp (dimensionless, ≥ 0).
    count : int, optional
        How many roots (1 to 6).

    Returns
    -------
    tuple of float
        The roots, ascending.  f_i = λ_i²/(2πL²)·√(EI/(ρA)).

    Notes
    -----
    Adding mass, inertia or flexibility only lowers the roots, so each lies
    below the bare cantilever's; the scan runs from 10⁻⁴ to (count + ½)π + 1
    in steps of 0.005 and :func:`scipy.optimize.brentq` refines each sign
    change.

    Examples
    --------
    >>> [round(x, 6) for x in frequency_parameters(count=2)]
    [1.875104, 4.694091]
    >>> round(frequency_parameters(1.0, count=1)[0], 6)
    1.247917
    """
    from scipy.optimize import brentq

    for name, value in (("mass_ratio", mass_ratio), ("inertia_ratio", inertia_ratio),
                        ("root_flexibility", root_flexibility)):
        if not (math.isfinite(value) and value >= 0):
            raise InputError(name, "a number of 0 or more", value)
    if not (isinstance(count, int) and 1 <= count <= 6):
        raise InputError("count", "a whole number from 1 to 6", count)

    if root_flexibility == 0.0:
        def func(x: Any) -> Any:
            return tip_mass_equation(x, mass_ratio, inertia_ratio) / np.cosh(x)
    else:
        def func(x: Any) -> Any:
            out = _boundary_determinant(np.atleast_1d(x), mass_ratio, inertia_ratio,
                                        root_flexibility)
            return out if np.ndim(x) else float(out[0])

    top = (count + 0.5) * math.pi + 1.0
    grid = np.concatenate([np.geomspace(1e-4, 0.5, 400, endpoint=False),
                           np.arange(0.5, top, 0.005)])
    values = func(grid)
    signs = np.signbit(values)
    cells = np.nonzero(signs[:-1] != signs[1:])[0]
    roots = []
    for i in cells[:count]:
        roots.append(float(brentq(func, grid[i], grid[i + 1], xtol=1e-14, rtol=1e-15)))
    if len(roots) < count:  # pragma: no cover - the bound above makes this unreachable
        raise ArithmeticError(f"found {len(roots)} of {count} roots below λ = {top:.2f}")
    return tuple(roots)


def beam_frequency_hz(
    lam: float,
    length_m: float,
    modulus_pa: float,
    second_moment_m4: float,
    density_kg_m3: float,
    area_m2: float,
) -> float:
    """Natural frequency f = λ²/(2πL²)·√(EI/(ρA)) (Blevins table 8-1).

    Parameters
    ----------
    lam : float
        Root of the frequency equation (dimensionless).
    length_m : float
        Beam length [m].
    modulus_pa : float
        Young's modulus [Pa].
    second_moment_m4 : float
        Second moment of area about the bending axis [m⁴].
    density_kg_m3 : float
        Density [kg/m³].
    area_m2 : float
        Cross-section area [m²].

    Returns
    -------
    float
        Frequency [Hz].

    Examples
    --------
    >>> round(beam_frequency_hz(1.87510407, 1.0, 200e9, 1e-8 / 12, 7850.0, 1e-4), 4)
    8.1538
    """
    return lam**2 / (2.0 * math.pi * length_m**2) * math.sqrt(
        modulus_pa * second_moment_m4 / (density_kg_m3 * area_m2)
    )


def rayleigh_frequency_hz(
    length_m: float,
    modulus_pa: float,
    second_moment_m4: float,
    beam_mass_kg: float,
    tip_mass_kg: float,
    tip_inertia_kg_m2: float = 0.0,
    clamp_stiffness_n_m_per_rad: float | None = None,
) -> float:
    """Rayleigh estimate of the first bending frequency, static-deflection shape.

    Rigid clamp, point tip: k = 3EI/L³ and m_eff = M + (33/140)·m
    (REFERENCES.md §3, derived).  A root spring k_θ adds a tip deflection
    L²/k_θ per unit tip force (shape a·(3ξ² − ξ³)/2 + b·ξ, normalised), and a
    rotary inertia J adds J·y'(L)² to the kinetic energy.

    Parameters
    ----------
    length_m : float
        Beam length [m].
    modulus_pa : float
        Young's modulus [Pa].
    second_moment_m4 : float
        Second moment of area [m⁴].
    beam_mass_kg : float
        Mass of the beam, ρAL [kg].
    tip_mass_kg : float
        Tip mass [kg].
    tip_inertia_kg_m2 : float, optional
        Tip rotary inertia [kg·m²].
    clamp_stiffness_n_m_per_rad : float, optional
        Rotational stiffness of the clamp [N·m/rad]; None for a rigid clamp.

    Returns
    -------
    float
        Frequency [Hz]; never below the exact first frequency.

    Examples
    --------
    >>> round(rayleigh_frequency_hz(1.0, 200e9, 1e-8 / 12, 0.785, 0.785), 5)
    3.61336
    """
    bend = length_m**3 / (3.0 * modulus_pa * second_moment_m4)  # tip deflection per newton
    turn = 0.0 if clamp_stiffness_n_m_per_rad is None else length_m**2 / clamp_stiffness_n_m_per_rad
    total = bend + turn
    a, b = bend / total, turn / total
    # ∫₀¹ y² dξ for y = a·(3ξ² − ξ³)/2 + b·ξ: 33/140, 11/40 and 1/3 (derived)
    shape_mass = a * a * 33.0 / 140.0 + 2.0 * a * b * 11.0 / 40.0 + b * b / 3.0
    slope = (1.5 * a + b) / length_m  # y'(L) per unit tip deflection
    m_eff = tip_mass_kg + beam_mass_kg * shape_mass + tip_inertia_kg_m2 * slope**2
    return math.sqrt(1.0 / (total * m_eff)) / (2.0 * math.pi)


# --------------------------------------------------------------------------
# Estimate


def estimate_arm(
    geometry: ArmGeometry,
    *,
    max_frequency_hz: float = MAX_FREQUENCY_HZ,
    modes_per_plane: int = 2,
) -> ArmEstimate:
    """Estimate the arm's flap and lead-lag bending modes.

    Parameters
    ----------
    geometry : ArmGeometry
        The arm.
    max_frequency_hz : float, optional
        Modes whose low estimate lies at or above this are left out [Hz].
    modes_per_plane : int, optional
        How many modes to solve per plane (1 to 6).

    Returns
    -------
    ArmEstimate
        Modes (flap first, then lead-lag, in mode order) and notes.

    Examples
    --------
    >>> steel = Material("custom", "steel", 200e9, 200e9, 200e9, 7850.0, 7850.0, 7850.0)
    >>> arm = ArmGeometry(1.0, steel, 0.785, width_m=0.01, thickness_m=0.01)
    >>> est = estimate_arm(arm)
    >>> round(est.estimates[0].frequency_hz, 4)
    3.6114
    """
    _check_positive(max_frequency_hz, "max_frequency", "a frequency above 0 Hz")
    mat = geometry.material
    corners = {
        "nominal": (mat.modulus_pa, mat.density_kg_m3),
        "low": (mat.modulus_low_pa, mat.density_high_kg_m3),
        "high": (mat.modulus_high_pa, mat.density_low_kg_m3),
    }
    length = geometry.model_length_m
    found: list[ArmModeEstimate] = []
    notes = list(_notes(geometry))
    for plane in PLANES:
        area, inertia = geometry.section_properties(plane)
        freqs: dict[str, list[float]] = {}
        lams: dict[str, tuple[float, ...]] = {}
        for corner, (modulus, density) in corners.items():
            beam_mass = density * area * length
            flexibility = 0.0
            if geometry.clamp_stiffness_n_m_per_rad is not None:
                flexibility = modulus * inertia / (geometry.clamp_stiffness_n_m_per_rad * length)
            lams[corner] = frequency_parameters(
                geometry.tip_mass_kg / beam_mass,
                geometry.tip_inertia_kg_m2 / (beam_mass * length**2),
                flexibility,
                count=modes_per_plane,
            )
            freqs[corner] = [
                beam_frequency_hz(lam, length, modulus, inertia, density, area)
                for lam in lams[corner]
            ]
        modulus, density = corners["nominal"]
        rayleigh = rayleigh_frequency_hz(
            length, modulus, inertia, density * area * length, geometry.tip_mass_kg,
            geometry.tip_inertia_kg_m2, geometry.clamp_stiffness_n_m_per_rad,
        )
        for i in range(modes_per_plane):
            low, nominal, high = freqs["low"][i], freqs["nominal"][i], freqs["high"][i]
            if low >= max_frequency_hz:
                notes.append(
                    f"{plane} mode {i + 1} (from {low:.0f} Hz) lies above "
                    f"{max_frequency_hz:.0f} Hz and is not reported."
                )
                continue
            first = i == 0
            found.append(
                ArmModeEstimate(
                    name=f"arm {plane}{'' if first else f' {i + 1}'} (est.)",
                    plane=plane,
                    mode_index=i + 1,
                    frequency_hz=nominal,
                    frequency_low_hz=low,
                    frequency_high_hz=high,
                    frequency_parameter=lams["nominal"][i],
                    rayleigh_hz=rayleigh if first else None,
                    rayleigh_difference=(rayleigh - nominal) / nominal if first else None,
                    method=_method(geometry),
                )
            )
    notes.append(_GROUND_NOTE)
    return ArmEstimate(geometry, tuple(found), tuple(notes), float(max_frequency_hz))


def _method(geometry: ArmGeometry) -> str:
    parts = ["exact cantilever frequency equation"]
    parts.append("with tip mass" + (" and rotary inertia" if geometry.tip_inertia_kg_m2 else ""))
    if geometry.clamp_stiffness_n_m_per_rad is not None:
        parts.append("and a root spring (boundary-condition determinant)")
    elif geometry.effective_length_factor is not None:
        parts.append(f"on an effective length × {geometry.effective_length_factor:g}")
    return " ".join(parts) + f", Euler–Bernoulli ({_EQUATION_SOURCE})"


def _notes(geometry: ArmGeometry) -> list[str]:
    notes = []
    if geometry.clamp_stiffness_n_m_per_rad is not None:
        notes.append(
            f"Clamp modelled as a rotational spring of "
            f"{geometry.clamp_stiffness_n_m_per_rad:g} N·m/rad."
        )
    elif geometry.effective_length_factor is not None:
        notes.append(
            f"Clamp flexibility modelled by an effective length of "
            f"{geometry.effective_length_factor:g} × the free length."
        )
    else:
        notes.append(
            "Clamp taken as rigid (no clamp_stiffness or effective_length_factor given); "
            "a real clamp lets the root turn, so the true frequencies are lower."
        )
    if geometry.tip_mass_origin == "motor + prop":
        notes.append(
            f"Tip mass {geometry.tip_mass_kg * 1e3:.4g} g is the motor plus propeller mass; "
            "screws, nuts and wiring are not included."
        )
    if geometry.tip_inertia_kg_m2 == 0.0:
        notes.append("Tip rotary inertia not given: the tip is taken as a point mass.")
    else:
        notes.append("Tip rotary inertia included, with the same value in both planes.")
    mat = geometry.material
    if not mat.has_range:
        notes.append("Modulus and density are exact as given: the estimate has no material range.")
    elif mat.modulus_low_pa == mat.modulus_high_pa:
        notes.append("Modulus given explicitly: no range taken for it.")
    elif mat.density_low_kg_m3 == mat.density_high_kg_m3:
        notes.append("Density given explicitly: no range taken for it.")
    if geometry.section == "tube":
        notes.append("Round tube: flap and lead-lag estimates are the same.")
    for plane in PLANES:
        ratio = geometry.model_length_m / geometry.depth_m(plane)
        if ratio < _SLENDER_RATIO:
            notes.append(
                f"{plane}: length is only {ratio:.1f} × the section depth; shear deformation is "
                "left out, so this plane's estimates may read a few per cent high."
            )
    return notes


def estimated_modes(estimate: ArmEstimate) -> tuple[Mode, ...]:
    """The estimate's modes as :class:`~clashcheck.modes.Mode` objects for ``check``.

    Each mode has ``origin="estimated"``, ``kind="arm"``, no damping (the
    build's default damping is then used and marked as assumed), and the
    material spread as its frequency range.  Flap modes show on any axis
    (roll and pitch), lead-lag modes on yaw.

    Parameters
    ----------
    estimate : ArmEstimate
        The arm estimate.

    Examples
    --------
    >>> steel = Material("custom", "steel", 200e9, 200e9, 200e9, 7850.0, 7850.0, 7850.0)
    >>> arm = ArmGeometry(1.0, steel, 0.785, width_m=0.01, thickness_m=0.01)
    >>> [m.name for m in estimated_modes(estimate_arm(arm))]
    ['arm flap (est.)', 'arm flap 2 (est.)', 'arm lead-lag (est.)', 'arm lead-lag 2 (est.)']
    """
    mat = estimate.material
    out = []
    for est in estimate.estimates:
        out.append(
            Mode(
                name=est.name,
                frequency_hz=est.frequency_hz,
                frequency_low_hz=est.frequency_low_hz,
                frequency_high_hz=est.frequency_high_hz,
                damping=None,
                kind="arm",
                axis=_PLANE_AXIS[est.plane],
                origin="estimated",
                source=f"beam estimate ({mat.id}, {est.plane} mode {est.mode_index})",
                details={"plane": est.plane, "method": est.method,
                         "clamp_rigid": estimate.clamp_rigid},
            )
        )
    return tuple(out)
