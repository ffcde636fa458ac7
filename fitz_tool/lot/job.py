"""One part of a lot: read, correct, fit and derive, as a plain picklable job returning a JSON-safe record.

The job runs in a worker process (or on a Dask worker), so it carries only text options and SI numbers and
returns only JSON-safe data: the same record ``fitz-tool fit --json`` writes (``fit_to_json``, with the
uncertainty budget), for every candidate model fitted, plus the measured |Z| and phase for the lot's
overlay plot. Reading, corrections and the budget's stated limits go through the same functions as
``fitz-tool fit`` (``cli.load_from_args``, ``cli.budget_inputs_from_args``), so a lot reads every file
exactly as the single-part command does.
"""

from __future__ import annotations

import argparse
import time
import traceback
from dataclasses import dataclass, field

import numpy as np

from ..exceptions import FitzError

__all__ = ["PartJob", "run_part", "run_parts", "READING_FIELDS", "BUDGET_FIELDS"]


def _option_parser() -> argparse.ArgumentParser:
    """The command line's own reading, correction and accuracy option groups (so a lot reads as ``fit``)."""
    from ..cli import _add_budget_options, add_reader_options

    parser = argparse.ArgumentParser(add_help=False)
    add_reader_options(parser)
    _add_budget_options(parser)
    return parser


def _fields() -> tuple[tuple[str, ...], tuple[str, ...]]:
    reading = argparse.ArgumentParser(add_help=False)
    from ..cli import add_reader_options

    add_reader_options(reading)
    names = tuple(action.dest for action in reading._actions)
    everything = tuple(action.dest for action in _option_parser()._actions)
    return names, tuple(n for n in everything if n not in names and n != "budget_mc")


#: Reading and correction options of a part (text, as on the command line; ``map`` a list of ROLE=HEADER),
#: and the stated accuracy limits of the uncertainty budget.
READING_FIELDS, BUDGET_FIELDS = _fields()


@dataclass(frozen=True)
class PartJob:
    """Everything a worker needs to fit one file.

    Attributes
    ----------
    file : str
        The bench file.
    reading : dict
        Reading and correction options as text (names in ``READING_FIELDS``; unset ones may be left out).
    model : str
        A circuit expression, or ``"auto"`` to fit every default candidate.
    fixed, guesses : dict of str to float
        Held values and starting values (SI).
    bounds : dict of str to (float, float)
        Limits (SI).
    intervals : str
        Profile-interval mode of :func:`fitz_tool.fit`.
    noise_shape : str
        Noise model of :func:`fitz_tool.fit` (``"estimate"`` or ``"single"``).
    at : tuple of float
        Operating frequencies (Hz) for design values.
    budget : dict
        Stated accuracy limits as text (names in ``BUDGET_FIELDS``) for the uncertainty budget
        (:func:`fitz_tool.budget.uncertainty_budget`); empty: noise only.
    """

    file: str
    reading: dict = field(default_factory=dict)
    model: str = "auto"
    fixed: dict = field(default_factory=dict)
    guesses: dict = field(default_factory=dict)
    bounds: dict = field(default_factory=dict)
    intervals: str = "flagged"
    noise_shape: str = "estimate"
    at: tuple[float, ...] = ()
    budget: dict = field(default_factory=dict)

    def standards(self) -> list[str]:
        """Files this job reads besides the bench file (fixture standards, accuracy table)."""
        return ([self.reading[k] for k in ("open", "short", "load") if self.reading.get(k)]
                + ([self.budget["accuracy_table"]] if self.budget.get("accuracy_table") else []))


def _namespace(job: PartJob) -> argparse.Namespace:
    """The options of ``fitz-tool fit FILE`` as the job gives them (defaults for the rest)."""
    namespace = _option_parser().parse_args([])
    for name, value in {**job.reading, **job.budget}.items():
        if value not in (None, ""):
            setattr(namespace, name, value)
    namespace.file = job.file
    return namespace


def run_part(job: PartJob) -> dict:
    """Fit one part; never raises for a bad file.

    Returns
    -------
    dict
        ``status`` (``"ok"`` or ``"error"``), ``error`` (one line), ``retry`` (True for an unexpected error
        that should not be stored), ``candidates`` (expression -> fit record as ``fit_to_json``),
        ``chosen`` (this file's own choice), ``curve`` (``frequency_Hz``, ``abs_ohm``, ``phase_deg``),
        ``elapsed_s`` (wall clock) and ``cpu_s`` (CPU time of the worker process), in s.
    """
    start, cpu = time.perf_counter(), time.process_time()
    try:
        payload = _fit_part(job)
    except FitzError as exc:
        payload = {"status": "error", "error": str(exc), "retry": False}
    except Exception as exc:  # a bug or a worker problem must not stop the lot; retried on the next run
        where = traceback.extract_tb(exc.__traceback__)[-1]
        payload = {"status": "error", "retry": True,
                   "error": f"{job.file}: internal error {type(exc).__name__}: {exc} "
                            f"({where.filename.rsplit('/', 1)[-1]}:{where.lineno}); please report it"}
    payload["elapsed_s"] = time.perf_counter() - start
    payload["cpu_s"] = time.process_time() - cpu
    return payload


def run_parts(jobs: list[PartJob]) -> list[dict]:
    """:func:`run_part` for several parts in one task (fewer round trips to a worker); results in order."""
    return [run_part(job) for job in jobs]


def _fit_part(job: PartJob) -> dict:
    from ..budget import uncertainty_budget
    from ..cli import budget_inputs_from_args, load_from_args
    from ..derived import design_values
    from ..fitting.least_squares import fit
    from ..fitting.selection import fit_auto
    from ..outputs.report import fit_to_json

    namespace = _namespace(job)
    limits = budget_inputs_from_args(namespace)
    measurement, _ = load_from_args(namespace)

    def record_of(result) -> dict:
        design = design_values(result, job.at)
        budget = uncertainty_budget(result, limits, job.at, nominal=design)
        return fit_to_json(result, None, design, None, budget=budget)

    constraints = dict(fixed=job.fixed, guesses=job.guesses, bounds=job.bounds, intervals=job.intervals,
                       noise_shape=job.noise_shape)
    candidates: dict[str, dict] = {}
    if job.model.strip().lower() == "auto":
        # the candidates' records are compared by BIC over the lot: all with the single noise shape
        selection = fit_auto(measurement, **{**constraints, "noise_shape": "single"})
        for ranked in selection.ranking:
            if ranked.result is not None:
                record = record_of(ranked.result)
                record["adequate"], record["note"] = bool(ranked.adequate), ranked.note
                candidates[ranked.expression] = record
        chosen = selection.chosen.circuit.expression
    else:
        result = fit(measurement, job.model, **constraints)
        chosen = result.circuit.expression
        candidates[chosen] = record_of(result)
    z = measurement.impedance
    curve = {"frequency_Hz": measurement.frequency.tolist(), "abs_ohm": np.abs(z).tolist(),
             "phase_deg": np.degrees(np.angle(z)).tolist()}
    return {"status": "ok", "error": "", "retry": False, "candidates": candidates, "chosen": chosen,
            "curve": curve}
