"""A fit in text: the terminal report, the JSON record, the curve table and the run record.

All numbers stay SI in the JSON and the curve table; the terminal shows engineering notation through
``units.format_quantity``. The JSON never holds NaN or infinity (those become ``null``).
"""

from __future__ import annotations

import argparse
import datetime
import math
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..derived import DerivedValue, DesignValues
from ..measurement import file_sha256
from ..results import FitResult, ModelSelection
from ..units import format_interval, format_quantity, format_to_resolution, with_symbols
from .wording import describe_form, fit_quality, format_p_value, plain_message, quality_sentence, verdict

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["InputFile", "RunRecord", "run_record", "format_fit_report", "fit_to_json", "curve_table",
           "format_value", "format_derived_value", "read_as_line"]


@dataclass(frozen=True)
class InputFile:
    """One input file and the SHA-256 of its bytes (``""`` when it could not be read)."""

    path: str
    sha256: str


@dataclass(frozen=True)
class RunRecord:
    """How a result was made: every command option (as text), the inputs with checksums, version and date.

    ``date`` is ISO 8601 in UTC, to the second.
    """

    options: dict[str, str]
    inputs: tuple[InputFile, ...]
    version: str
    date: str


def _option_text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, (list, tuple)):
        return "; ".join(str(v) for v in value)
    return str(value)


def run_record(args: argparse.Namespace | dict, inputs: Iterable[str | Path], version: str,
               now: datetime.datetime | None = None) -> RunRecord:
    """Record the options of a run (skipping the ``handler`` callback), its input files and the tool version.

    Parameters
    ----------
    args : argparse.Namespace or dict
        Parsed command options; list options become ``"a; b"``, unset options ``""``.
    inputs : iterable of path
        Files read (bench file and standards); each is hashed with SHA-256.
    version : str
        Tool version.
    now : datetime, optional
        Time of the run (default: now, UTC).
    """
    items = vars(args) if isinstance(args, argparse.Namespace) else dict(args)
    options = {key: _option_text(value) for key, value in items.items() if key != "handler"}
    when = (now or datetime.datetime.now(datetime.UTC)).astimezone(datetime.UTC)
    files = tuple(InputFile(str(p), file_sha256(p)) for p in inputs)
    return RunRecord(options, files, version, when.isoformat(timespec="seconds").replace("+00:00", "Z"))


# ---------------------------------------------------------------------------------------------- terminal


def format_value(value: float, unit: str, stderr: float | None = None) -> str:
    """Engineering notation for a quantity with a unit; plain digits for a pure number (Q, D, exponent n)
    and for a phase in degrees, whose uncertainty is absolute (``"89.873 deg +/- 0.0012 deg"``).

    Either way the value shows two significant digits of its uncertainty and no more.
    """
    if unit != "deg" or not math.isfinite(value):
        return with_symbols(format_quantity(value, unit, stderr))
    if stderr is None or not math.isfinite(stderr) or stderr <= 0:
        return f"{format_quantity(value, '')} deg"
    return with_symbols(f"{format_to_resolution(value, '', stderr)} deg +/- {stderr:.2g} deg")


_BARE_HZ = re.compile(r"(?<![\w.])(\d+(?:\.\d+)?(?:e[-+]?\d+)?) Hz\b")


def _engineering_hz(text: str) -> str:
    """Bare frequencies in a note (``"1e+05 Hz"``, ``"62046.7 Hz"``) in engineering notation."""
    return _BARE_HZ.sub(lambda m: format_quantity(float(m.group(1)), "Hz"), text)


def format_derived_value(value: DerivedValue) -> str:
    """A design value in engineering notation, or the reason it has no uncertainty."""
    if math.isnan(value.value) and value.note.startswith(("undetermined", "undefined")):
        return with_symbols(_engineering_hz(value.note))
    if not math.isfinite(value.value):
        what = "infinite" if value.value > 0 else "undefined"
        return with_symbols(f"{what} ({_engineering_hz(value.note)})")
    text = format_value(value.value, value.unit, value.stderr)
    if value.stderr is None and value.note:
        text += f"  ({with_symbols(_engineering_hz(value.note))})"
    return text


