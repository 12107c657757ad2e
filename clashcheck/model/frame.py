"""The whole frame's modes: beam arms on a rigid centre body, free–free.

The model
---------
**Arms.**  Each arm is a straight Euler–Bernoulli beam of the ``[frame.arm]``
section and material, cut into ``elements_per_arm`` 12-degree-of-freedom
space-frame elements (axial, bending in two planes, torsion) with consistent
mass matrices (Przemieniecki, *Theory of Matrix Structural Analysis*, 1968,
ch. 5 and 11; REFERENCES.md §16).  Shear deformation and the section's own
rotary inertia in bending are left out (Euler–Bernoulli); the section's polar
inertia is kept for torsion.

**Section.**  Area and second moments come from
:meth:`~clashcheck.model.arm.ArmGeometry.section_properties`.  The torsion
constant is exact for a round tube, J = π(D⁴ − d⁴)/32, and for a solid
rectangle w × t (w ≥ t) it is Roark's closed form
J = w t³ [1/3 − 0.21 (t/w)(1 − t⁴/(12 w⁴))] (Roark's *Formulas for Stress and
Strain*, torsion table, solid rectangle; REFERENCES.md §16).  See
:func:`torsion_constant`.

**Body and joints.**  The centre body is rigid, with its reference point at
the origin: mass ``m`` on the three translations, and the diagonal inertia
about roll (x, to the nose), pitch (y, to the right) and yaw (z, down) on the
three rotations.  Each arm leaves the body at ``root_radius`` along its own
direction, in the body's plane (z = 0).  The arm's root node moves with the
body (translations and the twist about the arm's axis are tied to the body
exactly, by a transformation of the degrees of freedom, not by stiff
penalty springs).  Its two bending rotations are tied to the body too, unless
the arm has a ``clamp_stiffness``: then each is a free degree of freedom
joined to the body's rotation by a rotational spring of that stiffness, the
same value in both bending planes.

**Tips.**  The motor and propeller sit at the arm's tip node as a lumped mass
on the three translations and the ``tip_inertia`` on the three rotations (the
same value about every axis, as the arm estimate uses it in both planes).

**Solution.**  The generalized eigenproblem K φ = ω² M φ is solved with
:func:`scipy.linalg.eigh`.  The six lowest roots are the rigid-body modes of a
free–free structure (checked to be near zero); they are dropped, and the
elastic modes are reported.  Where several modes share one frequency (a
symmetric frame gives repeated roots), the solver's basis inside that
subspace is arbitrary; it is rotated so that each mode turns the body about
one axis at most (roll first, then pitch, then yaw), which keeps every mode
M-orthonormal and makes the gyro signature reproducible.

What each mode reports
----------------------
- ``plane``: which arm motion carries most of the mode's kinetic energy in
  the arms and tips: ``flap`` (out of the frame's plane), ``lead-lag`` (in
  the plane, across the arm), ``torsion`` (twist about the arm) or ``axial``.
- ``pattern``: the plane plus how the arms move against each other, from the
  projection of the arms' tip motion in that plane onto four patterns: all
  arms together; left against right (∝ sin of the arm angle); front against
  rear (∝ cos); and, for an even arm count, neighbours alternating (called
  "diagonals alternating" on four arms).  The name is the pattern holding the
  largest share; "mixed" when none holds half.
- ``gyro_signature``: the body's rotation about roll, pitch and yaw per unit
  modal coordinate (the shape M-normalised), times √(body inertia about that
  axis).  Modal velocity and body angular rate share the factor ω, so this is
  also the angular rate per unit modal velocity.  Normalised so: its squares
  are the shares of the mode's kinetic energy in the body's turning about
  each axis, and its length is at most 1; 0 means the gyro does not see the
  mode.  The sign is fixed so the largest component is positive.
- ``axis``: roll, pitch or yaw, whichever component is largest, or ``none``
  when every component is below :data:`AXIS_THRESHOLD`.
- ``effective_mass_kg``: the mass of the single-degree-of-freedom oscillator
  that has the mode's kinetic energy when it moves with the mode's largest
  displacement of any point of the arms or motors (translation, plus twist
  times the section's half-depth, plus the motor's rotation times its radius
  of gyration): for an M-normalised shape, 1/max|u|².  The usual
  base-excitation effective mass is zero for every elastic mode of a
  free–free structure (they are M-orthogonal to the rigid-body motions), so
  it is not given.

**Material spread.**  As in the arm estimate, each mode's low figure is
solved at (E low, ρ high) and its high figure at (E high, ρ low), matched to
the nominal modes by order; G follows E in proportion.

Left out: flexible plates, standoffs, the flight stack on its soft mounts,
the motor's height above the arm, propeller gyroscopic effects, shear
deformation, joint slip and damping.  Those are best added as measured modes.

This module is pure computation in SI; scipy is imported inside functions.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from contextlib import AbstractContextManager, nullcontext
from dataclasses import dataclass, field, replace

import numpy as np

from ..errors import InputError
from .arm import ArmGeometry, Material
from .modes import Mode

__all__ = [
    "AXIS_THRESHOLD",
    "DEFAULT_ELEMENTS",
    "MAX_ARMS",
    "MAX_ELEMENTS",
    "FRAME_AXES",
    "FrameBody",
    "FrameLayout",
    "FrameModel",
    "FrameMode",
    "FrameEstimate",
    "CalibrationPair",
    "Calibration",
    "box_inertia",
    "stretched_angles",
    "torsion_constant",
    "element_stiffness",
    "element_mass",
    "solve_frame",
    "estimate_frame",
    "frame_modes",
    "calibrate_frame",
]

#: Gyro axes a frame mode can show on; ``none`` when the body does not turn.
FRAME_AXES = ("roll", "pitch", "yaw", "none")
#: A gyro-signature component below this counts as no body rotation.
AXIS_THRESHOLD = 1e-3
#: Elements per arm unless told otherwise (the convergence test holds the
#: first eight frequencies within 0.1 % of a model with twice as many).
DEFAULT_ELEMENTS = 8
#: Most elements per arm accepted (bounds the matrix size).
MAX_ELEMENTS = 64
#: Most arms accepted.
MAX_ARMS = 16
#: Relative frequency difference under which modes are treated as repeated.
_REPEATED = 1e-6
_AXIS_NAMES = ("roll", "pitch", "yaw")
_PLANES = ("axial", "lead-lag", "flap", "torsion")
_ORIGINS_OF_INERTIA = ("given", "box")


def _one_thread() -> AbstractContextManager[object]:
    """Hold BLAS to one thread: on these small dense problems a threaded solver
    spends its time waiting, several times slower on two shared cores
    (bench/bench_frame.py).  A no-op without threadpoolctl."""
    import scipy.linalg  # noqa: F401 - load scipy's BLAS first: only loaded libraries are limited

    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - a core dependency
        return nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


def _finite_positive(value: object, field_name: str, expected: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not (
        math.isfinite(value) and value > 0
    ):
        raise InputError(field_name, expected, value)
    return float(value)


# --------------------------------------------------------------------------
# Input dataclasses


def box_inertia(mass_kg: float, length_m: float, width_m: float, height_m: float
                ) -> tuple[float, float, float]:
    """Inertia of a uniform box about its centre: roll, pitch, yaw [kg·m²].

    Parameters
    ----------
    mass_kg : float
        Box mass [kg].
    length_m, width_m, height_m : float
        Extent along x (to the nose), y (to the right) and z [m].

    Returns
    -------
    tuple of float
        (I_roll, I_pitch, I_yaw) = m/12 · (w² + h², l² + h², l² + w²).

    Examples
    --------
    >>> [round(x, 6) for x in box_inertia(12.0, 1.0, 2.0, 3.0)]
    [13.0, 10.0, 5.0]
    """
    m = mass_kg / 12.0
    return (m * (width_m**2 + height_m**2), m * (length_m**2 + height_m**2),
            m * (length_m**2 + width_m**2))


@dataclass(frozen=True)
class FrameBody:
    """The rigid centre body: everything but the arms, motors and propellers.

    Examples
    --------
    >>> FrameBody(0.31, (1.9e-3, 3.2e-3, 4.6e-3)).inertia_kg_m2[2]
    0.0046
    """

    #: Mass [kg].
    mass_kg: float
    #: Inertia about roll (x), pitch (y), yaw (z), through the origin [kg·m²].
    inertia_kg_m2: tuple[float, float, float]
    #: ``"given"``, or ``"box"`` when estimated by :func:`box_inertia`.
    inertia_origin: str = "given"
    #: Dotted path used in error messages.
    where: str = field(default="frame.body", compare=False)

    def __post_init__(self) -> None:
        _finite_positive(self.mass_kg, f"{self.where}.mass", "a body mass above 0 kg")
        if len(self.inertia_kg_m2) != 3:
            raise InputError(f"{self.where}.inertia", "three inertias: roll, pitch, yaw",
                             self.inertia_kg_m2)
        for value in self.inertia_kg_m2:
            _finite_positive(value, f"{self.where}.inertia", "inertias above 0 kg*m^2")
        roll, pitch, yaw = self.inertia_kg_m2
        # a rigid body's principal inertias obey the triangle inequality
        if max(self.inertia_kg_m2) > (sum(self.inertia_kg_m2) - max(self.inertia_kg_m2)) * (1 + 1e-9):
            raise InputError(
                f"{self.where}.inertia",
                "inertias where each is at most the sum of the other two (a real body)",
                f"{roll:g}, {pitch:g}, {yaw:g} kg*m^2",
            )
        if self.inertia_origin not in _ORIGINS_OF_INERTIA:
            raise InputError(f"{self.where}.inertia_origin",
                             "one of " + ", ".join(_ORIGINS_OF_INERTIA), self.inertia_origin)


def stretched_angles(arms: int, stretch: float = 1.0) -> tuple[float, ...]:
    """Arm directions of a symmetric layout, stretched along the nose [rad].

    The arms point at 180°/N + k·360°/N (k = 0 … N−1; on four arms the X at
    45°, 135°, 225°, 315°), measured from the nose towards the right.  A
    stretch s multiplies each direction's x component by s before
    normalising, so s > 1 spreads front and rear arms apart (more pitch
    inertia) and s < 1 spreads them sideways.

    Parameters
    ----------
    arms : int
        Arm count, 2 to :data:`MAX_ARMS`.
    stretch : float, optional
        Ratio of the layout's length (x) to its width (y) (dimensionless, > 0).

    Returns
    -------
    tuple of float
        Angles in radians, in [0, 2π).

    Examples
    --------
    >>> [round(math.degrees(a), 3) for a in stretched_angles(4)]
    [45.0, 135.0, 225.0, 315.0]
    >>> round(math.degrees(stretched_angles(4, 1.2)[0]), 3)
    39.806
    """
    if isinstance(arms, bool) or not isinstance(arms, int) or not 2 <= arms <= MAX_ARMS:
        raise InputError("arms", f"a whole number of arms from 2 to {MAX_ARMS}", arms)
    _finite_positive(stretch, "stretch", "a stretch above 0, like 1.2")
    out = []
    for k in range(arms):
        a = math.pi / arms + 2.0 * math.pi * k / arms
        out.append(math.atan2(math.sin(a), stretch * math.cos(a)) % (2.0 * math.pi))
    return tuple(out)


@dataclass(frozen=True)
class FrameLayout:
    """Where the arms leave the body.

    Examples
    --------
    >>> lay = FrameLayout(stretched_angles(4), 0.028)
    >>> lay.arms
    4
    """

    #: Each arm's direction in the x–y plane, from the nose towards the right [rad].
    angles_rad: tuple[float, ...]
    #: From the origin to where each arm leaves the body [m].
    root_radius_m: float
    #: Stretch used to make the angles, when they were not given (for the report).
    stretch: float | None = None
    #: Dotted path used in error messages.
    where: str = field(default="frame.layout", compare=False)

    def __post_init__(self) -> None:
        n = len(self.angles_rad)
        if not 2 <= n <= MAX_ARMS:
            raise InputError(f"{self.where}.angles", f"2 to {MAX_ARMS} arm directions", n)
        for a in self.angles_rad:
            if not math.isfinite(a):
                raise InputError(f"{self.where}.angles", "finite angles", a)
        if self.root_radius_m != 0.0:
            _finite_positive(self.root_radius_m, f"{self.where}.root_radius",
                             "a root radius of 0 mm or more")
        wrapped = sorted(a % (2 * math.pi) for a in self.angles_rad)
        gaps = np.diff(wrapped + [wrapped[0] + 2 * math.pi])
        if float(np.min(gaps)) < math.radians(1.0):
            raise InputError(f"{self.where}.angles", "arm directions at least 1 deg apart",
                             [f"{math.degrees(a):g} deg" for a in self.angles_rad])

    @property
    def arms(self) -> int:
        """Arm count."""
        return len(self.angles_rad)


@dataclass(frozen=True)
class FrameModel:
    """A frame: rigid body, layout, and one arm geometry used for every arm."""

    #: The arm (section, material, tip mass and inertia, clamp stiffness).
    arm: ArmGeometry
    #: The centre body.
    body: FrameBody
    #: Arm directions and root radius.
    layout: FrameLayout
    #: Beam elements per arm.
    elements_per_arm: int = DEFAULT_ELEMENTS

    def __post_init__(self) -> None:
        n = self.elements_per_arm
        if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= MAX_ELEMENTS:
            raise InputError("elements_per_arm", f"a whole number from 1 to {MAX_ELEMENTS}", n)
        if not isinstance(self.arm, ArmGeometry):
            raise InputError("frame.arm", "an ArmGeometry", self.arm)

    @property
    def shear_modulus_pa(self) -> float:
        """Nominal shear modulus: the material's, else E/(2(1+ν)) with ν = 0.3 [Pa]."""
        mat = self.arm.material
        if mat.shear_modulus_pa is not None:
            return mat.shear_modulus_pa
        return mat.modulus_pa / 2.6

    @property
    def span_m(self) -> float:
        """Root radius plus arm length: the distance from the origin to a tip [m]."""
        return self.layout.root_radius_m + self.arm.length_m

    def with_clamp(self, stiffness_n_m_per_rad: float | None) -> "FrameModel":
        """The same frame with another root-spring stiffness (``None`` for rigid)."""
        arm = replace(self.arm, clamp_stiffness_n_m_per_rad=stiffness_n_m_per_rad,
                      effective_length_factor=None)
        return replace(self, arm=arm)

    def with_modulus(self, modulus_pa: float) -> "FrameModel":
        """The same frame with another Young's modulus (G scaled in proportion)."""
        mat: Material = self.arm.material
        shear = self.shear_modulus_pa * modulus_pa / mat.modulus_pa
        new = replace(mat, modulus_pa=modulus_pa, modulus_low_pa=min(mat.modulus_low_pa, modulus_pa),
                      modulus_high_pa=max(mat.modulus_high_pa, modulus_pa), shear_modulus_pa=shear)
        return replace(self, arm=replace(self.arm, material=new))


