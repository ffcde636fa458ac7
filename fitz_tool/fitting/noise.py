"""A noise model from the data: the per-point variance of ln Z as a sum of terms, estimated by likelihood.

The reader knows how the data were taken and lists terms (:class:`fitz_tool.measurement.NoiseTerm`): a part
relative to |Z|, and floors on the channels it read (a fixed-size phasor error on the part channel, whose
level is |I| |Z|, and on the current or shunt channel; a floor in S for network-analyzer data). Per point
``i`` each component of ln Z (ln|Z| and the phase in rad) then has variance ``v_i = sum_k theta_k B_ik`` with
``B`` from the terms at the model's |Z|; a term may act on one component only (text forms offer a part of
ln|Z| alone and of the phase alone, so magnitude and phase noise of different sizes are modelled).

Given the residual entries ``e_j`` of a fit (ln|Z_model / Z_meas| and the wrapped phase difference, 2M of
them), the thetas (>= 0) maximise the Gaussian likelihood, ``-2 ln L = sum_j e_j^2 / v_j + ln v_j`` (+ a
constant; variance-function estimation, common practice). Subsets of the terms are scored by
``BIC = -2 ln L + k ln(2M)`` (Schwarz 1978, k thetas), searched stepwise from the single-shape model the fit
uses by default (the terms marked ``default``): the term whose addition lowers the BIC most is added, then
any whose removal lowers it is removed, until nothing changes. The default is kept unless the best subset
found scores lower by more than ``BIC_MARGIN`` (6: "strong" evidence
on the scale of Kass and Raftery, J. Am. Stat. Assoc. 90 (1995) 773, from memory), so that a shape the data
cannot tell from the default (a floor on a channel of nearly constant level) is not reported. A chosen
model is iterated: the circuit refitted with weights ``1 / sqrt(v)`` (Levenberg-Marquardt from the current
point), the thetas re-estimated, until ``v`` changes by less than 1 % (iteratively reweighted least
squares). It is kept only if its BIC, with the circuit refitted, still leads the default's by the margin.
The fit's covariance is still scaled by the residuals, so the thetas give the shape of the noise and the
residuals its level.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import nnls

from ..measurement import Measurement, NoiseTerm
from ..units import _eng
from .local import LocalFit, local_fit
from .problem import FitProblem

__all__ = ["NoiseModel", "likelihood_thetas", "choose_terms", "estimate_noise", "design", "ITERATIONS",
           "BIC_MARGIN"]

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
        """The model in words: ``"0.21 % of |Z| plus a floor of 18 uV on the part channel (peak)"``;
        constant parts of ln|Z| and phase are summed (``"0.1 % of |Z| and 0.5 deg of phase plus ..."``)."""
        constant = {"both": 0.0, "magnitude": 0.0, "phase": 0.0}
        parts = []
        for term, theta in zip(self.terms, self.theta, strict=True):
            size = float(np.sqrt(theta))
            if size == 0:
                continue
            if term.unit == "%" and term.name in ("relative", "magnitude", "phase"):
                constant[term.component] += float(theta)
            elif term.unit == "%":
                parts.append(f"{100 * size:.2g} % {term.words}")
            elif term.unit == "s":
                parts.append(f"{_eng(float(f'{size:.2g}'), 's', None)} {term.words}")
            elif term.unit:
                parts.append(f"a floor of {_eng(float(f'{size:.2g}'), term.unit, None)} {term.words}")
            else:
                parts.append(f"a floor of {size:.2g} ({20 * np.log10(size):.0f} dB) {term.words}")
        magnitude = np.sqrt(constant["both"] + constant["magnitude"])
        phase = np.sqrt(constant["both"] + constant["phase"])
        if constant["magnitude"] or constant["phase"]:
            said = [f"{100 * magnitude:.2g} % of |Z|" if magnitude else "",
                    f"{np.degrees(phase):.2g} deg of phase" if phase else ""]
            parts.insert(0, " and ".join(p for p in said if p))
        elif magnitude:
            parts.insert(0, f"{100 * magnitude:.2g} % of |Z|")
        if not parts:
            return "no noise left in the residuals (exact data)"
        text = " plus ".join(parts)
        if self.default:
            return f"{text} (the single-shape model: no added term lowers the BIC by over {BIC_MARGIN:g})"
        return f"{text} (from the data; BIC {self.bic_gain:.0f} lower than the single-shape model)"


def design(terms: tuple[NoiseTerm, ...], z_model: np.ndarray) -> np.ndarray:
    """The (2M, k) design of the variance model: rows for ln|Z| of every point, then for the phase; a term
    acting on one component only has zeros in the other's rows."""
    magnitude = np.abs(z_model)
    columns = []
    for t in terms:
        c = t.column(magnitude)
        zero = np.zeros_like(c)
        columns.append(np.concatenate([c if t.component != "phase" else zero,
                                       c if t.component != "magnitude" else zero]))
    return np.column_stack(columns)


