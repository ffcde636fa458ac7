"""The uncertainty budget in the terminal report, the HTML report and the JSON record.

Standard uncertainties are shown to two significant digits (GUM 7.2.6); each value to the resolution of
its combined uncertainty. Sensitivities are shown per percent of a relative input, per degree of a phase
input and per nanosecond of skew; JSON keeps everything in SI (per unit fraction, per rad, per s).
"""

from __future__ import annotations

import math
from html import escape

from ..budget.combination import COVERAGE_PROBABILITY, NOISE_KEY, Budget, BudgetEntry, Contribution
from ..units import format_quantity, format_to_resolution, with_symbols

__all__ = ["budget_lines", "budget_html", "budget_to_json", "NOISE_ONLY_LINE"]

#: Said wherever uncertainties are shown without any stated accuracy input.
#: The practice wording under every budget (terminal and HTML).
PRACTICE_LINE = ("The budget assumes the stated limits and the instruments' calibration; for accredited work "
                 "follow the lab's own uncertainty procedures.")
NOISE_ONLY_LINE = ("Uncertainties are from noise only (type A): no instrument, shunt, reference, fixture or "
                   "skew limits were stated (--accuracy, --shunt-tolerance, ...), so they describe "
                   "precision, "
                   "not accuracy.")


def _u(x: float | None, unit: str) -> str:
    """A standard uncertainty (or any magnitude) to two significant digits with its unit."""
    if x is None or not math.isfinite(x):
        return "-"
    if x == 0:
        return f"0 {unit}".strip()
    if unit in ("", "deg"):
        return f"{float(f'{x:.2g}'):g}{' deg' if unit else ''}"
    return format_to_resolution(x, unit, abs(x))


def _value(e: BudgetEntry) -> str:
    if e.unit in ("", "deg"):
        text = format_to_resolution(e.value, "", e.u_combined) if e.u_combined else f"{e.value:.4g}"
        return f"{text}{' deg' if e.unit else ''}"
    return format_to_resolution(e.value, e.unit, e.u_combined) if e.u_combined else format_quantity(
        e.value, e.unit)


def _relative(x: float | None, value: float) -> str:
    return f" ({float(f'{abs(x / value) * 100:.2g}'):g} %)" if x and value else ""


def _input_columns(c: Contribution, unit: str) -> tuple[str, str, str]:
    """(limit, u(x_i), sensitivity) in display units."""
    if c.key == NOISE_KEY:
        return "-", "-", "-"
    if c.unit == "rad":
        per, scale = "deg", math.pi / 180
        return (f"+/-{math.degrees(c.limit):.3g} deg", f"{math.degrees(c.standard_uncertainty):.2g} deg",
                _sensitivity(c.sensitivity * scale, unit, per))
    if c.unit == "s":
        return (f"+/-{format_quantity(c.limit, 's')}", _u(c.standard_uncertainty, "s"),
                _sensitivity(c.sensitivity * 1e-9, unit, "ns"))
    if c.limit == 1.0 and "table" in c.label:
        return "table", f"{c.standard_uncertainty:.2g} x table", _sensitivity(c.sensitivity, unit, "table")
    return (f"+/-{c.limit * 100:.3g} %", f"{c.standard_uncertainty * 100:.2g} %",
            _sensitivity(c.sensitivity / 100, unit, "%"))


def _sensitivity(c: float, unit: str, per: str) -> str:
    if unit in ("", "deg"):
        return f"{c:.3g}{' deg' if unit else ''}/{per}"
    return f"{format_quantity(c, unit)}/{per}"


def _rows(e: BudgetEntry) -> list[tuple[str, ...]]:
    rows = []
    for c in e.contributions:
        limit, u, sens = _input_columns(c, e.unit)
        label = "noise (type A, from the fit)" if c.key == NOISE_KEY else c.label
        rows.append((label, limit, u, sens, _u(abs(c.contribution), e.unit), f"{c.share * 100:.0f} %"))
    return rows


HEADER = ("source", "limit", "u(x_i)", "sensitivity c_i", "|c_i| u(x_i)", "share of u_c^2")


def _headline(e: BudgetEntry) -> str:
    if e.u_combined is None:
        return f"{e.name} = {_value(e)}: no combined uncertainty ({e.note})"
    nu = ("= inf" if not math.isfinite(e.nu_eff) else f"= {e.nu_eff:.0f}" if e.nu_eff < 1e4
          else "> 10^4")
    return (f"{e.name} = {_value(e)}: u_c = {_u(e.u_combined, e.unit)}{_relative(e.u_combined, e.value)}, "
            f"U = {_u(e.expanded, e.unit)}{_relative(e.expanded, e.value)} (k = {e.coverage_factor:.2f}, "
            f"nu_eff {nu})")


