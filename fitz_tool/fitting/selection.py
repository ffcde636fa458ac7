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
import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import replace

import numpy as np

from ..circuit import Circuit
from ..exceptions import FitError, InputError
from ..measurement import Measurement
from ..presets import default_candidates, resolve_model
from ..results import FitResult, ModelSelection, RankedModel
from .assessment import INTERVAL_MODES
from .least_squares import SCATTER_FLAG, Searched, check_noise_shape, judge, search, with_noise_model
from .work import budgeted

__all__ = ["fit_auto", "is_adequate", "BIC_MARGIN"]

#: BIC difference below which a simpler adequate model is preferred over the best-BIC one.
BIC_MARGIN = 10.0
#: Sweeps with at least this many points search the candidates in a process pool (when jobs > 1).
PARALLEL_POINTS = 2000


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


def _search_one(task: tuple) -> tuple[str, object]:
    """Search one candidate (a top-level function, so a process pool can run it)."""
    measurement, expression, fixed, guesses, bounds = task
    circuit = Circuit.parse(expression)
    try:
        return expression, search(measurement, circuit, fixed=_only(fixed, circuit),
                                  guesses=_only(guesses, circuit), bounds=_only(bounds, circuit))
    except FitError as exc:
        return expression, exc


def _search_all(measurement: Measurement, expressions: list[str], constraints: tuple, jobs: int,
                progress: Callable[[str], None] | None = None) -> list:
    """(expression, Searched or FitError) per candidate, in a process pool when it pays; ``progress`` is
    called with each candidate's expression as its search starts (serial) or ends (pool)."""
    tasks = [(measurement, e, *constraints) for e in expressions]
    report = progress or (lambda expression: None)
    if jobs > 1 and len(expressions) > 1 and len(measurement) >= PARALLEL_POINTS:
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        context = multiprocessing.get_context("fork" if "fork" in multiprocessing.get_all_start_methods()
                                              else None)
        with ProcessPoolExecutor(max_workers=min(jobs, len(tasks)), mp_context=context) as pool:
            results = []
            for item in pool.map(_search_one, tasks):
                report(item[0])
                results.append(item)
            return results
    results = []
    for task in tasks:
        report(task[1])
        results.append(_search_one(task))
    return results


@budgeted
def fit_auto(measurement: Measurement, candidates: Sequence[str] | None = None, *,
             fixed: Mapping[str, float] | None = None, guesses: Mapping[str, float] | None = None,
             bounds: Mapping[str, tuple[float, float]] | None = None,
             intervals: str = "flagged", jobs: int | None = None,
             progress: Callable[[str], None] | None = None, noise_shape: str = "estimate") -> ModelSelection:
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
    intervals : {"flagged", "all", "none"}
        Profile intervals as for :func:`fitz_tool.fit`, computed for the candidates in play (those the
        rule could choose); the others are judged by first-order errors, and their note says so.
    progress : callable, optional
        Called with each candidate's expression as its search runs (e.g. a progress bar at the CLI).
    noise_shape : {"estimate", "single"}
        As for :func:`fitz_tool.fit`. Candidates are ranked with the single shape (so their BICs compare);
        the chosen one is then fitted again with its noise model from the data.
    jobs : int, optional
        Processes for the candidates' searches (default: the core count); a pool is used only for sweeps of
        at least ``PARALLEL_POINTS`` points, where it pays for its start.
    max_time, max_evaluations : float, int or None
        Work budget of the whole selection, as for :func:`fitz_tool.fit` (:mod:`fitz_tool.fitting.work`).

    Returns
    -------
    ModelSelection
        The ranking (best BIC first; candidates that could not be fitted last) and the chosen fit.
    """
    if intervals not in INTERVAL_MODES:
        raise InputError(f"intervals={intervals!r}: use one of {', '.join(INTERVAL_MODES)}")
    check_noise_shape(noise_shape)
    expressions = list(dict.fromkeys(resolve_model(c) for c in (candidates or default_candidates())))
    searched = _search_all(measurement, expressions, (fixed, guesses, bounds), jobs or os.cpu_count() or 1,
                           progress)
    ranked: list[RankedModel] = []
    done: dict[str, Searched] = {}
    for expression, found in searched:
        if isinstance(found, FitError):
            ranked.append(RankedModel(expression, None, math.inf, False, f"not fitted: {found}"))
            continue
        done[expression] = found
        quick = judge(found, "none")
        adequate, why = is_adequate(quick)
        ranked.append(RankedModel(expression, quick, quick.bic, adequate, why))
    ranked.sort(key=lambda r: (r.bic, r.result.n_free if r.result else 0))
    if not done:
        raise FitError("no candidate model could be fitted: " + "; ".join(r.note for r in ranked))
    if intervals != "none":
        ranked = _judge_in_play(ranked, done, intervals)
    selection = _choose(ranked)
    if noise_shape == "estimate":
        expression = next(r.expression for r in selection.ranking if r.result is selection.chosen)
        found = with_noise_model(done[expression])
        if found.noise is not None and not found.noise.default:
            selection = replace(selection, chosen=judge(found, intervals), reason=selection.reason
                                + "; then fitted again with the noise model from the data")
        elif found.noise is not None:
            chosen = replace(selection.chosen, noise_model=found.noise.words())
            selection = replace(selection, chosen=chosen)
    return selection


def _judge_in_play(ranked: list[RankedModel], done: dict, intervals: str) -> list[RankedModel]:
    """Judge with profile intervals every candidate the rule could choose: those within BIC_MARGIN of the
    best BIC, then further ones in BIC order until one is adequate. The others keep first-order judging."""
    best_bic = ranked[0].bic
    out, settled = [], False
    for r in ranked:
        in_play = r.result is not None and (r.bic <= best_bic + BIC_MARGIN or not settled)
        if in_play:
            full = judge(done[r.expression], intervals)
            adequate, why = is_adequate(full)
            r = RankedModel(r.expression, full, full.bic, adequate, why)
            settled = settled or adequate
        elif r.result is not None:
            r = RankedModel(r.expression, r.result, r.bic, r.adequate,
                            "; ".join(filter(None, [r.note, "judged by first-order errors only"])))
        out.append(r)
    out.sort(key=lambda r: (r.bic, r.result.n_free if r.result else 0))
    return out


def _choose(ranked: list[RankedModel]) -> ModelSelection:
    """Apply the rule of the module docstring to a ranking (best BIC first)."""
    fitted = [r for r in ranked if r.result is not None]
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
    return ModelSelection(ranking=tuple(_mark_equivalent(ranked)), chosen=chosen.result, reason=reason)


def _mark_equivalent(ranked: list[RankedModel]) -> list[RankedModel]:
    """Note candidates that are the same fit in another form: equal BIC and equal model curves (within
    1e-6 relative over the sweep), e.g. a topology and its equivalent rearrangement."""
    out = list(ranked)
    for i, a in enumerate(out):
        if a.result is None:
            continue
        za = a.result.model_impedance()
        for j in range(i):
            b = out[j]
            if b.result is None or abs(a.bic - b.bic) > 1e-6 * max(1.0, abs(b.bic)):
                continue
            if np.max(np.abs(za / b.result.model_impedance() - 1)) < 1e-6:
                note = f"equivalent to {b.expression!r} (the same curve and BIC)"
                out[i] = RankedModel(a.expression, a.result, a.bic, a.adequate,
                                     "; ".join(filter(None, [a.note, note])))
                break
    return out