def likelihood_thetas(e2: np.ndarray, columns: np.ndarray) -> tuple[np.ndarray, float]:
    """Maximum-likelihood thetas (>= 0) for squared residual entries ``e2`` (2M) and the design (2M, k).

    Returns (theta, -2 ln L without the constant). Entry j has variance ``v_j = columns[j] @ theta``, so
    ``e2_j`` has mean ``v_j`` and variance ``2 v_j^2``: Fisher scoring is then a weighted least-squares fit
    of ``e2`` on the columns with weights ``1 / v^2`` (the classical iteration for variance components,
    common practice), here with theta >= 0 by ``scipy.optimize.nnls``, started from the best single term
    (closed form where it covers every entry, ``mean(e2 / column)``) and with the step halved until the
    likelihood rises. Infinite when the terms leave some entry with no variance.
    """
    y = np.asarray(e2, dtype=float)
    covered = np.any(columns > 0, axis=1)
    if not np.all(covered):
        return np.zeros(columns.shape[1]), np.inf
    scale = np.array([np.median(c[c > 0]) for c in columns.T])
    b = columns / scale
    k = b.shape[1]

    def m2lnl(theta):
        v = b @ theta
        if np.any(v <= 0):
            return np.inf
        return float(np.sum(y / v + np.log(v)))

    starts = []
    for j in range(k):
        on = b[:, j] > 0
        starts.append(np.where(np.arange(k) == j, np.mean(y[on] / b[on, j]), 0.0))
    starts.append(np.array([np.mean(y) / np.mean(b[:, j]) / k for j in range(k)]))
    values = [m2lnl(t) for t in starts]
    best = int(np.argmin(values))
    theta, current = starts[best], values[best]
    for _ in range(MAX_SCORING if k > 1 else 0):
        w = 1 / np.maximum(b @ theta, 1e-300)
        step = nnls(b * w[:, None], y * w)[0] - theta
        t = 1.0
        while t > 1e-4 and m2lnl(theta + t * step) > current:
            t /= 2
        trial = m2lnl(theta + t * step)
        if not trial <= current:
            break
        theta, gain, current = theta + t * step, current - trial, trial
        if gain <= 1e-9 * max(1.0, abs(current)):
            break
    return theta / scale, current


def choose_terms(terms: tuple[NoiseTerm, ...], e2: np.ndarray, z_model: np.ndarray
                 ) -> tuple[tuple[int, ...], dict[tuple[int, ...], float]]:
    """The subset of ``terms`` (indices) found best by the stepwise BIC search of the module docstring, and
    the BIC of every subset scored; the default subset unless the best leads it by more than
    ``BIC_MARGIN``."""
    columns = design(terms, z_model)
    penalty = np.log(e2.size)
    default = tuple(i for i, t in enumerate(terms) if t.default)
    scores: dict[tuple[int, ...], float] = {}

    def score(subset: tuple[int, ...]) -> float:
        if subset not in scores:
            scores[subset] = (likelihood_thetas(e2, columns[:, list(subset)])[1] + len(subset) * penalty
                              if subset else np.inf)
        return scores[subset]

    current = default
    for _ in range(2 * len(terms)):
        moves = [tuple(sorted(current + (j,))) for j in range(len(terms)) if j not in current]
        moves += [tuple(i for i in current if i != j) for j in current]
        best = min(moves, key=score, default=current)
        if not score(best) < score(current) - 1e-9:
            break
        current = best
    score(default)
    if scores[default] <= scores[current] + BIC_MARGIN:
        current = default
    return current, scores