def _table(rows: Sequence[Sequence[str]], header: Sequence[str]) -> list[str]:
    widths = [max(len(str(r[i])) for r in [header, *rows]) for i in range(len(header))]
    line = "  ".join(f"{h:<{w}}" for h, w in zip(header, widths, strict=True))
    out = ["  " + line.rstrip(), "  " + "  ".join("-" * w for w in widths)]
    out += ["  " + "  ".join(f"{c:<{w}}" for c, w in zip(r, widths, strict=True)).rstrip() for r in rows]
    return out


def parameter_rows(result: FitResult) -> list[tuple[str, str, str]]:
    """(name, value with uncertainty, note) for each parameter, in display form."""
    rows = []
    for p in result.parameters.values():
        note = p.stderr_note if p.stderr is None else ""
        if p.at_bound:
            note = (note + "; " if note else "") + f"at {p.at_bound} bound"
        if not p.vary:
            note = note or "fixed by user"
        if p.interval is not None and p.stderr is not None:
            low, high = p.interval
            ends = format_interval(low, high, p.unit, (high - low) / 2)
            note = (note + "; " if note else "") + f"68 % profile interval {ends}"
        rows.append((p.name, format_value(p.value, p.unit, p.stderr), with_symbols(note)))
    return rows


def quality_rows(result: FitResult, verbose: bool = False) -> list[tuple[str, str]]:
    """(measure, value) pairs describing the fit quality in words.

    Without stated noise the residual scatter is the measure (a reduced chi-square of relative weights means
    nothing to the reader); with stated noise, chi-square and its p-value. ``verbose`` adds the raw figures
    (chi-square, reduced chi-square, AIC) and the optimiser's own message.
    """
    quality = fit_quality(result)
    said = plain_message(result.message)
    if result.success and said.startswith("converged"):
        said = said.removeprefix("converged").removeprefix(":").strip()
    rows = [("converged", ("yes" if result.success else "NO")
                          + (f" {said}" if said.startswith("(") else f", {said}" if said else "")),
            ("residuals", quality_sentence(quality)),
            ("points", f"{result.n_points} (complex), {result.n_free} free parameters, "
                       f"{result.degrees_of_freedom} degrees of freedom"),
            ("BIC", f"{result.bic:.1f} (for comparing models on the same data: lower is better)"),
            ("weighting", result.weighting or "not stated")]
    if result.noise_model:
        rows.append(("noise", result.noise_model))
    if verbose:
        rows += [("chi-square", f"{result.chi_square:.6g}"),
                 ("reduced chi-square", f"{result.reduced_chi_square:.4g}"),
                 ("AIC", f"{result.aic:.1f}"),
                 ("optimiser message", result.message)]
    return rows


def design_lines(design: DesignValues) -> list[str]:
    """Resonances and operating-point values, one per line."""
    lines = []
    for res in design.resonances:
        where = "in the sweep" if res.in_sweep else "extrapolated, outside the sweep"
        lines.append(f"  SRF ({res.kind}, {where}): {format_derived_value(res.frequency)}")
        if res.quality is not None:
            lines.append(f"    resonator Q: {format_derived_value(res.quality)}")
    if design.resonance_note:
        lines.append(f"  SRF: {design.resonance_note}")
    for point in design.points:
        where = "" if point.in_sweep else ", extrapolated outside the sweep"
        lines.append(f"  at {format_quantity(point.frequency, 'Hz')} ({point.character}{where}):")
        for v in point.values.values():
            lines.append(f"    {v.name:<6} {format_derived_value(v):<32} {v.label}")
    lines.append(f"  uncertainties: {design.uncertainty_note}")
    return lines


#: One-line reminder closing the terminal report (the HTML report and README carry the full cautions).
SAFETY_LINE = ("Safety: discharge capacitors before handling them; never clip a scope ground onto a "
               "mains-referenced node; check shunt dissipation and instrument ratings; follow local codes "
               "(README, Safety).")


def read_as_line(result: FitResult) -> str:
    """``"voltage and current phasors ..., 113 points, 1.000 kHz to 30.00 MHz"``."""
    m = result.measurement
    return (f"{describe_form(m)}, {len(m)} points, {format_value(m.frequency[0], 'Hz')} to "
            f"{format_value(m.frequency[-1], 'Hz')}")