def _table(rows, header) -> list[str]:
    rows = [tuple(with_symbols(c) for c in r) for r in rows]
    widths = [max(len(str(r[i])) for r in [header, *rows]) for i in range(len(header))]
    out = ["    " + "  ".join(f"{h:<{w}}" for h, w in zip(header, widths, strict=True)).rstrip(),
           "    " + "  ".join("-" * w for w in widths)]
    out += ["    " + "  ".join(f"{c:<{w}}" for c, w in zip(r, widths, strict=True)).rstrip() for r in rows]
    return out


def budget_lines(budget: Budget) -> list[str]:
    """The budget section of the terminal report."""
    if budget.noise_only:
        return ["", "Uncertainty budget:", f"  {NOISE_ONLY_LINE}"]
    lines = ["", f"Uncertainty budget (GUM; U = k u_c, {COVERAGE_PROBABILITY * 100:.2f} % coverage):",
             f"  inputs: {', '.join(s.label for s in budget.sources)}", f"  method: {budget.note}"]
    for e in [*budget.parameters.values(), *budget.design.values()]:
        lines += ["", f"  {_headline(e)}"]
        if e.u_combined is None:
            continue
        lines += _table(_rows(e), HEADER)
        if e.note:
            lines.append(f"    note: {e.note}")
        if e.dominant:
            lines.append(f"    {e.dominant}; {e.advice}")
        if e.monte_carlo is not None:
            lines.append(f"    {e.monte_carlo.note}")
    lines += ["", f"  {PRACTICE_LINE}"]
    return lines


_NUM_TD = '<td class="num">'


def budget_html(budget: Budget) -> str:
    """The budget section of the HTML report (escaped; no scripts)."""
    if budget.noise_only:
        return f"<p>{escape(NOISE_ONLY_LINE)}</p>"
    parts = [f"<p>Inputs: {escape(', '.join(s.label for s in budget.sources))}.</p>",
             f"<p>{escape(budget.note)}.</p>"]
    for e in [*budget.parameters.values(), *budget.design.values()]:
        parts.append(f"<h3>{escape(_headline(e))}</h3>")
        if e.u_combined is None:
            continue
        head = "".join(f"<th>{escape(h)}</th>" for h in HEADER)
        body = "".join("<tr>" + "".join((_NUM_TD if i else "<td>") + f"{escape(c)}</td>"
                                        for i, c in enumerate(map(with_symbols, r))) + "</tr>"
                       for r in _rows(e))
        parts.append(f"<table><tr>{head}</tr>{body}</table>")
        if e.note:
            parts.append(f"<p>Note: {escape(e.note)}.</p>")
        if e.dominant:
            parts.append(f"<p>{escape(e.dominant)}; {escape(e.advice)}.</p>")
        if e.monte_carlo is not None:
            parts.append(f"<p>{escape(e.monte_carlo.note)}.</p>")
    parts.append(f"<p>{escape(PRACTICE_LINE, quote=False)}</p>")
    return "".join(parts)


def _num(x) -> float | None:
    return None if x is None or not math.isfinite(float(x)) else float(x)


def _entry_json(e: BudgetEntry) -> dict:
    mc = e.monte_carlo
    return {
        "value": _num(e.value), "unit": e.unit, "u_noise": _num(e.u_noise), "nu_noise": _num(e.nu_noise),
        "u_combined": _num(e.u_combined), "nu_eff": _num(e.nu_eff),
        "coverage_factor": _num(e.coverage_factor),
        "expanded": _num(e.expanded),
        "contributions": {c.key: abs(c.contribution) for c in e.contributions},
        "sensitivities": {c.key: _num(c.sensitivity) for c in e.contributions if c.key != NOISE_KEY},
        "dominant": e.dominant, "advice": e.advice, "note": e.note,
        "monte_carlo": None if mc is None else {"draws": mc.draws, "u": _num(mc.u), "low": _num(mc.low),
                                                "high": _num(mc.high), "agrees": mc.agrees,
                                                "interval_ratio": _num(mc.interval_ratio), "note": mc.note},
    }


def budget_to_json(budget: Budget) -> dict:
    """The ``"budget"`` block of the JSON record (SI; contributions are |c_i| u(x_i) in the value's unit)."""
    return {
        "coverage_factor": 2.0,
        "coverage_probability": COVERAGE_PROBABILITY,
        "coverage_rule": "k = t_95.45(nu_eff), Welch-Satterthwaite (GUM G.4); k = 2 for large nu_eff; each "
                         "entry carries its own coverage_factor",
        "noise_only": budget.noise_only,
        "note": budget.note,
        "sources": [{"key": s.key, "label": s.label, "limit": s.limit, "unit": s.unit,
                     "distribution": "rectangular", "standard_uncertainty": s.standard_uncertainty}
                    for s in budget.sources],
        "monte_carlo_draws": budget.monte_carlo_draws,
        "parameters": {n: _entry_json(e) for n, e in budget.parameters.items()},
        "design": {n: _entry_json(e) for n, e in budget.design.items()},
    }