def _residual_entries(problem: FitProblem, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Squared unweighted residual entries [ln|Z_model / Z_meas|^2..., phase difference^2...] and the model's
    Z at ``x``."""
    z_model = problem.circuit.impedance(problem.frequency, problem.values(x))
    with np.errstate(all="ignore"):
        ratio = z_model / problem.impedance
        e = np.concatenate([np.log(np.abs(ratio)), np.angle(ratio)])
    return e**2, z_model


def _level(e2: np.ndarray, v: np.ndarray, problem: FitProblem) -> float:
    """The factor that gives the residuals weighted by 1/sqrt(v) unit variance per degree of freedom."""
    return float(np.sum(e2 / v)) / max(1, e2.size - len(problem.free))


def _reweighted(problem: FitProblem, v: np.ndarray) -> FitProblem:
    m = problem.frequency.size
    return FitProblem(problem.circuit, problem.frequency, problem.impedance, 1 / np.sqrt(v[:m]),
                      1 / np.sqrt(v[m:]), problem.free, problem.exponent, problem.fixed)


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
    e2, z_model = _residual_entries(problem, out.x)
    if not (np.all(np.isfinite(e2)) and np.any(e2 > 0)):
        return None
    chosen, scores = choose_terms(terms, e2, z_model)
    default = tuple(i for i, t in enumerate(terms) if t.default)

    def kept() -> tuple[FitProblem, LocalFit, Measurement, NoiseModel]:
        columns = design(terms, z_model)[:, list(default)]
        theta, _ = likelihood_thetas(e2, columns)
        model = NoiseModel(tuple(terms[i] for i in default), theta * _level(e2, columns @ theta, problem),
                           0.0, True)
        return problem, out, measurement, model

    if chosen == default:
        return kept()
    subset = tuple(terms[i] for i in chosen)
    columns = design(subset, z_model)
    theta, m2lnl = likelihood_thetas(e2, columns)
    v = columns @ theta
    fit, trial, e2_fit = out, problem, e2
    for _ in range(ITERATIONS):
        trial = _reweighted(problem, v)
        fit = local_fit(trial, fit.x, bounds[0], bounds[1], True)
        e2_fit, z_fit = _residual_entries(trial, fit.x)
        columns = design(subset, z_fit)
        theta, m2lnl = likelihood_thetas(e2_fit, columns)
        v_new = columns @ theta
        settled = bool(np.all(v_new > 0) and np.max(np.abs(v_new / v - 1)) < SETTLED)
        if np.all(v_new > 0):
            v = v_new
        if settled:
            break
    live = theta > 0  # a term estimated at 0 is left out (same likelihood, one parameter fewer)
    subset, theta = tuple(t for t, keep in zip(subset, live, strict=True) if keep), theta[live]
    gain = scores[default] - (m2lnl + len(subset) * np.log(e2.size))
    if not (gain > BIC_MARGIN and fit.success and np.isfinite(m2lnl)):
        return kept()
    model = NoiseModel(subset, theta * _level(e2_fit, v, problem), float(gain), False)
    m_points = problem.frequency.size
    used = np.concatenate([1 / trial.weight_lnmag**2, 1 / trial.weight_phase**2])  # the last refit's weights
    sigma = np.sqrt(used * _level(e2_fit, used, problem))
    m = measurement.replace(
        step=f"noise model from the data: {model.words()}; per-point sigmas of ln|Z| and phase from it "
             "(relative weights: the noise level comes from the residuals)",
        sigma_lnmag=sigma[:m_points], sigma_phase=sigma[m_points:], sigma_absolute=False)
    return trial, fit, m, model
