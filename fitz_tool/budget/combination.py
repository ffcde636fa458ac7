"""The uncertainty budget of a fit: sensitivities to each input quantity, combined with the noise (GUM).

Method (JCGM 100:2008, "GUM"):

- Sensitivity (GUM 5.1.3) of each fitted parameter to each input, at first order by the fit's normal
  equations: an input at its standard uncertainty u_i shifts the data's ln Z by ``delta`` (see
  :mod:`fitz_tool.budget.inputs`); the least-squares step that follows it is ``dx = (J^T J)^-1 J^T W delta``
  with J the fit's weighted Jacobian in internal coordinates (log10 of each parameter) and W the weights.
  For a pure scale factor of Z this is exact: scaling Z scales every R and L and divides every C, a straight
  line in log coordinates. The signed contribution of input i to a parameter p is ``c_i u_i = p ln(10) dx``
  (``c_i`` the sensitivity coefficient); to a design value q the central difference
  ``(q(x + h dx) - q(x - h dx)) / (2 h)`` with h = 1e-3, the design values recomputed with
  :func:`fitz_tool.derived.design_values` on the two displaced fits.
- Type A: the fit's own first-order standard error (noise), with ``nu_A = 2 N - k`` degrees of freedom when
  the noise level was estimated from the residuals, infinite when the stated sigmas were trusted.
- Combined standard uncertainty (GUM 5.1.2, inputs uncorrelated): ``u_c^2 = u_A^2 + sum_i (c_i u_i)^2``.
- Effective degrees of freedom, Welch-Satterthwaite (GUM G.4.1), type B inputs with infinite degrees of
  freedom (GUM G.4.2): ``nu_eff = u_c^4 / (u_A^4 / nu_A)``.
- Expanded uncertainty ``U = k u_c`` with ``k = t_p(nu_eff)``, p = 95.45 % (GUM G.3.4, G.6.4): k = 2 for
  large nu_eff, larger when type A dominates with few points.
- Share of each source: its fraction of ``u_c^2``.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.special import stdtrit

from ..derived import DerivedValue, DesignValues, design_values
from ..fitting.problem import FitProblem, problem_for
from ..results import FitResult
from ..units import format_quantity
from .inputs import BudgetInputs, Source

__all__ = ["Contribution", "BudgetEntry", "MonteCarloCheck", "Budget", "uncertainty_budget",
           "coverage_factor", "COVERAGE_PROBABILITY", "NOISE_KEY", "design_items",
           "frequency_text"]

#: Coverage probability of the expanded uncertainty (k = 2 for a normal distribution; GUM 6.3.3).
COVERAGE_PROBABILITY = 0.9545
#: Fraction of each input's first-order step by which design values are displaced (central difference).
_H = 1e-3
_LN10 = math.log(10.0)
#: A type B input moving a value by more than this fraction at its limit gets a note (first order doubtful).
NONLINEAR_FRACTION = 0.3
#: Source key of the type A (noise) contribution.
NOISE_KEY = "noise"


@dataclass(frozen=True)
class Contribution:
    """One row of a budget: an input quantity and what it does to one value.

    ``sensitivity`` is the coefficient c_i in the value's unit per unit of the input; ``contribution`` is the
    signed ``c_i u_i`` in the value's unit; ``share`` its fraction of ``u_c^2``.
    """

    key: str
    label: str
    limit: float | None
    unit: str
    standard_uncertainty: float | None
    sensitivity: float | None
    contribution: float
    share: float


@dataclass(frozen=True)
class MonteCarloCheck:
    """The Monte Carlo propagation of the same budget (JCGM 101:2008) for one value.

    ``u`` is the standard deviation of the draws; ``low``, ``high`` the probabilistically symmetric 95.45 %
    coverage interval; ``agrees`` whether ``u`` agrees with the first-order u_c within the draws' own scatter;
    ``interval_ratio`` the width of [low, high] over the width of y +/- U (below 1 where a rectangular input
    dominates, so that k = 2 is conservative).
    """

    draws: int
    u: float
    low: float
    high: float
    agrees: bool
    note: str
    interval_ratio: float = math.nan


@dataclass(frozen=True)
class BudgetEntry:
    """The budget of one fitted parameter or design value (SI units; ``u_*`` in the value's unit).

    ``u_combined`` and ``expanded`` are None when the noise part is not known (``note`` says why).
    """

    name: str
    label: str
    value: float
    unit: str
    u_noise: float | None
    nu_noise: float
    contributions: tuple[Contribution, ...]
    u_combined: float | None
    nu_eff: float
    coverage_factor: float
    expanded: float | None
    dominant: str
    advice: str
    note: str = ""
    monte_carlo: MonteCarloCheck | None = None

    @property
    def u_type_b(self) -> float:
        """Combined standard uncertainty of the stated limits alone (type B)."""
        return math.sqrt(sum(c.contribution**2 for c in self.contributions if c.key != NOISE_KEY))


@dataclass(frozen=True)
class Budget:
    """Uncertainty budget of a fit: one entry per fitted parameter and per design value.

    Design value names are ``"SRF"`` (``"SRF 1"``, ``"SRF 2"`` when there are several), ``"Q at SRF"`` (the
    resonator Q of each) and
    ``"NAME at FREQ"`` (e.g. ``"ESR at 100 kHz"``) for the values at each operating frequency.
    """

    parameters: dict[str, BudgetEntry]
    design: dict[str, BudgetEntry]
    sources: tuple[Source, ...]
    note: str
    monte_carlo_draws: int = 0

    @property
    def noise_only(self) -> bool:
        """True when no accuracy input was stated: the uncertainties are from noise alone."""
        return not self.sources

    @property
    def expanded(self) -> dict[str, float | None]:
        """Name -> expanded uncertainty U (SI, the value's unit) of every parameter and design value."""
        return {name: e.expanded for name, e in {**self.parameters, **self.design}.items()}

    def entry(self, name: str) -> BudgetEntry:
        """The entry of a parameter or design value by name."""
        entries = {**self.parameters, **self.design}
        if name not in entries:
            raise KeyError(f"no budget entry {name!r}; entries: {', '.join(entries)}")
        return entries[name]


def coverage_factor(nu_eff: float) -> float:
    """k for 95.45 % coverage from the t-distribution with ``nu_eff`` degrees of freedom (2 when infinite)."""
    if not math.isfinite(nu_eff):
        return 2.0
    # inverse of Student's t distribution function (scipy.special; scipy.stats is slow to import)
    return float(stdtrit(max(nu_eff, 1.0), 0.5 + COVERAGE_PROBABILITY / 2))


def design_items(design: DesignValues) -> dict[str, DerivedValue]:
    """Budget names of the design values: ``"SRF"`` (numbered when several), its resonator Q ``"Q at SRF"``
    and ``"NAME at FREQ"``."""
    items: dict[str, DerivedValue] = {}
    several = len(design.resonances) > 1
    for i, res in enumerate(design.resonances):
        key = f"SRF {i + 1}" if several else "SRF"
        items[key] = res.frequency
        if getattr(res, "quality", None) is not None:
            items[f"Q at {key}"] = res.quality
    for point in design.points:
        for name, value in point.values.items():
            items[f"{name} at {frequency_text(point.frequency)}"] = value
    return items


def frequency_text(frequency: float) -> str:
    """Engineering notation of a frequency without trailing zeros ("100 kHz", "1.5 MHz")."""
    number, _, unit = format_quantity(frequency, "Hz").partition(" ")
    if "." in number:
        number = number.rstrip("0").rstrip(".")
    return f"{number} {unit}"


def _problem(result: FitResult) -> tuple[FitProblem, np.ndarray]:
    free = tuple(n for n, p in result.parameters.items() if p.vary)
    fixed = {n: p.value for n, p in result.parameters.items() if not p.vary}
    problem = problem_for(result.circuit, result.measurement, free, fixed)
    x0 = np.array([p if problem.exponent[i] else math.log10(p)
                   for i, p in enumerate(result.parameters[n].value for n in free)])
    return problem, x0


def with_internal(result: FitResult, problem: FitProblem, x: np.ndarray,
                  offsets: dict[str, float] | None = None) -> FitResult:
    """A copy of ``result`` with the free parameters at internal coordinates ``x`` (plus SI ``offsets``)."""
    params = dict(result.parameters)
    offsets = offsets or {}
    for i, name in enumerate(problem.free):
        value = float(x[i]) if problem.exponent[i] else 10.0 ** float(x[i])
        params[name] = dataclasses.replace(params[name], value=value + offsets.get(name, 0.0))
    return dataclasses.replace(result, parameters=params)


def _step(problem: FitProblem, jacobian: np.ndarray, source: Source) -> np.ndarray:
    """Least-squares step of the internal coordinates that follows the input at +u (first order)."""
    u = source.standard_uncertainty
    delta = u * (source.shape_lnmag + 1j * source.shape_phase)
    b = np.concatenate([delta.real * problem.weight_lnmag, delta.imag * problem.weight_phase])
    return np.linalg.lstsq(jacobian, b, rcond=None)[0]


_PLAIN = {"magnitude_accuracy": "|Z| accuracy", "phase_accuracy": "phase accuracy",
          "shunt": "shunt tolerance",
          "reference": "reference resistor tolerance", "load": "load standard tolerance",
          "skew": "skew calibration"}


def _words(name: str, value: float, unit: str) -> str:
    return format_quantity(value, unit) if unit not in ("deg", "") else f"{value:.2g}{' deg' if unit else ''}"


def _entry(name: str, label: str, value: float, unit: str, u_noise: float | None, nu_noise: float,
           signed: list[tuple[Source, float | None]], note: str = "") -> BudgetEntry:
    # contributions at the level of rounding in the displaced fits are exact zeros (e.g. a gain error on Q)
    floor = 1e-9 * abs(value)
    known = [(s, 0.0 if abs(c) < floor else c) for s, c in signed if c is not None and math.isfinite(c)]
    var_b = sum(c * c for _, c in known)
    missing = [s.label for s, c in signed if c is None or not math.isfinite(c)]
    if missing:
        note = "; ".join(filter(None, [note, f"no sensitivity to {', '.join(missing)} (the value is not "
                                                  "defined on both displaced fits)"]))
    large = [s.label for s, c in known if abs(c) * math.sqrt(3) > NONLINEAR_FRACTION * abs(value)]
    if large and unit != "deg":
        note = "; ".join(filter(None, [note, (
            f"at its stated limit the {' and the '.join(large)} moves this value by more than "
            f"{NONLINEAR_FRACTION * 100:.0f} %: the first-order budget may not hold here, check it with the "
            "Monte Carlo propagation (--budget-mc)")]))
    if u_noise is None or missing:
        u_c = None
        note = note or "no noise (type A) uncertainty from the fit for this value"
    else:
        u_c = math.sqrt(u_noise**2 + var_b)
    total = (u_c**2 if u_c else var_b) or 1.0
    rows = []
    if u_noise is not None:
        rows.append(Contribution(NOISE_KEY, "measurement noise (type A, from the fit)", None, "", None, None,
                                 u_noise, u_noise**2 / total))
    for s, c in known:
        rows.append(Contribution(s.key, s.label, s.limit, s.unit, s.standard_uncertainty,
                                 c / s.standard_uncertainty, c, c * c / total))
    if u_c is not None and u_noise and math.isfinite(nu_noise):
        nu_eff = u_c**4 / (u_noise**4 / nu_noise)
    else:
        nu_eff = math.inf
    k = coverage_factor(nu_eff)
    dominant = advice = ""
    if rows and u_c:
        top = max(rows, key=lambda r: r.share)
        what = "the measurement noise" if top.key == NOISE_KEY else f"the {top.label}"
        dominant = f"{name}: {what} contributes {top.share * 100:.0f} % of u_c^2"
        if top.key == NOISE_KEY:
            advice = ("more points or more averaging would cut it most (the noise part falls as "
                      "1/sqrt(points))")
        else:
            halved = math.sqrt(max(u_c**2 - 0.75 * top.contribution**2, 0.0))
            advice = (f"a tighter {_PLAIN.get(top.key, top.label)} would cut it "
                      f"most: half the limit gives u_c = {_words(name, halved, unit)} instead of "
                      f"{_words(name, u_c, unit)}")
    return BudgetEntry(name, label, float(value), unit, u_noise, nu_noise, tuple(rows), u_c, nu_eff, k,
                       None if u_c is None else k * u_c, dominant, advice, note)


def uncertainty_budget(result: FitResult, inputs: BudgetInputs | None = None, at: Sequence[float] = (),
                       *, monte_carlo: int = 0, seed: int | None = 0, nominal=None) -> Budget:
    """Uncertainty budget (GUM) of every fitted parameter and design value of ``result``.

    Parameters
    ----------
    result : FitResult
        The fit (values SI, covariance SI).
    inputs : BudgetInputs, optional
        Stated +/- limits of the bench; None or empty: noise only.
    at : sequence of float
        Operating frequencies (Hz) for design values, as for :func:`fitz_tool.design_values`.
    monte_carlo : int
        Number of Monte Carlo draws for the JCGM 101 check (0: none).
    seed : int or None
        Seed of the Monte Carlo draws.
    nominal : DesignValues, optional
        ``design_values(result, at)`` when the caller has it already (computed here otherwise).

    Returns
    -------
    Budget
        Per name: u_noise, contributions, u_combined, nu_eff, k, expanded U (all SI in the value's unit).
    """
    inputs = inputs or BudgetInputs()
    m = result.measurement
    sources = tuple(inputs.sources_for(m.frequency))
    problem, x0 = _problem(result)
    nu_a = math.inf if m.sigma_absolute else float(max(result.degrees_of_freedom, 1))
    nominal = design_values(result, at) if nominal is None else nominal
    items = design_items(nominal)
    p_signed: dict[str, list] = {n: [] for n in problem.free}
    d_signed: dict[str, list] = {n: [] for n in items}
    jacobian = problem.jacobian(x0) if sources else None
    for source in sources:
        dx = _step(problem, jacobian, source)
        for i, name in enumerate(problem.free):
            p = result.parameters[name].value
            c = float(dx[i]) if problem.exponent[i] else p * _LN10 * float(dx[i])
            p_signed[name].append((source, c))
        plus = design_items(design_values(with_internal(result, problem, x0 + _H * dx), at))
        minus = design_items(design_values(with_internal(result, problem, x0 - _H * dx), at))
        for key in items:
            if key in plus and key in minus:
                d_signed[key].append((source, (plus[key].value - minus[key].value) / (2 * _H)))
            else:
                d_signed[key].append((source, None))
    parameters = {}
    for name, p in result.parameters.items():
        if p.vary:
            note = p.stderr_note if p.stderr is None else ""
            if p.stderr is not None and p.interval is not None:
                note = ("the noise part is the first-order standard error; the fit flags it and gives a 68 % "
                        "profile-likelihood interval, the better noise figure for this parameter")
            parameters[name] = _entry(name, "fitted parameter", p.value, p.unit, p.stderr, nu_a,
                                      p_signed[name], note)
    design = {key: _entry(key, v.label, v.value, v.unit, v.stderr, nu_a, d_signed[key],
                          v.note if v.stderr is None else "")
              for key, v in items.items() if math.isfinite(v.value)}
    if not sources:
        note = ("uncertainties are from noise only (type A): no accuracy of the instrument, shunt, "
                "reference, "
                "fixture or skew was stated, so these figures describe precision, not accuracy")
    else:
        note = ("GUM: type B inputs rectangular from the stated limits (u = a/sqrt 3), each a systematic "
                "offset common to the whole sweep; sensitivities by the fit's normal equations; "
                "combined with "
                "the noise (type A); k from the t-distribution with Welch-Satterthwaite nu_eff (95.45 %)")
    doubtful = [n for n, e in parameters.items() if "may not hold" in e.note]
    if doubtful and not monte_carlo:
        note += (f". The first-order budget may not hold for {', '.join(doubtful)} and the values that "
                 "depend on them; check it with the Monte Carlo propagation (--budget-mc)")
    budget = Budget(parameters, design, sources, note)
    if monte_carlo:
        from .montecarlo import monte_carlo_check

        budget = monte_carlo_check(budget, result, problem, x0, at, monte_carlo, seed)
    return budget
