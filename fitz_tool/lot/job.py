"""One part of a lot: read, correct, fit and derive, as a plain picklable job returning a JSON-safe record.

The job runs in a worker process (or on a Dask worker), so it carries only text options and SI numbers and
returns only JSON-safe data: the same record ``fitz-tool fit --json`` writes (``fit_to_json``), for every
candidate model fitted, plus the measured |Z| and phase for the lot's overlay plot. Reading and corrections
go through the same function as ``fitz-tool fit`` (``cli.load_from_args``), so a lot reads every file
exactly as the single-part command does.
"""

from __future__ import annotations

import argparse
import time
import traceback
from dataclasses import dataclass, field

import numpy as np

from ..exceptions import FitzError

__all__ = ["PartJob", "run_part", "READING_FIELDS"]

#: Reading and correction options of a part (text, as on the command line); ``map`` is a list of ROLE=HEADER.


def _reading_fields() -> tuple[str, ...]:
    """Names of the reading and correction options, taken from the command line's own option group."""
    from ..cli import add_reader_options

    parser = argparse.ArgumentParser(add_help=False)
    add_reader_options(parser)
    return tuple(action.dest for action in parser._actions)


READING_FIELDS = _reading_fields()


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
    at : tuple of float
        Operating frequencies (Hz) for design values.
    """

    file: str
    reading: dict = field(default_factory=dict)
    model: str = "auto"
    fixed: dict = field(default_factory=dict)
    guesses: dict = field(default_factory=dict)
    bounds: dict = field(default_factory=dict)
    intervals: str = "flagged"
    at: tuple[float, ...] = ()

    def standards(self) -> list[str]:
        """Files of the fixture standards this job reads besides the bench file."""
        return [self.reading[k] for k in ("open", "short", "load") if self.reading.get(k)]


def _namespace(job: PartJob) -> argparse.Namespace:
    values = {name: None for name in READING_FIELDS}
    values["map"] = []
    values.update({k: v for k, v in job.reading.items() if v not in (None, "")})
    return argparse.Namespace(file=job.file, **values)


def run_part(job: PartJob) -> dict:
    """Fit one part; never raises for a bad file.

    Returns
    -------
    dict
        ``status`` (``"ok"`` or ``"error"``), ``error`` (one line), ``retry`` (True for an unexpected error
        that should not be stored), ``candidates`` (expression -> fit record as ``fit_to_json``),
        ``chosen`` (this file's own choice), ``curve`` (``frequency_Hz``, ``abs_ohm``, ``phase_deg``) and
        ``elapsed_s``.
    """
    start = time.perf_counter()
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
    return payload


def _fit_part(job: PartJob) -> dict:
    from ..cli import load_from_args
    from ..derived import design_values
    from ..fitting.least_squares import fit
    from ..fitting.selection import fit_auto
    from ..outputs.report import fit_to_json

    measurement, _ = load_from_args(_namespace(job))
    constraints = dict(fixed=job.fixed, guesses=job.guesses, bounds=job.bounds, intervals=job.intervals)
    candidates: dict[str, dict] = {}
    if job.model.strip().lower() == "auto":
        selection = fit_auto(measurement, **constraints)
        for ranked in selection.ranking:
            if ranked.result is not None:
                record = fit_to_json(ranked.result, None, design_values(ranked.result, job.at), None)
                record["adequate"], record["note"] = bool(ranked.adequate), ranked.note
                candidates[ranked.expression] = record
        chosen = selection.chosen.circuit.expression
    else:
        result = fit(measurement, job.model, **constraints)
        chosen = result.circuit.expression
        candidates[chosen] = fit_to_json(result, None, design_values(result, job.at), None)
    z = measurement.impedance
    curve = {"frequency_Hz": measurement.frequency.tolist(), "abs_ohm": np.abs(z).tolist(),
             "phase_deg": np.degrees(np.angle(z)).tolist()}
    return {"status": "ok", "error": "", "retry": False, "candidates": candidates, "chosen": chosen,
            "curve": curve}
