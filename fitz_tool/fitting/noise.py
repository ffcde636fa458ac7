"""A noise model from the data: the per-point variance of ln Z as a sum of terms, estimated by likelihood.

The reader knows how the data were taken and lists terms (:class:`fitz_tool.measurement.NoiseTerm`): a part
relative to |Z|, and floors on the channels it read (a fixed-size phasor error on the part channel, whose
level is |I| |Z|, and on the current or shunt channel; a floor in S for network-analyzer data). Per point
``i`` each component of ln Z (ln|Z| and the phase in rad) then has variance ``v_i = sum_k theta_k B_ik`` with
``B`` from the terms at the model's |Z|.

Given the residuals ``r_i = ln(Z_meas / Z_model)`` of a fit, the thetas (>= 0) maximise the Gaussian
likelihood, ``-2 ln L = sum_i |r_i|^2 / v_i + 2 ln v_i`` (+ a constant; variance-function estimation,
common practice). Every non-empty subset of the terms is scored by ``BIC = -2 ln L + k ln(2M)`` (Schwarz
1978, k thetas, 2M residual entries); the single-shape model the fit uses by default (the terms marked
``default``) is kept unless another subset scores lower by more than ``BIC_MARGIN`` (6: "strong" evidence
on the scale of Kass and Raftery, J. Am. Stat. Assoc. 90 (1995) 773, from memory), so that a shape the data
cannot tell from the default (a floor on a channel of nearly constant level) is not reported. A chosen
model is iterated: the circuit refitted with weights ``1 / sqrt(v)`` (Levenberg-Marquardt from the current
point), the thetas re-estimated, until ``v`` changes by less than 1 % (iteratively reweighted least
squares). It is kept only if its BIC, with the circuit refitted, still leads the default's by the margin.
The fit's covariance is still scaled by the residuals, so the thetas give the shape of the noise and the
residuals its level.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
from scipy.optimize import nnls

from ..measurement import Measurement, NoiseTerm
from ..units import _eng
from .local import LocalFit, local_fit
from .problem import FitProblem

__all__ = ["NoiseModel", "likelihood_thetas", "choose_terms", "estimate_noise", "ITERATIONS", "BIC_MARGIN"]

#: Largest number of refit-and-re-estimate rounds for a chosen noise model.
ITERATIONS = 6
#: Largest number of Fisher-scoring steps of the theta estimate.
MAX_SCORING = 60
#: BIC lead over the single-shape default that a noise model from the data needs.
BIC_MARGIN = 6.0
#: Relative change of every point's variance below which the rounds stop.
SETTLED = 0.01


@dataclass(frozen=True)
class NoiseModel:
    """The noise model a fit used.

    Attributes
    ----------
    terms : tuple of NoiseTerm
        The terms in the model.
    theta : ndarray
        Variance coefficient of each term (unit^2; a relative term's sqrt is a fraction), scaled so that the
        weighted residuals of the final fit have unit variance.
    bic_gain : float
        BIC of the single-shape default minus the BIC of this model, both with the circuit refitted
        (0 when the default was kept).
    default : bool
        True when the single-shape default was kept.
    """

    terms: tuple[NoiseTerm, ...]
    theta: np.ndarray
    bic_gain: float
    default: bool

    def words(self) -> str:
        """The model in words: ``"0.21 % of |Z| plus a floor of 18 uV on the part channel (peak)"``."""
        parts = []
        for term, theta in zip(self.terms, self.theta, strict=True):
            size = float(np.sqrt(theta))
            if size == 0:
                continue
            if term.unit == "%":
                parts.append(f"{100 * size:.2g} % {term.words}")
            elif term.unit:
                parts.append(f"a floor of {_eng(float(f'{size:.2g}'), term.unit, None)} {term.words}")
            else:
                parts.append(f"a floor of {size:.2g} ({20 * np.log10(size):.0f} dB) {term.words}")
        if not parts:
            return "no noise left in the residuals (exact data)"
        text = " plus ".join(parts)
        if self.default:
            return f"{text} (the single-shape model: no added term lowers the BIC by over {BIC_MARGIN:g})"
        return f"{text} (from the data; BIC {self.bic_gain:.0f} lower than the single-shape model)"


def _columns(terms: tuple[NoiseTerm, ...], z_model: np.ndarray) -> np.ndarray:
    magnitude = np.abs(z_model)
    return np.column_stack([t.column(magnitude) for t in terms])


def likelihood_thetas(r2: np.ndarray, columns: np.ndarray) -> tuple[np.ndarray, float]:
    """Maximum-likelihood thetas (>= 0) for squared complex residuals ``r2`` and term columns (M, k).

    Returns (theta, -2 ln L without the constant). Each component of ln Z has variance ``columns @ theta``,
    so ``r2 / 2`` has mean ``v`` and variance ``v^2``: Fisher scoring is then a weighted least-squares fit of
    ``r2 / 2`` on the columns with weights ``1 / v^2`` (the classical iteration for variance components,
    common practice), here with theta >= 0 by ``scipy.optimize.nnls``, started from the best single term
    (whose estimate is closed-form, ``mean(r2 / 2 / column)``) and with the step halved until the likelihood
    rises, so the result is never worse than the best single term.
    """
    y = np.asarray(r2, dtype=float) / 2
    scale = np.median(columns, axis=0)
    b = columns / scale

    def m2lnl(theta):
        v = np.maximum(b @ theta, 1e-300)
        return float(np.sum(2 * y / v + 2 * np.log(v)))

    alone = np.mean(y[:, None] / b, axis=0)
    singles = [m2lnl(np.where(np.arange(b.shape[1]) == k, alone[k], 0.0)) for k in range(b.shape[1])]
    k0 = int(np.argmin(singles))
    theta, current = np.where(np.arange(b.shape[1]) == k0, alone[k0], 0.0), singles[k0]
    for _ in range(MAX_SCORING if b.shape[1] > 1 else 0):
        w = 1 / np.maximum(b @ theta, 1e-300)
        step = nnls(b * w[:, None], y * w)[0] - theta
        t = 1.0
        while t > 1e-4 and m2lnl(theta + t * step) > current:
            t /= 2
        trial = m2lnl(theta + t * step)
        if trial > current:
            break
        theta, gain, current = theta + t * step, current - trial, trial
        if gain <= 1e-9 * max(1.0, abs(current)):
            break
    return theta / scale, current


def choose_terms(terms: tuple[NoiseTerm, ...], r2: np.ndarray, z_model: np.ndarray
                 ) -> tuple[tuple[int, ...], dict[tuple[int, ...], float]]:
    """The subset of ``terms`` (indices) with the lowest BIC at these residuals, and every subset's BIC;
    the default subset unless the best leads it by more than ``BIC_MARGIN``."""
    columns = _columns(terms, z_model)
    penalty = np.log(2 * r2.size)
    default = tuple(i for i, t in enumerate(terms) if t.default)
    scores = {}
    for size in range(1, len(terms) + 1):
        for subset in itertools.combinations(range(len(terms)), size):
            scores[subset] = likelihood_thetas(r2, columns[:, subset])[1] + size * penalty
    best = min(scores, key=scores.get)
    if scores[default] <= scores[best] + BIC_MARGIN:
        best = default
    return best, scores


def _squared_residuals(problem: FitProblem, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """|ln(Z_meas / Z_model)|^2 per point and the model's Z at ``x``."""
    z_model = problem.circuit.impedance(problem.frequency, problem.values(x))
    with np.errstate(all="ignore"):
        r = np.log(problem.impedance / z_model)
    return np.abs(r) ** 2, z_model


def _scaled(theta: np.ndarray, r2: np.ndarray, v: np.ndarray, problem: FitProblem) -> np.ndarray:
    """Thetas scaled so that the residuals weighted by 1/sqrt(v) have unit variance per degree of freedom."""
    dof = max(1, 2 * r2.size - len(problem.free))
    return theta * float(np.sum(r2 / v)) / dof


def _reweighted(problem: FitProblem, v: np.ndarray) -> FitProblem:
    weight = 1 / np.sqrt(v)
    return FitProblem(problem.circuit, problem.frequency, problem.impedance, weight, weight, problem.free,
                      problem.exponent, problem.fixed)


def estimate_noise(problem: FitProblem, measurement: Measurement, out: LocalFit,
                   bounds: tuple[np.ndarray, np.ndarray]) -> tuple[FitProblem, LocalFit, Measurement,
                                                                  NoiseModel] | None:
    """The noise model of a finished fit, and the fit redone with it when the data support more than the
    default shape (module rules). Returns (problem, fit, measurement, model): the problem, fit and
    measurement unchanged when the default is kept, else reweighted (the measurement then carries the
    per-point sigmas, level scaled to the residuals). None when the measurement has no noise terms or
    carries absolute uncertainties."""
    terms = measurement.noise_terms
    if measurement.sigma_absolute or not terms or any(t.coefficient.shape != problem.frequency.shape
                                                      for t in terms):
        return None
    r2, z_model = _squared_residuals(problem, out.x)
    if not (np.all(np.isfinite(r2)) and np.any(r2 > 0)):
        return None
    chosen, scores = choose_terms(terms, r2, z_model)
    default = tuple(i for i, t in enumerate(terms) if t.default)

    def kept() -> tuple[FitProblem, LocalFit, Measurement, NoiseModel]:
        columns = _columns(terms, z_model)[:, default]
        theta, _ = likelihood_thetas(r2, columns)
        model = NoiseModel(tuple(terms[i] for i in default), _scaled(theta, r2, columns @ theta, problem),
                           0.0, True)
        return problem, out, measurement, model

    if chosen == default:
        return kept()
    subset = tuple(terms[i] for i in chosen)
    theta, m2lnl = likelihood_thetas(r2, _columns(subset, z_model))
    v = _columns(subset, z_model) @ theta
    fit, trial = out, problem
    for _ in range(ITERATIONS):
        trial = _reweighted(problem, v)
        fit = local_fit(trial, fit.x, bounds[0], bounds[1], True)
        r2_fit, z_fit = _squared_residuals(trial, fit.x)
        theta, m2lnl = likelihood_thetas(r2_fit, _columns(subset, z_fit))
        v_new = _columns(subset, z_fit) @ theta
        settled = bool(np.max(np.abs(v_new / v - 1)) < SETTLED)
        v = v_new
        if settled:
            break
    live = theta > 0  # a term estimated at 0 is left out (same likelihood, one parameter fewer)
    subset, theta = tuple(t for t, keep in zip(subset, live, strict=True) if keep), theta[live]
    gain = scores[default] - (m2lnl + len(subset) * np.log(2 * r2.size))
    if not (gain > BIC_MARGIN and fit.success):
        return kept()
    model = NoiseModel(subset, _scaled(theta, r2_fit, v, problem), float(gain), False)
    used = 1 / trial.weight_lnmag**2  # the variances the last refit weighted by
    sigma = np.sqrt(used * float(np.sum(r2_fit / used)) / max(1, 2 * r2_fit.size - len(problem.free)))
    m = measurement.replace(
        step=f"noise model from the data: {model.words()}; per-point sigmas of ln|Z| and phase from it "
             "(relative weights: the noise level comes from the residuals)",
        sigma_lnmag=sigma, sigma_phase=sigma, sigma_absolute=False)
    return trial, fit, m, model