# --------------------------------------------------------------------------
# Section and element matrices


def torsion_constant(arm: ArmGeometry) -> float:
    """Saint-Venant torsion constant of the arm's section [m⁴].

    Round tube, exact: J = π(D⁴ − d⁴)/32.  Solid rectangle w × t with w ≥ t,
    Roark's closed form: J = w t³ [1/3 − 0.21 (t/w)(1 − t⁴/(12 w⁴))]
    (Roark's *Formulas for Stress and Strain*, torsion table, solid
    rectangle; REFERENCES.md §16).

    Parameters
    ----------
    arm : ArmGeometry
        The arm.

    Returns
    -------
    float
        J [m⁴].

    Examples
    --------
    >>> mat = Material("custom", "x", 1e9, 1e9, 1e9, 1e3, 1e3, 1e3)
    >>> sq = ArmGeometry(0.1, mat, 0.0, width_m=0.01, thickness_m=0.01)
    >>> round(torsion_constant(sq) / 0.01**4, 4)   # Roark: 0.1406 for a square
    0.1408
    """
    if arm.section == "tube":
        assert arm.outer_diameter_m is not None and arm.wall_m is not None
        d_out = arm.outer_diameter_m
        d_in = d_out - 2.0 * arm.wall_m
        return math.pi * (d_out**4 - d_in**4) / 32.0
    assert arm.width_m is not None and arm.thickness_m is not None
    w, t = max(arm.width_m, arm.thickness_m), min(arm.width_m, arm.thickness_m)
    return w * t**3 * (1.0 / 3.0 - 0.21 * (t / w) * (1.0 - t**4 / (12.0 * w**4)))


