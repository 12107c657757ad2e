"""Damping against amplitude: viscous, friction (Coulomb) or mixed decay of each mode.

A viscous mode decays exponentially (successive peaks keep a constant ratio);
a friction mode decays linearly (successive peaks keep a constant difference,
4F/k per cycle in displacement, 4F/m in acceleration).  With both present the
Hilbert instantaneous damping is (REFERENCES.md §13, derived from the energy
per cycle)

    ζ(A) = ζ_v + D / (2π A)

where A is the mode's amplitude and D its friction drop per cycle, both in
the recording's own units (the ω² between displacement and acceleration
cancels).  The envelope then obeys dA/dt = −ζ_v ω A − D f.

Method, per mode and per tap (Feldman's free-vibration Hilbert method, with
the ends trimmed and the envelope averaged over whole cycles):

1. band-pass around the mode (Butterworth, :func:`scipy.signal.sosfiltfilt`,
   half-way to the neighbouring modes);
2. Hilbert envelope (:func:`scipy.signal.hilbert`); the filter's edge
   transients are trimmed; the envelope's power is averaged over blocks of whole
   cycles (at least as long as the band-pass filter's memory, so blocks are
   nearly independent); the noise power measured before the first tap is
   subtracted, and blocks within :data:`NOISE_FACTOR` of the noise are dropped;
3. three models fitted to all taps at once (shared damping, one starting
   amplitude per tap; :func:`scipy.optimize.least_squares`):

   - ``viscous``: A = A₀ e^{−ζωt};
   - ``friction-viscous``: A = A₀ e^{−ζ_v ω t} − D f (1 − e^{−ζ_v ω t})/(ζ_v ω)
     (linear plus exponential; Feeny & Liang 1996);
   - ``power-law``: ζ(A) = ζ_ref (A/A_ref)^p, the microslip form of joint
     models (Segalman 2005);

4. the model is chosen by the Bayesian information criterion
   BIC = n ln(RSS/n) + k ln n.  An amplitude-dependent model is chosen only
   when it beats the viscous one by more than :data:`BIC_MARGIN` *and* ζ
   changes by more than :data:`MATERIAL_CHANGE` across the measured range:
   a statistically clear difference that also matters.  95 % intervals come
   from the fit's Jacobian (Student t).
5. Feeny & Liang's decrement method (successive half-cycle peaks
   X_{k+1} = s X_k − (F/k)(1 + s), fitted by a straight line) is computed on
   the strongest tap as a cross-check.

``decay`` is ``viscous`` when the viscous model is chosen; ``friction`` when
the friction-viscous model is chosen and its viscous term is not
significantly above zero, or under a tenth of the friction term even at the
top of the range; ``mixed`` otherwise (both terms, or the power law).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np

from ..model.amplitude import damping_at_amplitude

if TYPE_CHECKING:
    from .result import ModesResult

__all__ = [
    "AmplitudeDamping",
    "isolation_bands",
    "ModelFit",
    "DecayCheck",
    "DECAY_KINDS",
    "BIC_MARGIN",
    "MATERIAL_CHANGE",
    "NOISE_FACTOR",
    "ALIKE_RATIO",
    "cycle_envelopes",
    "fit_decay_models",
    "decrement_check",
    "analyse_mode_decay",
    "analyse_decays",
    "damping_at",
    "with_amplitude_damping",
]

#: Classes of decay.
DECAY_KINDS = ("viscous", "friction", "mixed")
#: An amplitude-dependent model must beat the viscous one by this much BIC
#: ("strong" evidence on the scale of Kass & Raftery 1995, from memory).
BIC_MARGIN = 10.0
#: ... and change ζ across the measured range by more than this fraction.
MATERIAL_CHANGE = 0.25
#: Envelope blocks must stand this many noise RMS above the noise.
NOISE_FACTOR = 5.0
#: Taps whose starting amplitudes all lie within this ratio are "alike".
ALIKE_RATIO = 1.5
#: Below this span of amplitude (top / bottom) the models are hard to tell apart.
MIN_SPAN = 3.0
#: Envelope blocks below this fraction of the tap's strongest are dropped.
REL_FLOOR = 2e-3
#: Least number of envelope blocks for a fit.
MIN_BLOCKS = 8
_Z95 = 1.959963984540054


@dataclass(frozen=True)
class ModelFit:
    """One damping model fitted to the envelopes of all taps."""

    #: ``viscous``, ``friction-viscous`` or ``power-law``.
    model: str
    #: Fitted damping parameters: (ζ,), (ζ_v, D) or (ζ_ref, p).
    params: tuple[float, ...]
    #: Their standard errors (same order).
    errors: tuple[float, ...]
    #: Residual sum of squares [signal units²].
    rss: float
    #: Envelope blocks fitted.
    n: int
    #: Parameters fitted (damping parameters + one amplitude per tap).
    k: int
    #: Bayesian information criterion.
    bic: float
    #: Reference amplitude of the power law [signal units] (else 0).
    amplitude_ref: float = 0.0

    def damping(self, amplitude: np.ndarray | float) -> np.ndarray:
        """ζ at ``amplitude`` [signal units] under this model.

        Parameters
        ----------
        amplitude : float or numpy.ndarray
            Vibration amplitude(s) [signal units, as recorded]; above 0 for the
            friction-viscous and power-law models.

        Returns
        -------
        numpy.ndarray
            Damping ratio ζ (dimensionless), with the shape of ``amplitude``.
        """
        a = np.asarray(amplitude, dtype=float)
        if self.model == "viscous":
            return np.full_like(a, self.params[0])
        if self.model == "friction-viscous":
            return self.params[0] + self.params[1] / (2.0 * math.pi * a)
        return self.params[0] * (a / self.amplitude_ref) ** self.params[1]


@dataclass(frozen=True)
class DecayCheck:
    """Feeny & Liang's decrement method on the strongest tap (a cross-check)."""

    #: Viscous damping ratio from the ratio of successive peaks.
    viscous_damping: float
    #: Friction drop per cycle [signal units].
    friction_drop_per_cycle: float
    #: Half-cycle peaks used.
    peaks: int


