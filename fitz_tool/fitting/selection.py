"""Automatic model choice: fit a set of candidate circuits, rank them by BIC, pick the simplest adequate one.

Rule (documented in ``ModelSelection.reason`` of every choice):

1. Every candidate is fitted from the data (no starting values needed) and ranked by BIC, lowest first.
2. A candidate is *adequate* when its fit converged, its residuals show no systematic structure against
   frequency (see :func:`fitz_tool.assessment.residual_structure`), and every free parameter is determined by
   the data (none at a bound, none with a standard error larger than its value, none without one unless it
   has a closed profile-likelihood interval above 0 whose half-width is below its value).
3. Among the adequate candidates whose BIC is within ``BIC_MARGIN`` of the best BIC of all candidates, the
   one with the fewest free parameters is chosen (ties: lower BIC). A BIC difference of 10 is "very strong"
   evidence for the better model (Kass and Raftery, J. Am. Stat. Assoc. 90 (1995) 773); below that the
   extra parameters are not clearly needed.
4. If no adequate candidate is that close, the adequate candidate with the lowest BIC is chosen; if none is
   adequate, the lowest BIC of all, and the reason says so.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence

from ..circuit import Circuit
from ..exceptions import FitError
from ..measurement import Measurement
from ..presets import default_candidates, resolve_model
from ..results import FitResult, ModelSelection, RankedModel
from .least_squares import SCATTER_FLAG, fit

__all__ = ["fit_auto", "is_adequate", "BIC_MARGIN"]

#: BIC difference below which a simpler adequate model is preferred over the best-BIC one.
BIC_MARGIN = 10.0


def _only(given: Mapping | None, circuit: Circuit) -> dict:
    return {k: v for k, v in (given or {}).items() if k in circuit.parameter_names}


def is_adequate(result: FitResult) -> tuple[bool, str]:
    """Whether a fit is adequate in the sense of rule 2 above, and if not, why (in words)."""
    problems = []
    if not result.success:
        problems.append("did not converge")
    if any("systematic structure" in flag for flag in result.flags):
        problems.append("residuals show systematic structure")
    if any(flag.startswith(SCATTER_FLAG) for flag in result.flags):
        problems.append("residuals far above the data's scatter")
    for p in result.parameters.values():
        if p.undetermined:
            problems.append(f"{p.name} {p.undetermined}")
        elif p.vary and p.stderr is None and p.interval is None:
            problems.append(f"{p.name} has no standard error")
    return not problems, "; ".join(problems)


def fit_auto(measurement: Measurement, candidates: Sequence[str] | None = None, *,
             fixed: Mapping[str, float] | None = None, guesses: Mapping[str, float] | None = None,
             bounds: Mapping[str, tuple[float, float]] | None = None,
             intervals: str = "flagged", progress: Callable[[str], None] | None = None) -> ModelSelection:
    """Fit every candidate and choose the simplest adequate model (rule in the module docstring).

    Parameters
    ----------
    measurement : Measurement
        Impedance (ohm) over frequency (Hz).
    candidates : sequence of str, optional
        Expressions or preset names; default :func:`fitz_tool.presets.default_candidates`.
    fixed, guesses, bounds : mapping, optional
        As for :func:`fitz_tool.fitting.fit` (SI units); each applies to the candidates that have a
        parameter of that name and is ignored by the others.

    Returns
    -------
    ModelSelection
        The ranking (best BIC first; candidates that could not be fitted last) and the chosen fit.
    """
    expressions = list(dict.fromkeys(resolve_model(c) for c in (candidates or default_candidates())))
    ranked: list[RankedModel] = []
    for expression in expressions:
        if progress is not None:  # optional callback, e.g. a progress bar at the CLI
            progress(expression)
        circuit = Circuit.parse(expression)
        try:
            result = fit(measurement, circuit, fixed=_only(fixed, circuit), guesses=_only(guesses, circuit),
                         bounds=_only(bounds, circuit), intervals=intervals)
        except FitError as exc:
            ranked.append(RankedModel(expression, None, math.inf, False, f"not fitted: {exc}"))
            continue
        adequate, why = is_adequate(result)
        ranked.append(RankedModel(expression, result, result.bic, adequate, why))
    ranked.sort(key=lambda r: (r.bic, r.result.n_free if r.result else 0))
    fitted = [r for r in ranked if r.result is not None]
    if not fitted:
        raise FitError("no candidate model could be fitted: " + "; ".join(r.note for r in ranked))
    best_bic = fitted[0].bic
    adequate = [r for r in fitted if r.adequate]
    close = [r for r in adequate if r.bic <= best_bic + BIC_MARGIN]
    if close:
        chosen = min(close, key=lambda r: (r.result.n_free, r.bic))
        reason = (f"fewest free parameters ({chosen.result.n_free}) among the adequate models within "
                  f"{BIC_MARGIN:g} of the best BIC")
        if chosen is not fitted[0]:
            reason += f" ({fitted[0].expression!r} has the best BIC, {chosen.bic - best_bic:.1f} lower)"
    elif adequate:
        chosen = adequate[0]
        reason = (f"lowest BIC among the adequate models; the better-BIC models are not adequate "
                  f"({fitted[0].expression!r}: {fitted[0].note})")
    else:
        chosen = fitted[0]
        reason = "no candidate is adequate (see the notes of the ranking); chose the lowest BIC"
    ranked = [RankedModel(r.expression, r.result, r.bic, r.adequate,
                          "chosen" + (f"; {r.note}" if r.note else "")) if r is chosen else r for r in ranked]
    return ModelSelection(ranking=tuple(ranked), chosen=chosen.result, reason=reason)