def _bending_block(length: float) -> tuple[np.ndarray, np.ndarray]:
    """Stiffness (÷ EI/L³) and consistent mass (÷ ρAL/420) for (v1, θz1, v2, θz2)."""
    L = length
    k = np.array([[12, 6 * L, -12, 6 * L],
                  [6 * L, 4 * L * L, -6 * L, 2 * L * L],
                  [-12, -6 * L, 12, -6 * L],
                  [6 * L, 2 * L * L, -6 * L, 4 * L * L]], dtype=float)
    m = np.array([[156, 22 * L, 54, -13 * L],
                  [22 * L, 4 * L * L, 13 * L, -3 * L * L],
                  [54, 13 * L, 156, -22 * L],
                  [-13 * L, -3 * L * L, -22 * L, 4 * L * L]], dtype=float)
    return k, m


# local DOF order per node: u, v, w, θx, θy, θz
_XY = [1, 5, 7, 11]    # v1, θz1, v2, θz2: bending in the x–y plane (about z)
_XZ = [2, 4, 8, 10]    # w1, θy1, w2, θy2: bending in the x–z plane (about y)
_FLIP = np.diag([1.0, -1.0, 1.0, -1.0])  # θy = −dw/dx


def element_stiffness(length_m: float, modulus_pa: float, shear_modulus_pa: float,
                      area_m2: float, iy_m4: float, iz_m4: float, j_m4: float) -> np.ndarray:
    """12 × 12 Euler–Bernoulli space-frame stiffness in local axes (Przemieniecki ch. 5).

    Parameters
    ----------
    length_m : float
        Element length [m].
    modulus_pa, shear_modulus_pa : float
        E and G [Pa].
    area_m2 : float
        Section area [m²].
    iy_m4, iz_m4 : float
        Second moments about local y (bending in x–z) and z (bending in x–y) [m⁴].
    j_m4 : float
        Torsion constant [m⁴].

    Returns
    -------
    numpy.ndarray
        K, DOFs (u, v, w, θx, θy, θz) at node 1 then node 2 [N/m, N, N·m].

    Examples
    --------
    >>> k = element_stiffness(2.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0)
    >>> float(k[1, 1]), float(k[0, 0])   # 12EI/L³, EA/L
    (1.5, 0.5)
    """
    L = length_m
    k = np.zeros((12, 12))
    kb, _ = _bending_block(L)
    k[np.ix_(_XY, _XY)] = modulus_pa * iz_m4 / L**3 * kb
    k[np.ix_(_XZ, _XZ)] = modulus_pa * iy_m4 / L**3 * (_FLIP @ kb @ _FLIP)
    bar = np.array([[1.0, -1.0], [-1.0, 1.0]])
    k[np.ix_([0, 6], [0, 6])] = modulus_pa * area_m2 / L * bar
    k[np.ix_([3, 9], [3, 9])] = shear_modulus_pa * j_m4 / L * bar
    return k


