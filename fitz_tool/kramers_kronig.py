"""Kramers-Kronig consistency of a measurement with the linear "Lin-KK" test.

Method (Schonleber, Klotz, Ivers-Tiffee, Electrochimica Acta 131 (2014) 20-27; recalled from memory): fit
the data with a network that obeys the Kramers-Kronig relations by construction,

    Z(w) = R0 + j w L [+ 1 / (j w C)] + sum_k R_k / (1 + j w tau_k),   k = 1 .. M,

with the time constants ``tau_k`` fixed, spaced logarithmically from 1 / w_max to 1 / w_min, so that the
fit is LINEAR in R0, L, 1/C and the R_k (weighted least squares, weight 1 / |Z| on real and imaginary parts:
the paper's modulus weighting). The R_k are signed. M grows from 1 until over-fitting starts, judged by

    mu = 1 - sum_{R_k < 0} |R_k| / sum_{R_k >= 0} |R_k|

falling below a threshold (0.85 in the paper). Residuals (Z - Z_fit) / |Z| at the noise level and without
structure mean the data is consistent; a systematic error that no causal linear network can produce
(uncorrected channel delay, a sign slip, drift of the part during the sweep) leaves structured residuals.

Our parts and the second representation. A sum of R / (1 + j w tau) elements has real poles only. A choke
with winding capacitance has a parallel resonance (a complex pole pair of Z) that no such sum with mostly
positive R_k can follow, so mu collapses before the fit is good. Its admittance, however, is
``Y = G_p + j w C_p + 1 / (R_s + j w L)``: exactly the same network form (1 / (R_s + j w L) is one element
G / (1 + j w tau) with tau = L / R_s). The Kramers-Kronig relations hold for the admittance of a passive
linear part as well as for its impedance (the reciprocal of a positive-real function is positive real;
common practice, no source), so we run the test on Z and on Y = 1 / Z with the same basis and keep the
representation that fits better. A capacitor with ESR and ESL (series resonance, complex zeros of Z) is
exact in the Z form; a choke or a bead with a parallel resonance is exact or nearly so in the Y form. The
residuals are always reported relative to |Z| (to first order (Y - Y_fit) / |Y| = -(Z - Z_fit) / |Z|).

The time constants reach half a decade beyond 1 / w_max .. 1 / w_min on each side (``TAU_EXTENSION``; the
paper extends the range, from memory, by how much we do not recall). Our choice from trials: without it
the admittance of a choke whose L / R_s corner lies below the band is not followed; a full decade lets
elements far outside the band act as polynomial terms that absorb a channel delay.

A sweep of more than ``MAX_POINTS`` points is checked on that many points spaced evenly through it (the
cost of the test grows as N M^2 for each element count tried); the result says so in words.

Known limits (see the tests): a part whose admittance AND impedance both need a pole far off the time
constant grid with a large weight (a bead with a small series R_dc) makes mu collapse before the fit is
good, a false "not consistent"; and a delay that is causal in the representation chosen (current channel
late, tested on Y) is partly absorbed.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from .exceptions import InputError
from .measurement import Measurement

__all__ = ["KramersKronigResult", "lin_kk", "time_constants", "RMS_FLOOR", "NOISE_FACTOR", "TAU_EXTENSION",
           "MIN_POINTS", "MAX_POINTS"]

#: Relative residual RMS below which data counts as consistent whatever the noise estimate says: 0.05 %
#: of |Z|, below the basic accuracy of bench impedance instruments (about 0.05 % to 0.1 %; common practice,
#: no source), so a smaller departure cannot be told from calibration error.
RMS_FLOOR = 5e-4

#: Data is consistent when the residual RMS is at most this many times the noise level. For white noise the
#: ratio is about 1 (a few % scatter for ~100 points); a structured residual of amplitude A on noise sigma
#: gives sqrt(1 + A^2 / (2 sigma^2)), so 1.5 flags structure of about 1.6 sigma and up (our choice).
NOISE_FACTOR = 1.5

#: Factor by which the time constants reach beyond 1 / w_max and 1 / w_min on each side.
TAU_EXTENSION = 10 ** 0.5

#: Fewest points the test runs on.
MIN_POINTS = 8

#: Most points the test runs on: a longer sweep is checked on this many points spaced evenly through it
#: (every k-th point, k about N / MAX_POINTS). White noise stays white on such a copy, structure of more
#: than a few points' width stays, and the advisory check of a million-point sweep takes a fraction of a
#: second instead of several (our choice).
MAX_POINTS = 20_000


@dataclass(frozen=True, eq=False)
class KramersKronigResult:
    """Outcome of a Lin-KK test.

    Attributes
    ----------
    n_elements : int
        Number M of R / (1 + j w tau) elements chosen by the mu criterion.
    mu : float
        The mu figure at that M (1: no negative elements; falls as over-fitting starts).
    residual_real, residual_imag : ndarray of float
        Re and Im of (Z - Z_fit) / |Z| per point checked (dimensionless, relative to |Z|); the points
        checked are all points, or ``points_used`` evenly spaced ones of a longer sweep.
    rms_residual : float
        RMS over both parts of all points (dimensionless).
    max_residual : float
        Largest absolute relative residual of either part (dimensionless).
    consistent : bool
        True when ``rms_residual <= max(RMS_FLOOR, NOISE_FACTOR * noise_level)``.
    note : str
        One line in words: verdict, figures and how they were judged.
    representation : str
        ``"impedance"`` or ``"admittance"``: which of Z or Y = 1 / Z was fitted (the better fit).
    noise_level : float
        Relative noise per part (dimensionless) the residuals were judged against: from the measurement's
        sigmas when they are absolute, else estimated from point-to-point differences of the residuals.
    figures : str
        The figures of ``note`` without the verdict (residual RMS, limit, M, mu, representation).
    points_used, points_total : int
        Points the test ran on, of the measurement's points (fewer when the sweep had more than
        ``MAX_POINTS``).
    decimation : str
        That in words ("checked on 20,000 of the 1,000,000 points, evenly spaced"), or "" for all points.
    """

    n_elements: int
    mu: float
    residual_real: np.ndarray
    residual_imag: np.ndarray
    rms_residual: float
    max_residual: float
    consistent: bool
    note: str
    representation: str = "impedance"
    noise_level: float = float("nan")
    figures: str = ""
    points_used: int = 0
    points_total: int = 0
    decimation: str = ""


@dataclass(frozen=True)
class _Fit:
    """One linear fit at a given M: parameters and the fitted data (same representation as the input)."""

    n_elements: int
    mu: float
    fitted: np.ndarray


def time_constants(omega: np.ndarray, n_elements: int) -> np.ndarray:
    """Time constants tau_k in s, log-spaced from 1 / (w_max X) to X / w_min, X = ``TAU_EXTENSION``.

    Log spacing over the inverse of the angular-frequency range follows Schonleber et al. 2014 (from memory).
    One element sits at the geometric middle, 1 / sqrt(w_min w_max).
    """
    low = math.log10(1 / (omega.max() * TAU_EXTENSION))
    high = math.log10(TAU_EXTENSION / omega.min())
    if n_elements == 1:
        return np.array([10 ** ((low + high) / 2)])
    return np.logspace(low, high, n_elements)


def _design(omega: np.ndarray, taus: np.ndarray, integrator: bool) -> np.ndarray:
    """Complex columns: elements 1 / (1 + j w tau_k), then 1 (R0), j w (L), and 1 / (j w) (1/C) if asked."""
    jw = 1j * omega[:, None]
    columns = [1 / (1 + jw * taus[None, :]), np.ones_like(jw), jw]
    if integrator:
        columns.append(1 / jw)
    return np.hstack(columns)


def _fit(omega: np.ndarray, data: np.ndarray, n_elements: int, integrator: bool) -> _Fit:
    """Weighted linear least squares of ``data`` on the Lin-KK basis with M = ``n_elements``."""
    a = _design(omega, time_constants(omega, n_elements), integrator)
    weight = 1 / np.abs(data)
    rows = np.vstack([a.real, a.imag]) * np.concatenate([weight, weight])[:, None]
    target = np.concatenate([data.real, data.imag]) * np.concatenate([weight, weight])
    scale = np.linalg.norm(rows, axis=0)
    scale[scale == 0] = 1.0
    coef = np.linalg.lstsq(rows / scale, target, rcond=None)[0] / scale
    r_k = coef[:n_elements]
    positive, negative = r_k[r_k >= 0].sum(), -r_k[r_k < 0].sum()
    if positive > 0:
        mu = float(1 - negative / positive)
    else:
        mu = 1.0 if negative == 0 else -math.inf
    return _Fit(n_elements, mu, a @ coef)


def _choose(omega: np.ndarray, data: np.ndarray, mu_threshold: float, max_elements: int) -> _Fit:
    """Grow M from 1 until mu falls below the threshold (or M reaches the cap); return that fit."""
    integrator = bool(data[0].imag < 0)  # capacitive-looking at the lowest frequency
    fit = _fit(omega, data, 1, integrator)
    for m in range(2, max_elements + 1):
        if fit.mu < mu_threshold:
            break
        fit = _fit(omega, data, m, integrator)
    return fit


def _noise_level(measurement: Measurement, real: np.ndarray, imag: np.ndarray) -> tuple[float, str]:
    """Relative noise per part and where it came from.

    With absolute sigmas of ln|Z| (s_m) and phase (s_p), the relative error dZ / |Z| = (dln|Z| + j dphi)
    e^{j phi} has, averaged over both parts, variance (s_m^2 + s_p^2) / 2 (first-order propagation). Without
    them: a robust estimate from successive differences, sigma = median|r_{i+1} - r_i| / (0.6745 sqrt 2)
    (for white Gaussian noise the difference has standard deviation sigma sqrt 2 and median absolute value
    0.6745 times that; common practice, no source). Smooth structure barely moves it, and a single jump
    does not move the median.
    """
    s_m, s_p = measurement.sigma_lnmag, measurement.sigma_phase
    if measurement.sigma_absolute and s_m is not None and s_p is not None:
        level = math.sqrt(float(np.mean((s_m ** 2 + s_p ** 2) / 2)))
        return level, "from the measurement's sigmas"
    diffs = np.abs(np.concatenate([np.diff(real), np.diff(imag)]))
    return float(np.median(diffs) / (0.6745 * math.sqrt(2))), "estimated from point-to-point scatter"


def lin_kk(measurement: Measurement, mu_threshold: float = 0.85,
           max_elements: int | None = None, max_points: int = MAX_POINTS) -> KramersKronigResult:
    """Kramers-Kronig consistency of a measurement by the linear Lin-KK test.

    Parameters
    ----------
    measurement : Measurement
        Frequency in Hz, impedance in ohm; at least ``MIN_POINTS`` points over a frequency span.
    mu_threshold : float
        M grows until mu falls below this (0.85 in Schonleber et al. 2014, from memory). Lower values let
        more elements in and make the test more forgiving.
    max_elements : int or None
        Cap on M; default ``N // 2 - 2`` (half the points, less the series terms) so the fit stays
        over-determined. The mu criterion normally stops well before.
    max_points : int
        A sweep of more points is checked on this many, spaced evenly through it (said in the result).

    Returns
    -------
    KramersKronigResult
        Residuals relative to |Z|, the chosen M and mu, and the verdict with its reason.

    Raises
    ------
    InputError
        Fewer than ``MIN_POINTS`` points, a zero impedance, or a bad ``max_elements``/``mu_threshold``.
    """
    where = measurement.provenance.source or "measurement"
    n = len(measurement)
    if n < MIN_POINTS:
        raise InputError(f"{where}: Lin-KK needs at least {MIN_POINTS} points, got {n}; measure more points")
    z = measurement.impedance
    if np.any(z == 0):
        raise InputError(f"{where}: impedance is exactly 0 at some point; Lin-KK weights by 1/|Z|")
    if max_points < MIN_POINTS:
        raise InputError(f"lin_kk: max_points must be at least {MIN_POINTS}, got {max_points}")
    decimation = ""
    if n > max_points:
        keep = np.zeros(n, dtype=bool)
        keep[np.round(np.linspace(0, n - 1, int(max_points))).astype(int)] = True
        decimation = f"checked on {int(keep.sum()):,} of the {n:,} points, evenly spaced through the sweep"
        measurement = measurement.select(keep, f"Lin-KK: {decimation}")
        z = measurement.impedance
    total, n = n, len(measurement)
    cap = n // 2 - 2 if max_elements is None else int(max_elements)
    if cap < 1:
        raise InputError(f"{where}: max_elements must be at least 1, got {max_elements}")
    if not math.isfinite(mu_threshold) or mu_threshold > 1:
        raise InputError(f"lin_kk: mu_threshold must be finite and at most 1, got {mu_threshold}")
    omega = measurement.omega
    magnitude = np.abs(z)

    candidates = []
    for name, data in (("impedance", z), ("admittance", 1 / z)):
        fit = _choose(omega, data, mu_threshold, cap)
        z_fit = fit.fitted if name == "impedance" else 1 / fit.fitted
        rel = (z - z_fit) / magnitude
        rms = float(np.sqrt(np.mean(np.concatenate([rel.real, rel.imag]) ** 2)))
        candidates.append((rms, name, fit, rel))
    rms, representation, fit, rel = min(candidates, key=lambda c: c[0])

    real, imag = rel.real.copy(), rel.imag.copy()
    real.setflags(write=False)
    imag.setflags(write=False)
    noise, noise_source = _noise_level(measurement, real, imag)
    limit = max(RMS_FLOOR, NOISE_FACTOR * noise)
    consistent = bool(rms <= limit)
    s_m, s_p = measurement.sigma_lnmag, measurement.sigma_phase
    if not measurement.sigma_absolute and s_m is not None and s_p is not None:
        # per-point weights with an unknown scale (e.g. carried through an S-parameter conversion): judge the
        # residuals in units of each point's own sigma, so points the conversion made noisy do not decide
        shape = np.sqrt((s_m**2 + s_p**2) / 2)
        scaled_real, scaled_imag = real / shape, imag / shape
        scaled_rms = float(np.sqrt(np.mean(np.concatenate([scaled_real, scaled_imag]) ** 2)))
        scaled_noise, _ = _noise_level(dataclasses.replace(measurement, sigma_lnmag=None, sigma_phase=None),
                                       scaled_real, scaled_imag)
        consistent = bool(scaled_rms <= NOISE_FACTOR * scaled_noise or rms <= RMS_FLOOR)
        noise_source = (f"from point-to-point scatter; judged in units of the per-point sigmas "
                        f"({scaled_rms / scaled_noise:.2f} x the noise)")
    # Advisory, not a verdict on the part: a passive linear part is always Kramers-Kronig consistent, so
    # excess residuals point at the measurement (channel delay, drift, fixture) or at a response the
    # Lin-KK basis follows poorly (e.g. ferrite beads); the fit's residual panels tell which.
    # (inspection.py words the advice: basis too small for this response, or data inconsistent)
    verdict = ("consistent" if consistent else
               "residuals above the noise (check for channel delay, drift or fixture effects; some parts, "
               "e.g. ferrite beads, are hard for the Lin-KK basis)")
    figures = (f"residual RMS {100 * rms:.3g} % of |Z| "
               f"(limit {100 * limit:.3g} % = max({100 * RMS_FLOOR:g} %, {NOISE_FACTOR:g} x noise "
               f"{100 * noise:.3g} % {noise_source}); M = {fit.n_elements}, mu = {fit.mu:.2f}, "
               f"fitted as {representation}" + (f"; {decimation}" if decimation else ""))
    note = f"{verdict}: {figures}"
    max_residual = float(max(np.max(np.abs(real)), np.max(np.abs(imag))))
    return KramersKronigResult(n_elements=fit.n_elements, mu=fit.mu, residual_real=real, residual_imag=imag,
                               rms_residual=rms, max_residual=max_residual, consistent=consistent, note=note,
                               representation=representation, noise_level=noise, figures=figures,
                               points_used=n, points_total=total, decimation=decimation)
