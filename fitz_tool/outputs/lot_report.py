"""A lot in words and pictures: terminal summary, figures, one self-contained HTML report; and the
difference table of ``fitz-tool compare``.

Figures: a histogram per quantity with its spec limits; each quantity against each numeric condition
column with 1-sigma error bars (L against DC bias shows saturation); an overlay of measured |Z| and phase of
every part. The HTML embeds them as base64 PNG, like the single-part report.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from html import escape

import numpy as np
import pandas as pd

from ..lot.runner import LotResult
from ..lot.spec import COVERAGE_FACTOR
from ..lot.stats import LotStats, quantity_columns
from ..units import format_quantity
from .html_report import _STYLE, SAFETY_NOTES, _figure_png, _table
from .plots import PALETTE, _figure, _style
from .report import SAFETY_LINE

__all__ = ["quantity_units", "format_lot_summary", "lot_figures", "render_lot_html", "compare_table",
           "format_comparison", "GUARD_BAND_RULE"]

GUARD_BAND_RULE = ("verdicts guard-banded by the expanded uncertainty U of the uncertainty budget (GUM, "
                   f"k about 2; {COVERAGE_FACTOR:g} x the standard error where the budget gives none): pass "
                   "when [x - U, x + U] lies inside the limits, fail when it lies wholly outside, marginal "
                   "otherwise (or when x has no uncertainty)")
_DESIGN_UNITS = {"L_eff": "H", "C_eff": "F", "ESR": "ohm", "abs_Z": "ohm", "phase": "deg", "Q": "", "D": ""}


def quantity_units(result: LotResult) -> dict[str, str]:
    """Quantity name -> SI unit symbol for every value column of the lot table."""
    units = {"SRF": "Hz"}
    for key, model in result.models.items():
        for name, p in result.payloads[key]["candidates"][model]["parameters"].items():
            units.setdefault(name, p["unit"])
    for column in quantity_columns(result.table):
        if "@" in column:
            units[column] = _DESIGN_UNITS.get(column.split("@", 1)[0], "")
    return units


def _fmt(value: float, unit: str) -> str:
    if not math.isfinite(value):
        return "-"
    return f"{value:.4g} deg" if unit == "deg" else format_quantity(value, unit)


def _text_table(rows: Sequence[Sequence[str]], header: Sequence[str]) -> list[str]:
    widths = [max(len(str(r[i])) for r in [header, *rows]) for i in range(len(header))]
    out = ["  " + "  ".join(f"{h:<{w}}" for h, w in zip(header, widths, strict=True)).rstrip(),
           "  " + "  ".join("-" * w for w in widths)]
    out += ["  " + "  ".join(f"{c:<{w}}" for c, w in zip(r, widths, strict=True)).rstrip() for r in rows]
    return out


def _limits(spec, unit: str) -> str:
    low = _fmt(spec.low, unit) if math.isfinite(spec.low) else "-"
    high = _fmt(spec.high, unit) if math.isfinite(spec.high) else "-"
    return f"{low} .. {high}"


def _stats_rows(result: LotResult, stats: LotStats) -> list[tuple[str, ...]]:
    units = quantity_units(result)
    return [(q.name, str(q.count), _fmt(q.mean, units.get(q.name, "")), _fmt(q.std, units.get(q.name, "")),
             _fmt(q.minimum, units.get(q.name, "")), _fmt(q.maximum, units.get(q.name, "")))
            for q in stats.quantities if q.count]


def _spec_rows(result: LotResult, stats: LotStats) -> list[tuple[str, ...]]:
    units = quantity_units(result)
    return [(s.spec.name, _limits(s.spec, units.get(s.spec.name, "")), str(s.passed), str(s.marginal),
             str(s.failed), f"{100 * s.yield_fraction:.1f} %" if math.isfinite(s.yield_fraction) else "-",
             f"{s.cp:.2f}" if math.isfinite(s.cp) else "-", f"{s.cpk:.2f}" if math.isfinite(s.cpk) else "-")
            for s in stats.specs]


_SPEC_HEADER = ("spec", "limits", "pass", "marginal", "fail", "yield", "Cp", "Cpk")
_STATS_HEADER = ("quantity", "n", "mean", "std dev", "min", "max")


def format_lot_summary(result: LotResult, stats: LotStats) -> str:
    """Terminal summary: counts, model, statistics per quantity, verdicts per spec, the errors."""
    model = result.lot_model or "per file (see the table's model column)"
    lines = [f"Lot: {stats.files} files, {stats.ok} with a result, {stats.errors} errors "
             f"({result.fitted} fitted now, {result.reused} taken from the store)",
             f"Model: {model}", f"  why: {result.model_note}"]
    lines += ["", "Statistics over the parts with a result:"] + _text_table(_stats_rows(result, stats),
                                                                           _STATS_HEADER)
    empty = [q.name for q in stats.quantities if not q.count]
    if empty:
        lines.append(f"  no value in any part: {', '.join(empty)}"
                     + (" (SRF: no self-resonance inside the sweep)" if "SRF" in empty else ""))
    if stats.specs:
        lines += ["", "Spec limits and verdicts:"]
        lines += _text_table(_spec_rows(result, stats), _SPEC_HEADER)
        lines.append(f"  rule: {GUARD_BAND_RULE}")
        v = stats.verdicts
        lines.append(f"  parts: {v['pass']} pass, {v['marginal']} marginal, {v['fail']} fail, "
                     f"{v['error']} error; yield {100 * stats.yield_fraction:.1f} % of the parts with a "
                     "result" if math.isfinite(stats.yield_fraction) else "")
    errors = result.table[result.table["status"] != "ok"]
    if len(errors):
        lines += ["", "Files without a result:"] + [f"  - {e}" for e in errors["error"].head(20)]
        if len(errors) > 20:
            lines.append(f"  ... and {len(errors) - 20} more (see the table's error column)")
    lines += ["", SAFETY_LINE]
    return "\n".join(lines) + "\n"


def _numeric_conditions(table: pd.DataFrame, result: LotResult) -> list[str]:
    names = list(dict.fromkeys(c for item in result.items for c in item["conditions"]))
    return [c for c in names if pd.to_numeric(table[c], errors="coerce").notna().sum() >= 2]


def lot_figures(result: LotResult) -> dict[str, object]:
    """Figures of the lot (matplotlib Figures, keyed ``hist_NAME``, ``NAME_vs_COND`` and ``overlay``)."""
    table = result.table[result.table["status"] == "ok"]
    units = quantity_units(result)
    specs = {s.name: s for s in result.specs}
    shown = [c for c in quantity_columns(result.table) if "@" not in c or c in specs]
    figures: dict[str, object] = {}
    for name in shown:
        values = pd.to_numeric(table[name], errors="coerce").to_numpy(dtype=float)
        values = values[np.isfinite(values)]
        if values.size == 0:
            continue
        figure = _figure(5.0, 2.8)
        ax = figure.add_subplot()
        ax.hist(values, bins=max(5, min(30, int(math.sqrt(values.size)) + 3)), color=PALETTE["measured"],
                alpha=0.8)
        spec = specs.get(name)
        if spec is not None:
            for limit in (spec.low, spec.high):
                if math.isfinite(limit):
                    ax.axvline(limit, color=PALETTE["model"], linestyle="--", linewidth=1.2)
        _style(ax, x_unit=units.get(name, "") if units.get(name) != "deg" else None, log_x=False)
        ax.set_xlabel(name + (" (deg)" if units.get(name) == "deg" else ""))
        ax.set_ylabel("parts")
        ax.set_title(f"{name}: {values.size} parts" + (f", limits {spec.text}" if spec else ""))
        figures[f"hist_{name}"] = figure
    for condition in _numeric_conditions(table, result):
        x = pd.to_numeric(table[condition], errors="coerce").to_numpy(dtype=float)
        for name in shown:
            y = pd.to_numeric(table[name], errors="coerce").to_numpy(dtype=float)
            err = pd.to_numeric(table[f"{name}_stderr"], errors="coerce").to_numpy(dtype=float)
            keep = np.isfinite(x) & np.isfinite(y)
            if keep.sum() < 2:
                continue
            figure = _figure(5.0, 2.8)
            ax = figure.add_subplot()
            ax.errorbar(x[keep], y[keep], yerr=np.where(np.isfinite(err[keep]), err[keep], 0.0), fmt="o",
                        color=PALETTE["measured"], ecolor=PALETTE["ink"], capsize=3, markersize=4)
            _style(ax, x_unit=None, y_unit=units.get(name, "") if units.get(name) != "deg" else None,
                   log_x=False)
            ax.set_xlabel(condition)
            ax.set_ylabel(name)
            ax.set_title(f"{name} against {condition} (error bars: 1 standard uncertainty)")
            figures[f"{name}_vs_{condition}"] = figure
    figures["overlay"] = _overlay(result)
    return figures


def _overlay(result: LotResult, keys: Sequence[str] | None = None, labels: Sequence[str] | None = None):
    figure = _figure(6.0, 4.2)
    mag, phase = figure.subplots(2, 1, sharex=True)
    items = [i for i in result.items if result.payloads.get(i["key"], {}).get("status") == "ok"]
    if keys is not None:
        items = [next(i for i in result.items if i["key"] == k) for k in keys]
    colors = ["#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#F0E442", "#000000"]
    for n, item in enumerate(items):
        curve = result.payloads[item["key"]]["curve"]
        label = labels[n] if labels is not None else item["part"]
        kwargs = dict(color=colors[n % len(colors)], linewidth=1.0, alpha=0.8 if len(items) > 8 else 1.0)
        mag.loglog(curve["frequency_Hz"], curve["abs_ohm"], label=label if len(items) <= 8 else None,
                   **kwargs)
        phase.semilogx(curve["frequency_Hz"], curve["phase_deg"], **kwargs)
    _style(mag, y_unit="ohm")
    _style(phase)
    mag.set_ylabel("|Z|")
    phase.set_ylabel("phase (deg)")
    phase.set_xlabel("frequency")
    mag.set_title(f"Measured |Z| and phase of {len(items)} parts")
    if 0 < len(items) <= 8:
        mag.legend(loc="best")
    return figure


def _caption(key: str) -> str:
    if key == "overlay":
        return "Measured |Z| and phase of every part with a result."
    if key.startswith("hist_"):
        return f"Histogram of {key[5:]} over the parts; dashed: spec limits."
    return key.replace("_vs_", " against ") + " (error bars: 1 standard uncertainty)."


def _e(text) -> str:
    return escape(str(text), quote=True)


def render_lot_html(result: LotResult, stats: LotStats, figures: Mapping[str, object],
                    title: str = "Lot report") -> str:
    """The lot report as one self-contained HTML string (figures embedded as base64 PNG)."""
    counts = (f"<p>{stats.files} files, {stats.ok} with a result, {stats.errors} errors. Model: <code>"
              f"{_e(result.lot_model or 'per file')}</code> ({_e(result.model_note)}).</p>")
    sections = [("Summary", counts),
                ("Statistics", _table(_STATS_HEADER, _stats_rows(result, stats), numeric=(1, 2, 3, 4, 5)))]
    if stats.specs:
        sections.append(("Spec limits and verdicts", f"<p>{_e(GUARD_BAND_RULE.capitalize())}.</p>"
                         + _table(_SPEC_HEADER, _spec_rows(result, stats), numeric=(2, 3, 4, 5, 6, 7))))
    columns = ["file", "part", *list(dict.fromkeys(c for i in result.items for c in i["conditions"])),
               "status", "verdict"]
    parts = result.table[columns].fillna("").astype(str).itertuples(index=False)
    sections.append(("Parts", _table(tuple(columns), list(parts))))
    errors = result.table[result.table["status"] != "ok"]["error"]
    if len(errors):
        sections.append(("Files without a result", "<ul>" + "".join(f"<li>{_e(e)}</li>" for e in errors)
                         + "</ul>"))
    plots = "".join(f'<figure><img alt="{_e(k)}" src="data:image/png;base64,{_figure_png(f)}">'
                    f"<figcaption>{_e(_caption(k))}</figcaption></figure>" for k, f in figures.items())
    sections.append(("Plots", plots or "<p>No plots.</p>"))
    safety = "".join(f"<p><b>{_e(t)}.</b> {_e(x)}</p>" for t, x in SAFETY_NOTES)
    safety += ("<p>These notes are no substitute for training: follow your local electrical codes, your "
               "site's safety rules and licensed practice for any work on hazardous voltages.</p>")
    sections.append(("Safety", f'<div class="safety">{safety}</div>'))
    body = "".join(f"<h2>{_e(t)}</h2>{c}" for t, c in sections)
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>{_e(title)}</title>'
            f"<style>{_STYLE}</style></head><body><h1>{_e(title)}</h1>{body}</body></html>\n")


# ---------------------------------------------------------------------------------------------- compare


def compare_table(result: LotResult) -> pd.DataFrame:
    """Per quantity: each part's value and standard error, and each part's difference from the first
    (absolute, relative, and in units of the combined standard uncertainty ``sqrt(u_a^2 + u_b^2)``)."""
    ok = result.table[result.table["status"] == "ok"].reset_index(drop=True)
    rows = []
    for name in quantity_columns(ok):
        row: dict = {"quantity": name}
        values = pd.to_numeric(ok[name], errors="coerce").to_numpy(dtype=float)
        errs = pd.to_numeric(ok[f"{name}_stderr"], errors="coerce").to_numpy(dtype=float)
        if not np.isfinite(values).any():
            continue
        for k, part in enumerate(ok["part"]):
            row[f"{part}"], row[f"{part}_stderr"] = values[k], errs[k]
            if k:
                diff = values[k] - values[0]
                row[f"{part}-{ok['part'][0]}"] = diff
                row[f"{part}-{ok['part'][0]}_rel"] = diff / values[0] if values[0] else math.nan
                row[f"{part}-{ok['part'][0]}_z"] = diff / math.hypot(errs[0], errs[k])
        rows.append(row)
    return pd.DataFrame(rows)


def format_comparison(result: LotResult) -> str:
    """Terminal difference table of two or three parts (the first is the reference)."""
    ok = result.table[result.table["status"] == "ok"].reset_index(drop=True)
    parts = list(ok["part"])
    units = quantity_units(result)
    diff = compare_table(result)
    header = ["quantity", *parts, *(f"{p} - {parts[0]}" for p in parts[1:])]
    rows = []
    for _, row in diff.iterrows():
        unit = units.get(row["quantity"], "")
        cells = [row["quantity"]]
        for p in parts:
            stderr = row[f"{p}_stderr"]
            cells.append(format_quantity(row[p], unit, stderr if math.isfinite(stderr) else None)
                         if unit != "deg" else f"{row[p]:.4g} deg")
        for p in parts[1:]:
            d, rel, z = row[f"{p}-{parts[0]}"], row[f"{p}-{parts[0]}_rel"], row[f"{p}-{parts[0]}_z"]
            text = _fmt(d, unit)
            if math.isfinite(rel):
                text += f" ({100 * rel:+.2f} %"
                text += f", {z:+.1f} u)" if math.isfinite(z) else ")"
            cells.append(text)
        rows.append(cells)
    lines = [f"Model: {result.lot_model or 'per file'} ({result.model_note})",
             f"Reference: {parts[0]}; differences in the unit, in % and in combined standard "
             "uncertainties u = sqrt(u_a^2 + u_b^2)", ""]
    lines += _text_table(rows, header)
    errors = result.table[result.table["status"] != "ok"]["error"]
    if len(errors):
        lines += ["", "Files without a result:"] + [f"  - {e}" for e in errors]
    return "\n".join(lines) + "\n"