def element_mass(length_m: float, density_kg_m3: float, area_m2: float, polar_m4: float
                 ) -> np.ndarray:
    """12 × 12 consistent mass matrix in local axes (Przemieniecki ch. 11).

    Bending and axial terms use the cubic and linear shape functions of the
    stiffness; torsion uses ρ·I_p·L/6·[[2, 1], [1, 2]] with the polar moment
    I_p = I_y + I_z.  The section's rotary inertia in bending is left out.

    Parameters
    ----------
    length_m : float
        Element length [m].
    density_kg_m3 : float
        Density [kg/m³].
    area_m2 : float
        Section area [m²].
    polar_m4 : float
        Polar second moment of area I_y + I_z [m⁴].

    Returns
    -------
    numpy.ndarray
        M [kg, kg·m, kg·m²].

    Examples
    --------
    >>> m = element_mass(1.0, 420.0, 1.0, 1.0)
    >>> float(m[1, 1]), float(m[0, 0])
    (156.0, 140.0)
    """
    L = length_m
    m = np.zeros((12, 12))
    _, mb = _bending_block(L)
    scale = density_kg_m3 * area_m2 * L / 420.0
    m[np.ix_(_XY, _XY)] = scale * mb
    m[np.ix_(_XZ, _XZ)] = scale * (_FLIP @ mb @ _FLIP)
    pair = np.array([[2.0, 1.0], [1.0, 2.0]]) / 6.0
    m[np.ix_([0, 6], [0, 6])] = density_kg_m3 * area_m2 * L * pair
    m[np.ix_([3, 9], [3, 9])] = density_kg_m3 * polar_m4 * L * pair
    return m


def _skew(r: np.ndarray) -> np.ndarray:
    return np.array([[0.0, -r[2], r[1]], [r[2], 0.0, -r[0]], [-r[1], r[0], 0.0]])


def _arm_axes(angle: float) -> np.ndarray:
    """Rows: the arm's local x (along it), y (across, in plane) and z (down) in global axes."""
    c, s = math.cos(angle), math.sin(angle)
    return np.array([[c, s, 0.0], [-s, c, 0.0], [0.0, 0.0, 1.0]])


# --------------------------------------------------------------------------
# Assembly and solution


@dataclass(frozen=True)
class _Assembled:
    """Reduced matrices, split by what scales with the material.

    K = (E/E₀)·k_beam + k_θ·k_spring and M = (ρ/ρ₀)·m_beam + m_lumped, with
    E₀, ρ₀ the figures it was assembled with and k_spring the root springs'
    matrix for 1 N·m/rad (zero for rigid roots).
    """

    k_beam: np.ndarray
    k_spring: np.ndarray
    m_beam: np.ndarray
    m_lumped: np.ndarray
    t: np.ndarray            # full DOFs = t @ reduced DOFs
    nodes: np.ndarray        # (n_nodes, 3) positions; node 0 is the body reference
    arm_nodes: list[list[int]]  # node indices of each arm, root to tip
    axes: list[np.ndarray]
    modulus_pa: float
    density_kg_m3: float

    def matrices(self, modulus_pa: float, density_kg_m3: float, spring: float | None
                 ) -> tuple[np.ndarray, np.ndarray]:
        k = (modulus_pa / self.modulus_pa) * self.k_beam
        if spring is not None:
            k = k + spring * self.k_spring
        return k, (density_kg_m3 / self.density_kg_m3) * self.m_beam + self.m_lumped


def _assemble(model: FrameModel) -> _Assembled:
    arm, body, layout = model.arm, model.body, model.layout
    modulus, density = arm.material.modulus_pa, arm.material.density_kg_m3
    n_el = model.elements_per_arm
    area, iy = arm.section_properties("flap")      # bending out of plane: about local y
    _, iz = arm.section_properties("lead-lag")     # bending in plane: about local z
    le = arm.length_m / n_el
    k_el = element_stiffness(le, modulus, model.shear_modulus_pa, area, iy, iz,
                             torsion_constant(arm))
    m_el = element_mass(le, density, area, iy + iz)
    sprung = arm.clamp_stiffness_n_m_per_rad is not None

    n_arms = layout.arms
    n_nodes = 1 + n_arms * (n_el + 1)
    per_arm = (2 if sprung else 0) + 6 * n_el
    n_red = 6 + n_arms * per_arm
    k_beam = np.zeros((n_red, n_red))
    m_beam = np.zeros((n_red, n_red))
    m_lumped = np.zeros((n_red, n_red))
    k_spring = np.zeros((n_red, n_red))
    t = np.zeros((6 * n_nodes, n_red))
    nodes = np.zeros((n_nodes, 3))
    t[0:6, 0:6] = np.eye(6)
    m_lumped[0:3, 0:3] = body.mass_kg * np.eye(3)
    m_lumped[3:6, 3:6] = np.diag(body.inertia_kg_m2)
    arm_nodes: list[list[int]] = []
    axes: list[np.ndarray] = []
    for a, angle in enumerate(layout.angles_rad):
        lam = _arm_axes(angle)
        axes.append(lam)
        ex = lam[0]
        first = 1 + a * (n_el + 1)
        ids = list(range(first, first + n_el + 1))
        arm_nodes.append(ids)
        for i, node in enumerate(ids):
            nodes[node] = ex * (layout.root_radius_m + i * le)
        # root node: translations and twist follow the body (u = u_b + θ_b × r); its
        # bending rotations follow the body too, or are free and held by the root spring
        col = 6 + a * per_arm
        root_t = np.zeros((6, n_red))
        root_t[0:3, 0:3] = np.eye(3)
        root_t[0:3, 3:6] = -_skew(nodes[ids[0]])
        if sprung:
            root_t[3:6, 3:6] = np.outer(ex, ex)
            root_t[3:6, col] = lam[1]       # rotation about local y (flap)
            root_t[3:6, col + 1] = lam[2]   # rotation about local z (lead-lag)
            for p, axis in ((col, lam[1]), (col + 1, lam[2])):
                k_spring[p, p] += 1.0
                k_spring[p, 3:6] -= axis
                k_spring[3:6, p] -= axis
                k_spring[3:6, 3:6] += np.outer(axis, axis)
            col += 2
        else:
            root_t[3:6, 3:6] = np.eye(3)
        t[6 * ids[0]:6 * ids[0] + 6] = root_t
        for i, node in enumerate(ids[1:]):
            t[6 * node:6 * node + 6, col + 6 * i:col + 6 * i + 6] = np.eye(6)
        big = np.kron(np.eye(4), lam)  # local = big @ global, for the 12 element DOFs
        kg, mg = big.T @ k_el @ big, big.T @ m_el @ big
        # the root element through the root node's constraint; the others directly
        root_cols = np.nonzero(np.any(root_t != 0.0, axis=0))[0]
        te = np.zeros((12, root_cols.size + 6))
        te[0:6, : root_cols.size] = root_t[:, root_cols]
        te[6:12, root_cols.size:] = np.eye(6)
        cols = np.r_[root_cols, col:col + 6]
        k_beam[np.ix_(cols, cols)] += te.T @ kg @ te
        m_beam[np.ix_(cols, cols)] += te.T @ mg @ te
        for e in range(1, n_el):
            dofs = np.arange(col + 6 * (e - 1), col + 6 * (e + 1))
            k_beam[np.ix_(dofs, dofs)] += kg
            m_beam[np.ix_(dofs, dofs)] += mg
        tip = col + 6 * (n_el - 1)
        m_lumped[tip:tip + 3, tip:tip + 3] += arm.tip_mass_kg * np.eye(3)
        m_lumped[tip + 3:tip + 6, tip + 3:tip + 6] += arm.tip_inertia_kg_m2 * np.eye(3)
    return _Assembled(k_beam, k_spring, m_beam, m_lumped, t, nodes, arm_nodes, axes,
                      modulus, density)