def format_fit_report(result: FitResult, selection: ModelSelection | None, design: DesignValues,
                      budget=None, verbose: bool = False) -> str:
    """Terminal report, results first: verdict, parameters, design values, budget; then fit quality, flags
    and the model ranking (auto); then what was read and done (provenance). Unit symbols (Omega, micro)
    throughout: print it through :func:`fitz_tool.units.for_terminal` where the encoding may not show them.

    ``budget`` (a :class:`fitz_tool.budget.Budget`) adds the uncertainty budget; without it the report says
    that the uncertainties are from noise only. ``verbose`` adds the raw fit figures.
    """
    prov = result.measurement.provenance
    how = "chosen automatically, see the ranking below" if selection is not None else "given by the user"
    head = [f"Part: {prov.source or '(data built in code)'}"]
    lines = [f"Read: {read_as_line(result)}",
             f"Model: {result.circuit.expression}  ({how})",
             f"Verdict: {verdict(result)}"]
    lines += ["", "Parameters:"] + _table(parameter_rows(result), ("name", "value", "note"))
    lines += ["", "Design values:"] + design_lines(design)
    from .budget_report import NOISE_ONLY_LINE, budget_lines

    lines += budget_lines(budget) if budget is not None else ["", NOISE_ONLY_LINE]
    lines += ["", "Fit quality:"] + [f"  {k:<10} {v}" for k, v in quality_rows(result, verbose)]
    lines += ["", "Flags:"] + ([f"  - {plain_message(f)}" for f in result.flags] or ["  none"])
    if prov.warnings:
        lines += ["", "Measurement warnings:"] + [f"  - {w}" for w in prov.warnings]
    if selection is not None:
        lines += ["", f"Model ranking (lowest BIC first; chosen: {selection.chosen.circuit.expression}):"]
        rows = [(str(k + 1), r.expression, f"{r.bic:.1f}" if math.isfinite(r.bic) else "-",
                 "yes" if r.adequate else "no", r.note) for k, r in enumerate(selection.ranking)]
        lines += _table(rows, ("#", "model", "BIC", "adequate", "note"))
        lines.append(f"  why: {selection.reason}")
    if prov.steps:
        lines += ["", "How the data was read and corrected:"] + [f"  - {step}" for step in prov.steps]
    lines += ["", SAFETY_LINE]
    return "\n".join(head + [with_symbols(line) for line in lines]) + "\n"


# ---------------------------------------------------------------------------------------------- JSON


def _num(value) -> float | None:
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _derived_json(v: DerivedValue) -> dict:
    return {"value": _num(v.value), "stderr": _num(v.stderr), "unit": v.unit, "note": v.note}


def derived_to_json(design: DesignValues) -> dict:
    """The ``derived`` section: resonances and operating points, SI."""
    return {
        "resonances": [{"kind": r.kind, "in_sweep": r.in_sweep, "frequency": _derived_json(r.frequency),
                        "resonator_q": _derived_json(r.quality) if r.quality is not None else None}
                       for r in design.resonances],
        "resonance_note": design.resonance_note,
        "at": [{"frequency": _num(p.frequency), "character": p.character, "in_sweep": p.in_sweep,
                "values": {k: _derived_json(v) for k, v in p.values.items()}} for p in design.points],
        "uncertainty_note": design.uncertainty_note,
    }


def _quality_json(result: FitResult) -> dict:
    q = fit_quality(result)
    return {"scatter_abs_rel": _num(q.scatter_abs), "scatter_phase_deg": _num(q.scatter_phase_deg),
            "stated_noise": q.stated_noise, "p_value": _num(q.p_value),
            "p_value_text": None if q.p_value is None else format_p_value(q.p_value),
            "sentence": quality_sentence(q)}