@dataclass(frozen=True)
class AmplitudeDamping:
    """How one mode's damping depends on its amplitude (from a tap test)."""

    #: Frequency of the mode, refined from the Hilbert phase [Hz].
    frequency_hz: float
    #: ``viscous``, ``friction`` or ``mixed``.
    decay: str
    #: Chosen model: ``viscous``, ``friction-viscous`` or ``power-law``.
    model: str
    #: Viscous damping ratio ζ_v (the constant part).
    viscous_damping: float
    #: 95 % interval of ζ_v.
    viscous_damping_low: float
    viscous_damping_high: float
    #: Linear amplitude drop per cycle from friction [signal units]; 0 when viscous.
    friction_drop_per_cycle: float
    #: 95 % interval of the drop [signal units].
    friction_drop_low: float
    friction_drop_high: float
    #: Bottom and top of the measured amplitude range [signal units].
    amplitude_low: float
    amplitude_high: float
    #: ζ at the bottom and at the top of that range (chosen model).
    damping_at_amplitude_low: float
    damping_at_amplitude_high: float
    #: Exponent p of the power law ζ ∝ A^p (power-law model only).
    power_exponent: float | None
    #: BIC of each model (lower is better).
    bic: dict[str, float]
    #: Taps combined.
    taps: int
    #: Starting amplitudes of the taps, strongest first [signal units].
    tap_amplitudes: tuple[float, ...]
    #: True when several taps were combined but all started within :data:`ALIKE_RATIO`.
    taps_alike: bool
    #: True when the measured amplitude span is below :data:`MIN_SPAN` (models hard to tell apart).
    span_too_narrow: bool
    #: Feeny & Liang decrement cross-check, when enough peaks were found.
    cross_check: DecayCheck | None = None

    @property
    def lowest_damping(self) -> float:
        """The most conservative ζ over the measured amplitude range."""
        return min(self.damping_at_amplitude_low, self.damping_at_amplitude_high)