@dataclass(frozen=True)
class _Solution:
    frequencies_hz: np.ndarray   # elastic modes only
    shapes: np.ndarray           # (n_full, n_modes), M-orthonormal
    rigid_hz: np.ndarray         # the six dropped roots, signed sqrt
    assembled: _Assembled


def _solve(asm: _Assembled, modulus_pa: float, density_kg_m3: float, spring: float | None,
           count: int) -> _Solution:
    from scipy.linalg import eigh

    k, m = asm.matrices(modulus_pa, density_kg_m3, spring)
    n = k.shape[0]
    top = min(n - 1, 6 + count - 1)
    # the expert driver for a subset: on a threaded BLAS shared with other work the
    # divide-and-conquer driver was several times slower on these small dense problems
    values, vectors = eigh(k, m, subset_by_index=[0, top], driver="gvx")
    omega2 = np.asarray(values, dtype=float)
    rigid = omega2[:6]
    elastic = omega2[6:]
    scale = max(float(elastic[0]) if elastic.size else 1.0, 1e-30)
    if np.any(np.abs(rigid) > 1e-3 * scale):  # pragma: no cover - the body is never grounded
        raise ArithmeticError("the six lowest roots are not rigid-body modes")
    shapes = asm.t @ vectors[:, 6:]
    return _Solution(np.sqrt(np.maximum(elastic, 0.0)) / (2.0 * math.pi), shapes,
                     np.sign(rigid) * np.sqrt(np.abs(rigid)) / (2.0 * math.pi), asm)


def _align_repeated(sol: _Solution) -> _Solution:
    """Rotate each group of repeated modes so each turns the body about one axis at most."""
    f = sol.frequencies_hz
    shapes = sol.shapes.copy()
    i = 0
    while i < f.size:
        j = i + 1
        while j < f.size and f[j] - f[i] <= _REPEATED * max(f[i], 1e-12):
            j += 1
        k = j - i
        if k > 1:
            group = shapes[:, i:j]
            b = group[3:6, :]                      # body rotations, 3 × k
            tol = 1e-9 * max(float(np.abs(b).max()), 1e-300)
            # greedy: the combination turning the body most about the strongest axis first,
            # then the next axis in what is left, then any orthonormal completion
            candidates = [b[a] for a in np.argsort(-np.linalg.norm(b, axis=1))]
            candidates += list(np.eye(k))
            basis: list[np.ndarray] = []
            for c, cand in enumerate(candidates):
                v = np.array(cand, dtype=float)
                for u in basis:
                    v -= (u @ v) * u
                norm = float(np.linalg.norm(v))
                if norm > (tol if c < 3 else 1e-8) and norm > 1e-12:
                    basis.append(v / norm)
                if len(basis) == k:
                    break
            shapes[:, i:j] = group @ np.column_stack(basis)
        i = j
    return replace(sol, shapes=shapes)


def solve_frame(model: FrameModel, count: int | None = None,
                modulus_pa: float | None = None, density_kg_m3: float | None = None
                ) -> tuple[np.ndarray, np.ndarray]:
    """Elastic natural frequencies and M-orthonormal shapes of the free–free frame.

    Parameters
    ----------
    model : FrameModel
        The frame.
    count : int, optional
        How many elastic modes (all when ``None``).
    modulus_pa, density_kg_m3 : float, optional
        Material figures to use instead of the nominal ones [Pa, kg/m³].

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Frequencies [Hz], ascending, and shapes (6 per node: body reference
        node first, then each arm root to tip; translations [m] and
        rotations [rad] per unit modal coordinate), one column per mode.

    Examples
    --------
    >>> mat = Material("custom", "x", 50e9, 50e9, 50e9, 1550.0, 1550.0, 1550.0)
    >>> arm = ArmGeometry(0.1, mat, 0.04, width_m=0.012, thickness_m=0.005)
    >>> model = FrameModel(arm, FrameBody(0.3, (2e-3, 2e-3, 4e-3)),
    ...                    FrameLayout(stretched_angles(4), 0.03))
    >>> f, shapes = solve_frame(model, count=8)
    >>> f.shape, shapes.shape
    ((8,), (222, 8))
    """
    mat = model.arm.material
    asm = _assemble(model)
    n_elastic = asm.k_beam.shape[0] - 6
    with _one_thread():
        sol = _solve(asm, mat.modulus_pa if modulus_pa is None else modulus_pa,
                     mat.density_kg_m3 if density_kg_m3 is None else density_kg_m3,
                     model.arm.clamp_stiffness_n_m_per_rad,
                     n_elastic if count is None else min(count, n_elastic))
    sol = _align_repeated(sol)
    return sol.frequencies_hz, sol.shapes


# --------------------------------------------------------------------------
# Results


@dataclass(frozen=True)
class FrameMode:
    """One elastic mode of the frame."""

    #: 1 for the lowest elastic mode.
    index: int
    #: Nominal natural frequency [Hz].
    frequency_hz: float
    #: At low modulus and high density [Hz].
    frequency_low_hz: float
    #: At high modulus and low density [Hz].
    frequency_high_hz: float
    #: Arm motion carrying most of the arms' kinetic energy:
    #: ``flap``, ``lead-lag``, ``torsion`` or ``axial``.
    plane: str
    #: How the arms move against each other: ``all arms``,
    #: ``left against right``, ``front against rear``, ``diagonals alternating``
    #: (four arms) or ``neighbours alternating``, or ``mixed``.
    arm_pattern: str
    #: Body rotation (roll, pitch, yaw) per unit modal motion, normalised
    #: (dimensionless; see the module notes).
    gyro_signature: tuple[float, float, float]
    #: ``roll``, ``pitch``, ``yaw`` or ``none``.
    axis: str
    #: Mass of the equivalent single-DOF oscillator at the point of largest
    #: translation [kg].
    effective_mass_kg: float
    #: Each arm's motion in ``plane`` at its tip, largest = 1 (signed).
    arm_amplitudes: tuple[float, ...]
    #: Share of the arms' and tips' kinetic energy in each plane:
    #: axial, lead-lag, flap, torsion (fractions summing to 1).
    plane_shares: tuple[float, float, float, float]
    #: The shape: (nodes, 6) translations [m] and rotations [rad], M-normalised.
    shape: np.ndarray = field(repr=False, compare=False)

    @property
    def pattern(self) -> str:
        """Plain words: plane and arm pattern, e.g. ``"flap, left against right"``."""
        return f"{self.plane}, {self.arm_pattern}"