def fit_to_json(result: FitResult, selection: ModelSelection | None, design: DesignValues,
                record: RunRecord | None, budget=None) -> dict:
    """The stable machine record of a fit (SI units, JSON-safe: no NaN or infinity, ``null`` instead).

    ``ranking`` is null unless the model was chosen automatically; ``correlation`` is null when the fit gave
    no covariance. ``budget`` (a :class:`fitz_tool.budget.Budget`) adds the ``"budget"`` block.
    """
    prov = result.measurement.provenance
    correlation = None
    if result.correlation is not None:
        correlation = {"names": list(result.correlation_names),
                       "matrix": [[_num(c) for c in row] for row in np.asarray(result.correlation)]}
    ranking = None
    if selection is not None:
        chosen = selection.chosen.circuit.expression
        ranking = [{"expression": r.expression, "bic": _num(r.bic), "adequate": bool(r.adequate),
                    "note": r.note, "chosen": r.expression == chosen} for r in selection.ranking]
    record_json = {
        "model": result.circuit.expression,
        "band": {"f_min": _num(result.measurement.frequency[0]),
                 "f_max": _num(result.measurement.frequency[-1])},
        "parameters": {p.name: {"value": _num(p.value), "stderr": _num(p.stderr), "unit": p.unit,
                                "vary": bool(p.vary), "at_bound": p.at_bound, "stderr_note": p.stderr_note,
                                "interval": None if p.interval is None else [_num(v) for v in p.interval],
                                "interval_note": p.interval_note}
                       for p in result.parameters.values()},
        "read_as": describe_form(result.measurement),
        "verdict": verdict(result),
        "quality": _quality_json(result),
        "fit": {"success": bool(result.success), "message": result.message,
                "message_plain": plain_message(result.message),
                "chi_square": _num(result.chi_square), "reduced_chi_square": _num(result.reduced_chi_square),
                "aic": _num(result.aic), "bic": _num(result.bic), "n_points": int(result.n_points),
                "n_free": int(result.n_free), "degrees_of_freedom": int(result.degrees_of_freedom),
                "weighting": result.weighting, "noise_model": result.noise_model},
        "flags": list(result.flags),
        "correlation": correlation,
        "ranking": ranking,
        "selection_reason": selection.reason if selection is not None else None,
        "derived": derived_to_json(design),
        "provenance": {"source": prov.source, "sha256": prov.sha256, "form": prov.form,
                       "description": describe_form(result.measurement), "columns": dict(prov.columns),
                       "units": dict(prov.units), "steps": list(prov.steps),
                       "warnings": list(prov.warnings), "points": len(result.measurement),
                       "sigma_absolute": bool(result.measurement.sigma_absolute)},
        "run": None if record is None else {
            "options": dict(record.options),
            "inputs": [{"path": i.path, "sha256": i.sha256} for i in record.inputs],
            "version": record.version, "date": record.date},
    }
    if budget is not None:
        from .budget_report import budget_to_json

        record_json["budget"] = budget_to_json(budget)
    return record_json


# ---------------------------------------------------------------------------------------------- curve table


def curve_table(result: FitResult) -> pd.DataFrame:
    """Measured and model impedance per point, with residuals.

    Columns (SI): ``frequency_Hz``; ``measured_`` and ``model_`` each with ``re_ohm``, ``im_ohm``,
    ``abs_ohm``, ``phase_deg``; ``residual_abs_rel`` = |Z_meas| / |Z_model| - 1; ``residual_phase_deg`` =
    phase difference wrapped to (-180, 180]; and, when the measurement has them, ``sigma_abs_rel`` and
    ``sigma_phase_deg``.
    """
    import pandas as pd  # only for the curve table: pandas is slow to import

    m = result.measurement
    z_model = result.model_impedance()
    table = {"frequency_Hz": m.frequency}
    for prefix, z in (("measured", m.impedance), ("model", z_model)):
        table[f"{prefix}_re_ohm"] = z.real
        table[f"{prefix}_im_ohm"] = z.imag
        table[f"{prefix}_abs_ohm"] = np.abs(z)
        table[f"{prefix}_phase_deg"] = np.degrees(np.angle(z))
    table["residual_abs_rel"] = np.abs(m.impedance) / np.abs(z_model) - 1.0
    table["residual_phase_deg"] = np.degrees(np.angle(m.impedance / z_model))
    if m.sigma_lnmag is not None:
        table["sigma_abs_rel"] = m.sigma_lnmag
    if m.sigma_phase is not None:
        table["sigma_phase_deg"] = np.degrees(m.sigma_phase)
    return pd.DataFrame(table)