def damping_at(viscous_damping: float, friction_drop_per_cycle: float, amplitude: float) -> float:
    """ζ(A) = ζ_v + D/(2πA) of a friction-plus-viscous mode (see :func:`~clashcheck.model.amplitude.damping_at_amplitude`).

    Parameters
    ----------
    viscous_damping : float
        ζ_v (dimensionless).
    friction_drop_per_cycle : float
        D, amplitude lost per cycle to friction [signal units].
    amplitude : float
        Amplitude A [the same units as D], above 0.

    Returns
    -------
    float
        Equivalent damping ratio at that amplitude.
    """
    return damping_at_amplitude(viscous_damping, friction_drop_per_cycle, amplitude)


def _blocks_per(freq_hz: float, bandwidth_hz: float) -> int:
    """Whole cycles per envelope block: at least the filter's memory (~1/bandwidth)."""
    return max(1, int(math.ceil(freq_hz / bandwidth_hz)))


def cycle_envelopes(segments: np.ndarray, sample_rate_hz: float, freq_hz: float,
                    band_hz: tuple[float, float], start: int = 0,
                    noise: np.ndarray | None = None) -> tuple[list[tuple[np.ndarray, np.ndarray]], float, float]:
    """Band-passed Hilbert envelopes of one mode, averaged over whole cycles.

    Parameters
    ----------
    segments : ndarray, shape (taps, samples)
        Each tap's response, from just before the impact [signal units].
    sample_rate_hz : float
        Sample rate [Hz].
    freq_hz : float
        The mode's frequency (from the tap analysis) [Hz].
    band_hz : tuple of float
        Pass band (low, high) [Hz].
    start : int
        Sample of the impact in each segment.
    noise : ndarray, optional
        Signal with no tap in it (before the first tap), same channel [signal units].

    Returns
    -------
    envelopes : list of (t_s, amplitude)
        Per tap: block mid-times [s, from the first kept block] and noise-corrected
        block amplitudes [signal units], decaying, above the noise limit.
    freq_hz : float
        The mode's frequency refined from the Hilbert phase [Hz].
    noise_rms : float
        RMS of the band-passed noise envelope [signal units] (0 if not measured).
    """
    from scipy import signal

    fs = float(sample_rate_hz)
    lo, hi = band_hz
    sos = signal.butter(4, [lo, hi], btype="bandpass", fs=fs, output="sos")
    segs = np.atleast_2d(np.asarray(segments, dtype=float))
    y = signal.sosfiltfilt(sos, segs, axis=-1)
    z = signal.hilbert(y, axis=-1)
    env = np.abs(z)
    bw = hi - lo
    memory = int(math.ceil(3.0 * fs / bw))  # filter transients, both sides (zero-phase)
    cycle = fs / freq_hz
    first = start + memory + int(math.ceil(2 * cycle))
    last = segs.shape[1] - memory
    noise_power = 0.0
    if noise is not None and noise.size < 2 * memory + int(8 * cycle):
        noise = None  # too short to measure: judge from the tails below
    if noise is not None:
        yn = signal.sosfiltfilt(sos, np.asarray(noise, dtype=float))
        en = np.abs(signal.hilbert(yn))[memory:-memory]
        noise_power = float(np.mean(en * en))
    noise_rms = math.sqrt(noise_power)
    # refine the frequency from the phase slope over the strong part of the strongest tap
    strongest = int(np.argmax(env[:, first:last].max(axis=1))) if last > first else 0
    if last - first > 4 * cycle:
        e = env[strongest, first:last]
        strong = e > 0.2 * e.max()
        idx = np.flatnonzero(strong)
        if idx.size > 2 * cycle:
            span = slice(first + idx[0], first + idx[-1] + 1)
            ph = np.unwrap(np.angle(z[strongest, span]))
            slope = np.polyfit(np.arange(ph.size) / fs, ph, 1)[0]
            f_ref = abs(slope) / (2 * math.pi)
            if abs(f_ref / freq_hz - 1) < 0.05:
                freq_hz = float(f_ref)
                cycle = fs / freq_hz
    per = _blocks_per(freq_hz, bw)
    limit = 0.0
    if noise is None and last > first:  # no quiet lead-in: judge the noise from the tails
        tail = env[:, last - (last - first) // 4:last]
        limit = NOISE_FACTOR * float(np.min(np.median(tail, axis=1)))
    out: list[tuple[np.ndarray, np.ndarray]] = []
    if last - first < per * cycle * MIN_BLOCKS:
        return out, freq_hz, noise_rms
    nblk = int((last - first) / (per * cycle))
    edges = first + np.round(np.arange(nblk + 1) * per * cycle).astype(int)
    for k in range(env.shape[0]):
        # mean power over each block: E|s + n|² = A² + E|n|² exactly, so the noise
        # power subtracts without the bias a mean envelope would keep (derived)
        sums = np.add.reduceat(env[k] ** 2, edges[:-1])[:nblk]
        amp = np.sqrt(np.maximum(sums / np.diff(edges) - noise_power, 0.0))
        t = (0.5 * (edges[:-1] + edges[1:]) - edges[0]) / fs
        ok = amp > max(NOISE_FACTOR * noise_rms, limit, REL_FLOOR * amp.max())
        # keep the first contiguous run from the strongest block (the decay)
        top = int(np.argmax(amp))
        stop = top + int(np.argmax(~ok[top:])) if not ok[top:].all() else nblk
        t, amp = t[top:stop], amp[top:stop]
        if amp.size >= MIN_BLOCKS:
            out.append((t - t[0], amp))
    return out, freq_hz, noise_rms


def _shape(model: str, theta: np.ndarray, a0: np.ndarray, t: np.ndarray, omega: float,
           a_ref: float) -> np.ndarray:
    f = omega / (2 * math.pi)
    if model == "viscous":
        return a0 * np.exp(-theta[0] * omega * t)
    if model == "friction-viscous":
        lam = theta[0] * omega
        # (1 − e^{−λt})/λ, → t as λ → 0
        g = np.where(lam * t > 1e-9, -np.expm1(-lam * t) / max(lam, 1e-300), t)
        return a0 * np.exp(-lam * t) - theta[1] * f * g
    zr, p = theta
    if abs(p) < 1e-9:
        return a0 * np.exp(-zr * omega * t)
    u = p * zr * omega * (a0 / a_ref) ** p * t
    return a0 * np.exp(-np.log1p(np.maximum(u, -1 + 1e-12)) / p)


def fit_decay_models(envelopes: Sequence[tuple[np.ndarray, np.ndarray]],
                     freq_hz: float) -> dict[str, ModelFit]:
    """Fit the viscous, friction-viscous and power-law models to all taps at once.

    Parameters
    ----------
    envelopes : sequence of (t_s, amplitude)
        Per tap: times [s] and envelope amplitudes [signal units] (see :func:`cycle_envelopes`).
    freq_hz : float
        The mode's frequency [Hz].

    Returns
    -------
    dict
        ``{model name: ModelFit}``; a model whose fit failed is absent.
    """
    from scipy import optimize

    omega = 2 * math.pi * freq_hz
    taps = len(envelopes)
    t_all = np.concatenate([t for t, _ in envelopes])
    a_all = np.concatenate([a for _, a in envelopes])
    tap_of = np.concatenate([np.full(len(t), j) for j, (t, _) in enumerate(envelopes)])
    n = a_all.size
    a_ref = float(np.exp(np.mean(np.log(a_all))))
    a0_guess = np.array([a[0] for _, a in envelopes])
    # first guesses: straight lines through log-amplitude and amplitude
    slopes = [np.polyfit(t, np.log(a), 1)[0] for t, a in envelopes]
    z0 = max(1e-5, -float(np.median(slopes)) / omega)
    drops = [-np.polyfit(t, a, 1)[0] / freq_hz for t, a in envelopes]
    d0 = max(1e-9, float(np.median(drops)))
    starts = {
        "viscous": ([z0], [0.0], [0.5]),
        "friction-viscous": ([0.5 * z0, 0.5 * d0], [0.0, 0.0], [0.5, np.inf]),
        "power-law": ([z0, 0.0], [1e-7, -1.5], [0.5, 3.0]),
    }
    raw = {}
    for model, (x0, lb, ub) in starts.items():
        m = len(x0)

        def resid(x: np.ndarray, model: str = model, m: int = m) -> np.ndarray:
            a0 = x[m:][tap_of]
            return _shape(model, x[:m], a0, t_all, omega, a_ref) - a_all

        x_start = np.r_[x0, a0_guess]
        lower = np.r_[lb, np.zeros(taps)]
        upper = np.r_[ub, np.full(taps, np.inf)]
        x_start = np.clip(x_start, lower + 1e-12, np.where(np.isfinite(upper), upper - 1e-12, np.inf))
        try:
            res = optimize.least_squares(resid, x_start, bounds=(lower, upper), x_scale="jac",
                                         max_nfev=400 * (m + taps))
        except (ValueError, np.linalg.LinAlgError):
            continue
        if n > m + taps + 1:
            raw[model] = (res, m)
    if not raw:
        return {}
    # Neighbouring blocks still share some noise.  An AR(1) effective sample size
    # n_eff = n (1 − ρ)/(1 + ρ) (common practice) widens the intervals and weakens the
    # BIC alike for every model; ρ is taken from the best-fitting model's residuals,
    # so a model's own misfit is not mistaken for correlated noise.
    best_res = min(raw.values(), key=lambda rm: float(np.sum(rm[0].fun ** 2)))[0].fun
    same = tap_of[1:] == tap_of[:-1]
    rho = float(np.sum(best_res[1:][same] * best_res[:-1][same]) / max(np.sum(best_res**2), 1e-300))
    rho = min(max(rho, 0.0), 0.9)
    fits = {}
    for model, (res, m) in raw.items():
        rss = float(np.sum(res.fun**2))
        k = m + taps
        n_eff = max(k + 2.0, n * (1 - rho) / (1 + rho))
        s2 = rss / (n - k) * (n / n_eff)
        cov = np.linalg.pinv(res.jac.T @ res.jac) * s2
        err = np.sqrt(np.clip(np.diag(cov)[:m], 0.0, None))
        bic = n_eff * math.log(max(rss, 1e-300) / n) + k * math.log(n_eff)
        fits[model] = ModelFit(model, tuple(float(v) for v in res.x[:m]),
                               tuple(float(v) for v in err), rss, n, k, bic,
                               a_ref if model == "power-law" else 0.0)
    return fits


def decrement_check(segment: np.ndarray, sample_rate_hz: float, freq_hz: float,
                    band_hz: tuple[float, float], start: int, floor: float) -> DecayCheck | None:
    """Feeny & Liang's decrement method on one tap.

    Successive half-cycle peaks of a mode with viscous and Coulomb damping obey
    X_{k+1} = s X_k − (F/k)(1 + s), s = e^{−πζ/√(1−ζ²)} (Feeny & Liang,
    J. Sound Vib. 195 (1996) 149–154); a straight line through (X_k, X_{k+1})
    gives s and F/k.

    Parameters
    ----------
    segment : ndarray
        One tap's response [signal units].
    sample_rate_hz : float
        Sample rate [Hz].
    freq_hz : float
        The mode's frequency [Hz].
    band_hz : tuple of float
        Pass band (low, high) [Hz].
    start : int
        First sample to use (after the impact and the filter's transient).
    floor : float
        Peaks below this are left out [signal units].

    Returns
    -------
    DecayCheck or None
        ``None`` when fewer than 8 peaks stand above ``floor``.
    """
    from scipy import signal

    sos = signal.butter(4, list(band_hz), btype="bandpass", fs=sample_rate_hz, output="sos")
    y = np.abs(signal.sosfiltfilt(sos, np.asarray(segment, dtype=float)))
    memory = int(math.ceil(3.0 * sample_rate_hz / (band_hz[1] - band_hz[0])))
    y = y[start:len(y) - memory]
    idx, _ = signal.find_peaks(y, distance=max(1, int(0.35 * sample_rate_hz / freq_hz)))
    pk = y[idx]
    if pk.size == 0:
        return None
    top = int(np.argmax(pk))
    pk = pk[top:]
    below = np.flatnonzero(pk < floor)
    pk = pk[: below[0]] if below.size else pk
    if pk.size < 8:
        return None
    s, b = np.polyfit(pk[:-1], pk[1:], 1)
    if not 0 < s < 1:
        return None
    zeta = -math.log(s) / math.sqrt(math.pi**2 + math.log(s) ** 2)
    f_over_k = max(0.0, -b / (1 + s))
    return DecayCheck(float(zeta), float(4 * f_over_k), int(pk.size))


def _interval(value: float, err: float, dof: int) -> tuple[float, float]:
    from scipy import stats

    q = float(stats.t.ppf(0.975, max(dof, 1)))
    return max(0.0, value - q * err), value + q * err


def _choose(fits: dict[str, ModelFit], a_lo: float, a_hi: float) -> str:
    """The model chosen: viscous unless another is clearly better and matters."""
    best = "viscous"
    if "viscous" not in fits:
        return min(fits, key=lambda k: fits[k].bic)
    base = fits["viscous"].bic
    for name in ("friction-viscous", "power-law"):
        if name not in fits:
            continue
        fit = fits[name]
        z_lo, z_hi = float(fit.damping(a_lo)), float(fit.damping(a_hi))
        change = abs(z_lo - z_hi) / max(min(z_lo, z_hi), 1e-12)
        # the power law must also beat the friction-viscous model (which it contains
        # at p = −1, ζ_v = 0) by the margin: the simpler physical reading wins ties
        bar = fits[best].bic - (BIC_MARGIN if best != "viscous" else 0.0)
        if base - fit.bic > BIC_MARGIN and change > MATERIAL_CHANGE and fit.bic < bar:
            best = name
    return best


def analyse_mode_decay(segments: np.ndarray, sample_rate_hz: float, freq_hz: float,
                       band_hz: tuple[float, float], start: int = 0,
                       noise: np.ndarray | None = None) -> AmplitudeDamping | None:
    """Damping against amplitude for one mode, from one or more taps.

    Parameters
    ----------
    segments : ndarray, shape (taps, samples)
        Each tap's response from just before its impact [signal units].
        Taps of different strengths ("graded taps") extend the amplitude range.
    sample_rate_hz : float
        Sample rate [Hz].
    freq_hz : float
        The mode's frequency [Hz].
    band_hz : tuple of float
        Pass band isolating this mode (low, high) [Hz].
    start : int
        Sample of the impact in each segment.
    noise : ndarray, optional
        A stretch with no tap (the lead-in before the first tap) [signal units].

    Returns
    -------
    AmplitudeDamping or None
        ``None`` when no tap gives at least :data:`MIN_BLOCKS` envelope blocks
        above the noise.

    Examples
    --------
    >>> import numpy as np
    >>> fs, f, z = 8000.0, 200.0, 0.01
    >>> t = np.arange(int(0.6 * fs)) / fs
    >>> x = np.exp(-z * 2 * np.pi * f * t) * np.sin(2 * np.pi * f * t)
    >>> r = analyse_mode_decay(x[None, :], fs, f, (140.0, 260.0))
    >>> r.decay, round(r.viscous_damping, 3)
    ('viscous', 0.01)
    """
    envs, f_ref, noise_rms = cycle_envelopes(segments, sample_rate_hz, freq_hz, band_hz, start, noise)
    if not envs:
        return None
    fits = fit_decay_models(envs, f_ref)
    # a friction decay stops: drop the last blocks within 1.5 drops of zero and refit
    fv = fits.get("friction-viscous")
    if fv is not None and fv.params[1] > 0:
        cut = 1.5 * fv.params[1]
        trimmed = [(t[a > cut], a[a > cut]) for t, a in envs]
        trimmed = [(t, a) for t, a in trimmed if a.size >= MIN_BLOCKS]
        if trimmed and sum(a.size for _, a in trimmed) < sum(a.size for _, a in envs):
            envs = trimmed
            fits = fit_decay_models(envs, f_ref)
    if "viscous" not in fits and "friction-viscous" not in fits:
        return None
    a_all = np.concatenate([a for _, a in envs])
    a_lo, a_hi = float(a_all.min()), float(a_all.max())
    chosen = _choose(fits, a_lo, a_hi)
    fit = fits[chosen]
    dof = fit.n - fit.k
    fv = fits.get("friction-viscous")
    if chosen == "viscous":
        zv = fit.params[0]
        zv_lo, zv_hi = _interval(zv, fit.errors[0], dof)
        drop, d_lo = 0.0, 0.0
        d_hi = _interval(fv.params[1], fv.errors[1], fv.n - fv.k)[1] if fv is not None else 0.0
        decay = "viscous"
    else:
        assert fv is not None
        zv, drop = fv.params
        zv_lo, zv_hi = _interval(zv, fv.errors[0], fv.n - fv.k)
        d_lo, d_hi = _interval(drop, fv.errors[1], fv.n - fv.k)
        friction_top = drop / (2 * math.pi * a_hi)
        pure = zv_lo <= 0.0 or zv <= 0.1 * friction_top
        decay = "friction" if chosen == "friction-viscous" and pure else "mixed"
    a0s = sorted((float(a[0]) for _, a in envs), reverse=True)
    alike = len(a0s) > 1 and a0s[0] / a0s[-1] < ALIKE_RATIO
    cross = None
    try:
        segs = np.atleast_2d(segments)
        strongest = int(np.argmax(np.max(np.abs(segs[:, start:]), axis=1)))
        memory = int(math.ceil(3.0 * sample_rate_hz / (band_hz[1] - band_hz[0])))
        cross = decrement_check(segs[strongest], sample_rate_hz, f_ref, band_hz,
                                start + memory + int(2 * sample_rate_hz / f_ref),
                                max(NOISE_FACTOR * noise_rms, 1.5 * drop))
    except (ValueError, np.linalg.LinAlgError):
        cross = None
    return AmplitudeDamping(
        frequency_hz=f_ref, decay=decay, model=chosen,
        viscous_damping=float(zv), viscous_damping_low=float(zv_lo), viscous_damping_high=float(zv_hi),
        friction_drop_per_cycle=float(drop), friction_drop_low=float(d_lo), friction_drop_high=float(d_hi),
        amplitude_low=a_lo, amplitude_high=a_hi,
        damping_at_amplitude_low=float(fit.damping(a_lo)),
        damping_at_amplitude_high=float(fit.damping(a_hi)),
        power_exponent=float(fit.params[1]) if chosen == "power-law" else None,
        bic={k: round(v.bic, 3) for k, v in fits.items()},
        taps=len(envs), tap_amplitudes=tuple(a0s), taps_alike=bool(alike),
        span_too_narrow=bool(a_hi / a_lo < MIN_SPAN), cross_check=cross,
    )


def isolation_bands(freqs_hz: Sequence[float], nyquist_hz: float) -> list[tuple[float, float]]:
    """Pass band that isolates each mode: half-way to its neighbours, at most ±30 %.

    Parameters
    ----------
    freqs_hz : sequence of float
        The modes' frequencies [Hz], in any order.
    nyquist_hz : float
        Half the sample rate [Hz]; bands stop below it.

    Returns
    -------
    list of (float, float)
        (low, high) pass band [Hz] of each mode, in the given order.
    """
    f = np.asarray(freqs_hz, dtype=float)
    order = np.argsort(f)
    bands: list[tuple[float, float]] = [(0.0, 0.0)] * len(f)
    for pos, i in enumerate(order):
        lo_n = f[order[pos - 1]] if pos > 0 else 0.0
        hi_n = f[order[pos + 1]] if pos + 1 < len(f) else np.inf
        half = min(0.3 * f[i], 0.5 * (f[i] - lo_n), 0.5 * (hi_n - f[i]))
        half = max(half, 1e-3 * f[i])
        bands[i] = (max(f[i] - half, 1.0), min(f[i] + half, 0.98 * nyquist_hz))
    return bands


def analyse_decays(signal_x: np.ndarray, sample_rate_hz: float, onsets: Sequence[int] | np.ndarray,
                   freqs_hz: Sequence[float], pre: int = 0) -> list[AmplitudeDamping | None]:
    """Damping against amplitude of every mode of a tap recording.

    Parameters
    ----------
    signal_x : ndarray, shape (samples,) or (samples, channels)
        The recording [signal units]; the channel with the most energy is used.
    sample_rate_hz : float
        Sample rate [Hz].
    onsets : sequence of int
        Impact samples (as found by the tap analysis), ascending.
    freqs_hz : sequence of float
        The modes' frequencies [Hz].
    pre : int
        Samples kept before each onset.

    Returns
    -------
    list
        One :class:`AmplitudeDamping` (or ``None``) per frequency, in order.
    """
    x = np.asarray(signal_x, dtype=float)
    if x.ndim == 2:
        x = x[:, int(np.argmax(np.sum(x * x, axis=0)))]
    on = np.asarray(onsets, dtype=int)
    if on.size == 0 or not len(freqs_hz):
        return [None] * len(freqs_hz)
    ends = np.r_[on[1:], x.size]
    length = int(np.min(ends - on)) + pre
    segs = np.stack([x[o - pre:o - pre + length] for o in on if o - pre >= 0 and o - pre + length <= x.size])
    lead = x[: max(0, int(on[0]) - pre)]
    out: list[AmplitudeDamping | None] = []
    for f, band in zip(freqs_hz, isolation_bands(freqs_hz, 0.5 * sample_rate_hz)):
        try:
            out.append(analyse_mode_decay(segs, sample_rate_hz, float(f), band, pre,
                                          lead if lead.size else None))
        except (ValueError, np.linalg.LinAlgError):
            out.append(None)
    return out


def with_amplitude_damping(result: "ModesResult", signal_x: np.ndarray, onsets: Sequence[int] | np.ndarray,
                           pre: int = 0) -> "ModesResult":
    """``result`` with each mode's damping against amplitude attached (tap tests).

    Called at the end of the tap analysis with the recording and the impacts it
    used.  Modes whose decay could not be followed keep ``amplitude_damping``
    at ``None``.  A warning is added when the taps were too alike, or the
    amplitude span too narrow, to tell the damping models apart.

    Parameters
    ----------
    result : ModesResult
        The tap analysis result.
    signal_x : ndarray, shape (samples,) or (samples, channels)
        The analysed recording [signal units].
    onsets : sequence of int
        Impact samples used by the analysis.
    pre : int
        Samples kept before each onset.

    Returns
    -------
    ModesResult
    """
    if not result.modes:
        return result
    found = analyse_decays(signal_x, result.sample_rate_hz, onsets,
                           [m.frequency_hz for m in result.modes], pre)
    modes = tuple(replace(m, amplitude_damping=a) for m, a in zip(result.modes, found))
    warnings = list(result.warnings)
    missing = [m.name for m, a in zip(modes, found) if a is None]
    if missing:
        warnings.append("damping against amplitude not measured for " + ", ".join(missing)
                        + ": no free decay long enough to follow once band-passed (a neighbouring "
                        "mode too close for the mode's own bandwidth, heavy damping, or taps too close)")
    for m, a in zip(modes, found):
        if a is None:
            continue
        if a.taps_alike:
            warnings.append(f"{m.name}: the {a.taps} taps started within a factor "
                            f"{a.tap_amplitudes[0] / a.tap_amplitudes[-1]:.2f} of each other; tap "
                            "softly and firmly to widen the amplitude range")
        if a.span_too_narrow:
            warnings.append(f"{m.name}: the decay spans only {a.amplitude_low:.3g} to "
                            f"{a.amplitude_high:.3g} (×{a.amplitude_high / a.amplitude_low:.2g}); "
                            "too narrow to tell viscous from friction damping with confidence")
    return replace(result, modes=modes, warnings=tuple(warnings))