@dataclass(frozen=True)
class FrameEstimate:
    """The frame model's elastic modes up to a limit."""

    #: The frame.
    model: FrameModel
    #: Elastic modes below the limit, ascending.
    modes: tuple[FrameMode, ...]
    #: The six dropped rigid-body roots [Hz] (near zero; a check on the model).
    rigid_body_hz: tuple[float, ...]
    #: Modes whose low figure lies at or above this are left out [Hz].
    max_frequency_hz: float
    #: Node positions [m]: body reference first, then each arm root to tip.
    nodes: np.ndarray = field(repr=False, compare=False)
    #: Node indices of each arm, root to tip.
    arm_nodes: tuple[tuple[int, ...], ...] = ()
    #: What the reader should know about the figures.
    notes: tuple[str, ...] = ()


def _patterns(angles: Sequence[float]) -> list[tuple[str, np.ndarray]]:
    n = len(angles)
    a = np.asarray(angles)
    out = [("all arms", np.ones(n)), ("left against right", np.sin(a)),
           ("front against rear", np.cos(a))]
    if n % 2 == 0:
        alt = np.array([(-1.0) ** k for k in np.argsort(np.argsort(a % (2 * math.pi)))])
        out.append(("diagonals alternating" if n == 4 else "neighbours alternating", alt))
    return [(name, v / np.linalg.norm(v)) for name, v in out if np.linalg.norm(v) > 1e-9]


def _describe(model: FrameModel, asm: _Assembled, shape: np.ndarray, index: int,
              freq: float, low: float, high: float) -> FrameMode:
    phi = shape.reshape(-1, 6).copy()
    arm = model.arm
    area = arm.section_properties("flap")[0]
    polar = arm.section_properties("flap")[1] + arm.section_properties("lead-lag")[1]
    line_mass = arm.material.density_kg_m3 * area
    le = arm.length_m / model.elements_per_arm
    # kinetic energy in the arms and tips by direction (nodal weights of the trapezoid rule)
    energy = np.zeros(4)      # axial, lead-lag, flap, torsion
    tips = []
    largest = 0.0             # largest displacement of any point of the arms or motors [m]
    edge = 0.5 * max(arm.depth_m("flap"), arm.depth_m("lead-lag"))
    tip_radius = math.sqrt(arm.tip_inertia_kg_m2 / arm.tip_mass_kg) if arm.tip_mass_kg else 0.0
    for ids, lam in zip(asm.arm_nodes, asm.axes, strict=True):
        local = phi[ids, :3] @ lam.T                      # (nodes, 3): axial, lead-lag, flap
        twist = phi[ids, 3:] @ lam[0]
        weights = np.full(len(ids), le * line_mass)
        weights[[0, -1]] *= 0.5
        energy[:3] += weights @ local**2
        energy[3] += (weights * polar / area) @ twist**2
        energy[:3] += arm.tip_mass_kg * local[-1] ** 2
        energy[3] += arm.tip_inertia_kg_m2 * twist[-1] ** 2
        tips.append((local[-1], twist[-1]))
        largest = max(largest, float(np.max(np.linalg.norm(local, axis=1) + np.abs(twist) * edge)),
                      float(np.linalg.norm(local[-1]) + np.linalg.norm(phi[ids[-1], 3:]) * tip_radius))
    shares = energy / max(float(energy.sum()), 1e-300)
    plane_i = int(np.argmax(shares))
    plane = _PLANES[plane_i]
    amps = np.array([t[1] if plane == "torsion" else t[0][plane_i] for t in tips])
    biggest = float(np.max(np.abs(amps))) if amps.size else 0.0
    amps = amps / biggest if biggest > 0 else amps
    name, best = "mixed", 0.0
    total = float(amps @ amps)
    for pname, vec in _patterns(model.layout.angles_rad):
        share = float(vec @ amps) ** 2 / total if total > 0 else 0.0
        if share > best:
            name, best = pname, share
    if best < 0.5:
        name = "mixed"
    # gyro signature: body rotation per unit modal coordinate times √(body inertia); its
    # squares are the shares of the mode's kinetic energy in the body's turning
    sig = phi[0, 3:] * np.sqrt(np.asarray(model.body.inertia_kg_m2))
    sig[np.abs(sig) < 1e-12] = 0.0
    k = int(np.argmax(np.abs(sig)))
    if sig[k] < 0:
        sig, phi, amps = -sig, -phi, -amps
    axis = _AXIS_NAMES[k] if abs(sig[k]) >= AXIS_THRESHOLD else "none"
    return FrameMode(
        index=index, frequency_hz=freq, frequency_low_hz=low, frequency_high_hz=high,
        plane=plane, arm_pattern=name,
        gyro_signature=(float(sig[0]), float(sig[1]), float(sig[2])), axis=axis,
        effective_mass_kg=1.0 / largest**2,
        arm_amplitudes=tuple(float(x) for x in amps),
        plane_shares=(float(shares[0]), float(shares[1]), float(shares[2]), float(shares[3])),
        shape=phi,
    )


def _notes(model: FrameModel) -> list[str]:
    arm, body, mat = model.arm, model.body, model.arm.material
    notes = [
        f"{model.layout.arms} arms of {model.elements_per_arm} Euler–Bernoulli space-frame "
        "elements each (consistent mass, Przemieniecki) on a rigid centre body, free–free; "
        "the six rigid-body modes are dropped.",
    ]
    if arm.clamp_stiffness_n_m_per_rad is not None:
        notes.append(f"Arm roots held by rotational springs of "
                     f"{arm.clamp_stiffness_n_m_per_rad:.4g} N·m/rad in both bending planes.")
    else:
        notes.append("Arm roots taken as rigidly joined to the body (no clamp_stiffness); a real "
                     "joint lets the root turn, so the true frequencies are lower.")
    if arm.effective_length_factor is not None:
        notes.append("effective_length_factor is not used by the frame model (the arm keeps its "
                     "free length); give clamp_stiffness for a joint that is not rigid.")
    if body.inertia_origin == "box":
        notes.append("Body inertia not given: estimated as a uniform box spanning the arm roots, "
                     "as tall as the root radius.")
    if mat.shear_modulus_pa is None:
        notes.append("Shear modulus not known for this material: G = E/2.6 (isotropic, ν = 0.3) "
                     "is used for the arms' torsion.")
    if arm.tip_inertia_kg_m2 == 0.0:
        notes.append("Tip rotary inertia not given: motors and propellers are point masses.")
    notes.append("Left out: flexible plates, standoffs, the stack on its mounts, the motor's "
                 "height above the arm, propeller gyroscopic effects and shear deformation; "
                 "add those as measured modes.")
    return notes


def estimate_frame(model: FrameModel, *, max_frequency_hz: float = 2000.0,
                   max_modes: int = 48) -> FrameEstimate:
    """Solve the frame and describe its elastic modes below ``max_frequency_hz``.

    Parameters
    ----------
    model : FrameModel
        The frame.
    max_frequency_hz : float, optional
        Modes whose low figure lies at or above this are left out [Hz].
    max_modes : int, optional
        Most modes reported (1 to 200).

    Returns
    -------
    FrameEstimate

    Examples
    --------
    >>> mat = Material("custom", "x", 50e9, 50e9, 50e9, 1550.0, 1550.0, 1550.0)
    >>> arm = ArmGeometry(0.1, mat, 0.04, width_m=0.012, thickness_m=0.005)
    >>> est = estimate_frame(FrameModel(arm, FrameBody(0.3, (2e-3, 2e-3, 4e-3)),
    ...                                 FrameLayout(stretched_angles(4), 0.03)))
    >>> est.modes[0].pattern
    'flap, diagonals alternating'
    """
    _finite_positive(max_frequency_hz, "max_frequency_hz", "a frequency above 0 Hz")
    if isinstance(max_modes, bool) or not isinstance(max_modes, int) or not 1 <= max_modes <= 200:
        raise InputError("max_modes", "a whole number from 1 to 200", max_modes)
    with _one_thread():
        return _estimate(model, _assemble(model), max_frequency_hz, max_modes)


def _estimate(model: FrameModel, asm: _Assembled, max_frequency_hz: float, max_modes: int,
              corners: bool = True) -> FrameEstimate:
    mat = model.arm.material
    spring = model.arm.clamp_stiffness_n_m_per_rad
    count = min(max_modes, asm.k_beam.shape[0] - 6)
    nominal = _align_repeated(_solve(asm, mat.modulus_pa, mat.density_kg_m3, spring, count))
    keep = int(np.sum(nominal.frequencies_hz < 1.5 * max_frequency_hz))
    low = high = nominal.frequencies_hz
    if corners and keep:
        low = _solve(asm, mat.modulus_low_pa, mat.density_high_kg_m3, spring, keep).frequencies_hz
        high = _solve(asm, mat.modulus_high_pa, mat.density_low_kg_m3, spring,
                      keep).frequencies_hz
    modes: list[FrameMode] = []
    for i in range(keep):
        f = float(nominal.frequencies_hz[i])
        f_low, f_high = min(float(low[i]), f), max(float(high[i]), f)
        if f_low >= max_frequency_hz:
            continue
        modes.append(_describe(model, asm, nominal.shapes[:, i], len(modes) + 1, f, f_low,
                               f_high))
    notes = _notes(model)
    if keep == count:
        notes.append(f"Only the first {count} elastic modes were solved; more may lie below "
                     f"{max_frequency_hz:.0f} Hz.")
    return FrameEstimate(model, tuple(modes), tuple(float(x) for x in nominal.rigid_hz),
                         float(max_frequency_hz), asm.nodes,
                         tuple(tuple(ids) for ids in asm.arm_nodes), tuple(notes))


def frame_modes(estimate: FrameEstimate, prefix: str = "frame") -> tuple[Mode, ...]:
    """The estimate's modes as :class:`~clashcheck.model.modes.Mode` objects for ``check``.

    Each has ``origin="estimated"``, ``kind="arm"``, no damping (the build's
    default is then used and marked assumed), the material spread as its
    range, and ``axis`` from the gyro signature; a mode that does not turn
    the body (axis ``none``) is passed on as ``any`` with ``gyro_axis:
    none`` in its details, since a slightly uneven real frame still shows it.

    Parameters
    ----------
    estimate : FrameEstimate
        Result of :func:`estimate_frame`.
    prefix : str, optional
        Start of each mode's name.

    Returns
    -------
    tuple of Mode
    """
    out = []
    for mode in estimate.modes:
        out.append(Mode(
            name=f"{prefix} {mode.index}: {mode.pattern} (est.)",
            frequency_hz=mode.frequency_hz,
            frequency_low_hz=mode.frequency_low_hz,
            frequency_high_hz=mode.frequency_high_hz,
            damping=None,
            axis=mode.axis if mode.axis != "none" else "any",
            kind="arm",
            origin="estimated",
            source=f"frame model ({estimate.model.arm.material.id}, mode {mode.index})",
            details={"plane": mode.plane, "pattern": mode.pattern, "gyro_axis": mode.axis,
                     "gyro_signature": list(mode.gyro_signature),
                     "effective_mass_kg": mode.effective_mass_kg},
        ))
    return tuple(out)


# --------------------------------------------------------------------------
# Calibration against measured modes


@dataclass(frozen=True)
class CalibrationPair:
    """One measured mode and the model mode it was paired with."""

    #: Measured mode name.
    measured_name: str
    #: Measured frequency [Hz].
    measured_hz: float
    #: Model mode index (1-based, elastic modes) it is paired with.
    model_index: int
    #: Model pattern, e.g. ``"flap, left against right"``.
    model_pattern: str
    #: Model frequency before the fit [Hz].
    model_before_hz: float
    #: Model frequency after the fit [Hz].
    model_after_hz: float

    @property
    def residual(self) -> float:
        """(model after − measured)/measured, as a fraction."""
        return (self.model_after_hz - self.measured_hz) / self.measured_hz


@dataclass(frozen=True)
class Calibration:
    """A frame model fitted to measured modes."""

    #: The frame before the fit.
    initial: FrameModel
    #: The fitted frame (use it to predict changes).
    fitted: FrameModel
    #: Fitted root-spring stiffness [N·m/rad].
    clamp_stiffness_n_m_per_rad: float
    #: Fitted Young's modulus [Pa] (the initial one unless it was fitted).
    modulus_pa: float
    #: Whether the modulus was fitted.
    modulus_fitted: bool
    #: Measured–model pairs, in measured order.
    pairs: tuple[CalibrationPair, ...]
    #: Root-mean-square of the relative residuals (fraction).
    rms_residual: float
    #: What the reader should know.
    notes: tuple[str, ...] = ()


_K_BOUNDS = (1e-2, 1e7)   # N·m/rad searched for the root spring


def _pair(measured: Sequence[Mode], freqs: np.ndarray, axes: Sequence[str]) -> list[int]:
    """Model index for each measured mode: nearest in log-frequency, axes agreeing when stated."""
    from scipy.optimize import linear_sum_assignment

    # squared log distance: convex, so of two crossing pairings the ordered one always wins
    cost = np.log(np.array([m.frequency_hz for m in measured])[:, None] / freqs[None, :]) ** 2
    for i, m in enumerate(measured):
        if m.axis in _AXIS_NAMES:
            cost[i, [j for j, ax in enumerate(axes) if ax != m.axis]] += 10.0
    rows, cols = linear_sum_assignment(cost)
    out = [0] * len(measured)
    for r, c in zip(rows, cols, strict=True):
        out[int(r)] = int(c)
    return out


def calibrate_frame(model: FrameModel, measured: Sequence[Mode], *, fit_modulus: bool = False
                    ) -> Calibration:
    """Fit the root-spring stiffness (and optionally E in its catalog range) to measured modes.

    Each measured mode is paired with one model mode: the nearest in
    log-frequency (least squared distance overall), by an optimal assignment (:func:`scipy.optimize.
    linear_sum_assignment`), with a measured ``axis`` of roll, pitch or yaw
    only paired to a model mode on that axis where one is near.  The
    relative residuals log(f_model/f_measured) are then minimised with
    :func:`scipy.optimize.least_squares` over log(stiffness) (and E,
    bounded by the material's low and high figures).  Pairing and fit are
    repeated until the pairing stops changing (at most four rounds).

    Parameters
    ----------
    model : FrameModel
        The frame before the fit; its clamp stiffness (if any) is the start.
    measured : sequence of Mode
        Measured modes (at least one; at least two to fit the modulus too).
    fit_modulus : bool, optional
        Also fit Young's modulus within the material's range.

    Returns
    -------
    Calibration

    Raises
    ------
    InputError
        With no measured modes, too few for the fit, or more than the model has.
    """
    with _one_thread():
        return _calibrate(model, measured, fit_modulus)


def _calibrate(model: FrameModel, measured: Sequence[Mode], fit_modulus: bool) -> Calibration:
    from scipy.optimize import least_squares

    if not measured:
        raise InputError("measured", "at least one measured mode", [])
    need = 2 if fit_modulus else 1
    if len(measured) < need:
        raise InputError("measured", f"at least {need} measured modes to fit "
                         + ("stiffness and modulus" if fit_modulus else "the stiffness"),
                         len(measured))
    mat = model.arm.material
    if fit_modulus and mat.modulus_low_pa == mat.modulus_high_pa:
        raise InputError("fit_modulus", "a material with a modulus range to fit within",
                         mat.id, "the modulus was given exactly")
    start_k = model.arm.clamp_stiffness_n_m_per_rad
    if start_k is None:
        inertia = model.arm.section_properties("flap")[1]
        start_k = 10.0 * mat.modulus_pa * inertia / model.arm.length_m
    start_k = min(max(start_k, _K_BOUNDS[0] * 10), _K_BOUNDS[1] / 10)
    sprung = model.with_clamp(start_k)
    asm = _assemble(sprung)       # one assembly: the fit only rescales its parts
    count = min(len(measured) + 12, 60, asm.k_beam.shape[0] - 6)
    if len(measured) > count:
        raise InputError("measured", f"no more measured modes than the model has ({count})",
                         len(measured))
    f_meas = np.array([m.frequency_hz for m in measured])
    x_scale = np.array([1.0] + ([mat.modulus_pa] if fit_modulus else []))

    def unpack(z: np.ndarray) -> tuple[float, float]:
        x = z * x_scale
        return float(10.0 ** x[0]), (float(x[1]) if fit_modulus else mat.modulus_pa)

    def model_at(z: np.ndarray) -> FrameModel:
        k, e = unpack(z)
        out = model.with_clamp(k)
        return out.with_modulus(e) if fit_modulus else out

    def described(z: np.ndarray) -> FrameEstimate:
        frame = model_at(z)
        return _estimate(frame, _assemble(frame), 1e12, count, corners=False)

    z = np.array([math.log10(start_k)] + ([1.0] if fit_modulus else []))
    lower = np.array([math.log10(_K_BOUNDS[0])] + ([mat.modulus_low_pa / mat.modulus_pa]
                                                   if fit_modulus else []))
    upper = np.array([math.log10(_K_BOUNDS[1])] + ([mat.modulus_high_pa / mat.modulus_pa]
                                                   if fit_modulus else []))
    first = described(z)
    before = np.array([m.frequency_hz for m in first.modes])
    pairing = _pair(measured, before, [m.axis for m in first.modes])
    for _ in range(4):
        idx = np.array(pairing)

        def residuals(y: np.ndarray, idx: np.ndarray = idx) -> np.ndarray:
            k, e = unpack(y)
            sol = _solve(asm, e, mat.density_kg_m3, k, int(idx.max()) + 1)
            return np.log(sol.frequencies_hz[idx] / f_meas)

        fit = least_squares(residuals, z, bounds=(lower, upper), diff_step=1e-6,
                            xtol=1e-12, ftol=1e-12, gtol=1e-12)
        z = fit.x
        after_est = described(z)
        new = _pair(measured, np.array([m.frequency_hz for m in after_est.modes]),
                    [m.axis for m in after_est.modes])
        if new == pairing:
            break
        pairing = new
    after_est = described(z)
    k_fit, e_fit = unpack(z)
    pairs = tuple(
        CalibrationPair(m.name, m.frequency_hz, j + 1, after_est.modes[j].pattern,
                        float(before[j]), after_est.modes[j].frequency_hz)
        for m, j in zip(measured, pairing, strict=True)
    )
    rms = float(np.sqrt(np.mean([p.residual**2 for p in pairs])))
    notes = []
    if k_fit >= _K_BOUNDS[1] * 0.99 or k_fit <= _K_BOUNDS[0] * 1.01:
        notes.append("The fitted stiffness sits at the edge of the search range: the measured "
                     "modes do not pin it down (check the pairing).")
    if fit_modulus and (math.isclose(e_fit, mat.modulus_low_pa, rel_tol=1e-3)
                        or math.isclose(e_fit, mat.modulus_high_pa, rel_tol=1e-3)):
        notes.append("The fitted modulus sits at the edge of the material's range.")
    return Calibration(model, model_at(z), k_fit, e_fit, fit_modulus, pairs, rms, tuple(notes))

