"""One self-contained HTML file a colleague can open: the part, how it was measured and fitted, the values.

Self-contained: figures are embedded as base64 PNG (``data:`` URIs); no scripts, links, external fonts or
style sheets (one inline ``<style>`` block). Every string that comes from the user or a file (file names,
headers, options, messages) goes through ``html.escape``.
"""

from __future__ import annotations

import base64
import io
import math
from collections.abc import Mapping, Sequence
from html import escape

import numpy as np

from ..derived import DesignValues
from ..results import FitResult, ModelSelection
from ..units import with_symbols
from .report import RunRecord, format_derived_value, format_value, parameter_rows, quality_rows, read_as_line
from .wording import describe_form, plain_message, verdict

__all__ = ["render_html_report", "SAFETY_NOTES", "FIGURE_CAPTIONS"]

FIGURE_CAPTIONS: dict[str, str] = {
    "resistance_reactance": "Resistance R = Re Z and reactance X = Im Z over frequency, measured and fitted; "
                            "|X| on a log scale, filled markers inductive (X > 0), open markers capacitive.",
    "bode": "Measured and fitted |Z| and phase over frequency; below each, the residual (relative |Z| in "
            "%, phase in degrees) over a band of the one-sigma noise. Dashed green: self-resonance; "
            "dotted purple: operating frequencies.",
    "q": "Quality factor Q = |X|/R over frequency, measured and fitted.",
    "impedance_plane": "Reactance against resistance (impedance plane), measured and fitted.",
}

SAFETY_NOTES: tuple[tuple[str, str], ...] = (
    ("Stored charge",
     "Capacitors, above all bulk electrolytics and film parts taken from a converter, can hold a dangerous "
     "charge long after power is removed. Discharge them through a suitable resistor and check with a meter "
     "before handling them or connecting them to an instrument."),
    ("Mains-referenced circuits and scope ground clips",
     "A scope's ground clip is tied to protective earth. Clipping it to a mains-referenced or floating node "
     "shorts that node to earth, which can destroy the probe and the circuit and endanger you. Use "
     "differential probes or an isolation transformer as local practice requires; never defeat protective "
     "earth."),
    ("Shunt dissipation",
     "A current shunt dissipates I^2 R: check its power rating and temperature rise at the current you "
     "drive, and that its voltage stays inside the channel's input range."),
    ("Instrument ratings",
     "Stay inside the input voltage, DC bias and power ratings of the generator, analyzer and fixture; "
     "network-analyzer ports are easily damaged by DC or by a charged part."),
)

_STYLE = """
body { font-family: sans-serif; max-width: 60em; margin: 1.5em auto; color: #111; line-height: 1.4; }
h1 { font-size: 1.5em; border-bottom: 2px solid #0072B2; padding-bottom: 0.2em; }
h2 { font-size: 1.15em; color: #0072B2; margin-top: 1.6em; }
table { border-collapse: collapse; margin: 0.5em 0; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.6em; text-align: left; vertical-align: top; }
th { background: #eef4fa; }
td.num { text-align: right; font-family: monospace; }
code, .mono { font-family: monospace; }
.flag { color: #a04000; }
.safety { border-left: 4px solid #D55E00; padding-left: 1em; }
.verdict { font-size: 1.05em; padding: 0.4em 0.8em; background: #f3f3ea; border-left: 4px solid #444; }
details { margin: 0.4em 0; } summary { cursor: pointer; font-weight: bold; }
th[scope=row] { background: #f6f6f6; font-weight: normal; }
figure { margin: 1em 0; } figure img { max-width: 100%; }
"""


def _DRIVE_CAPTIONS() -> dict[str, str]:  # noqa: N802 - loaded only when a drive figure is shown
    from .drive_report import DRIVE_FIGURE_CAPTIONS

    return DRIVE_FIGURE_CAPTIONS


def _e(text) -> str:
    return escape(str(text), quote=True)


def _table(header: tuple[str, ...], rows, numeric: tuple[int, ...] = ()) -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in header)
    body = []
    for row in rows:
        cells = "".join(f'<td class="num">{_e(c)}</td>' if i in numeric else f"<td>{_e(c)}</td>"
                        for i, c in enumerate(row))
        body.append(f"<tr>{cells}</tr>")
    return f"<table><tr>{head}</tr>{''.join(body)}</table>"


def _rows_table(rows) -> str:
    """A two-column table whose first column labels each row (no header row)."""
    body = "".join(f'<tr><th scope="row">{_e(k)}</th><td>{_e(v)}</td></tr>' for k, v in rows)
    return f"<table>{body}</table>"


def _list(items, css: str = "") -> str:
    if not items:
        return "<p>none</p>"
    cls = f' class="{css}"' if css else ""
    return "<ul>" + "".join(f"<li{cls}>{_e(i)}</li>" for i in items) + "</ul>"


def _figure_png(figure) -> str:
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=110)
    return base64.b64encode(buffer.getvalue()).decode("ascii")


def _correlation(result: FitResult) -> str:
    if result.correlation is None:
        return "<p>No correlation matrix: the fit gave no covariance.</p>"
    names = result.correlation_names
    corr = np.asarray(result.correlation)
    rows = [(n, *(f"{c:+.3f}" if math.isfinite(c) else "-" for c in corr[i])) for i, n in enumerate(names)]
    return _table(("parameter", *names), rows, numeric=tuple(range(1, len(names) + 1)))


def _ranking(selection: ModelSelection | None) -> str:
    if selection is None:
        return "<p>Model given by the user (no automatic choice).</p>"
    rows = [(k + 1, r.expression, f"{r.bic:.1f}" if math.isfinite(r.bic) else "-",
             "yes" if r.adequate else "no", with_symbols(r.note)) for k, r in enumerate(selection.ranking)]
    return (f"<p>Candidates ranked by BIC (lowest first). Chosen: <code>"
            f"{_e(selection.chosen.circuit.expression)}</code>. {_e(selection.reason)}</p>"
            + _table(("#", "model", "BIC", "adequate", "note"), rows, numeric=(0, 2)))


def _design(design: DesignValues) -> str:
    parts = []
    rows = [(r.kind, "yes" if r.in_sweep else "no (extrapolated)", format_derived_value(r.frequency),
             format_derived_value(r.quality) if r.quality is not None else "")
            for r in design.resonances]
    if rows:
        parts.append(_table(("self-resonance", "in the sweep", "frequency", "resonator Q"), rows))
    if design.resonance_note:
        parts.append(f"<p>Self-resonance: {_e(with_symbols(design.resonance_note))}</p>")
    for point in design.points:
        where = "" if point.in_sweep else " - extrapolated, outside the sweep"
        title = f"At {format_value(point.frequency, 'Hz')} ({point.character}{where})"
        parts.append(f"<h3>{_e(title)}</h3>")
        parts.append(_table(("value", "meaning", "result"),
                            [(v.name, v.label, format_derived_value(v)) for v in point.values.values()]))
    if not design.points:
        parts.append("<p>No operating frequency requested (use <code>--at FREQ</code>).</p>")
    parts.append(f"<p>Uncertainties: {_e(design.uncertainty_note)}</p>")
    return "".join(parts)


def _part(result: FitResult, record: RunRecord | None) -> str:
    m = result.measurement
    prov = m.provenance
    rows = [("input file", prov.source or "(data built in code)"), ("SHA-256", prov.sha256 or "-"),
            ("read as", describe_form(m)), ("points", len(m)),
            ("sweep", f"{format_value(m.frequency[0], 'Hz')} to {format_value(m.frequency[-1], 'Hz')}"),
            ("noise", "per-point sigma (" + ("absolute" if m.sigma_absolute else "relative weights") + ")"
             if m.sigma_lnmag is not None else "not stated: estimated from the residuals")]
    rows += [(f"column: {role}", f"{header} [{prov.units.get(role, '')}]".replace(" []", ""))
             for role, header in prov.columns.items()]
    html = _rows_table(rows)
    if record is not None and record.inputs:
        html += "<p>All files read in this run:</p>" + _table(
            ("file", "SHA-256"), [(i.path, i.sha256 or "(not readable)") for i in record.inputs])
    return html


def render_html_report(result: FitResult, selection: ModelSelection | None, design: DesignValues,
                       record: RunRecord | None, figures: Mapping[str, object], budget=None,
                       extra_sections: Sequence[tuple[str, str]] = ()) -> str:
    """The whole report as one HTML string (UTF-8), figures embedded as base64 PNG.

    Parameters
    ----------
    result, selection, design
        The fit, the automatic model choice (None when the user gave the model) and the design values.
    record : RunRecord or None
        Options, input files with checksums, tool version and date of the run.
    figures : mapping of str to matplotlib Figure
        Rendered in the given order, with captions from ``FIGURE_CAPTIONS`` where known; left open.
    budget : fitz_tool.budget.Budget, optional
        Adds the uncertainty budget section (see :mod:`fitz_tool.outputs.budget_report`).
    extra_sections : sequence of (title, HTML fragment)
        Sections placed before the plots (e.g. a drive response); fragments must be escaped already.
    """
    prov = result.measurement.provenance
    part = prov.source or "part"
    options = [] if record is None else [
        (k if k in ("command", "file") else f"--{k.replace('_', '-')}", v)
        for k, v in record.options.items() if v != ""]
    plots = []
    for key, figure in figures.items():
        caption = FIGURE_CAPTIONS.get(key) or _DRIVE_CAPTIONS().get(key, key)
        plots.append(f'<figure><img alt="{_e(key)} plot" src="data:image/png;base64,{_figure_png(figure)}">'
                     f"<figcaption>{_e(caption)}</figcaption></figure>")
    how = "chosen automatically (see Model choice)" if selection is not None else "given by the user"
    summary = (f'<p class="verdict"><b>Verdict:</b> {_e(verdict(result))}.<br><b>Model:</b> '
               f"<code>{_e(result.circuit.expression)}</code> ({how}).<br><b>Read:</b> "
               f"{_e(with_symbols(read_as_line(result)))}.</p>")
    shown = parameter_rows(result)
    if any(note for _, _, note in shown):
        values = _table(("parameter", "value", "SI value", "note"),
                        [(n, v, f"{result.parameters[n].value:.10g}", note) for n, v, note in shown],
                        numeric=(2,))
    else:  # no empty note column
        values = _table(("parameter", "value", "SI value"),
                        [(n, v, f"{result.parameters[n].value:.10g}") for n, v, _ in shown], numeric=(2,))
    sections = [
        ("Fitted values", values.replace("<table>", '<table id="values">', 1)),
        ("Design values", _design(design)),
    ]
    if budget is not None:
        from .budget_report import budget_html

        sections.append(("Uncertainty budget", budget_html(budget)))
    sections += list(extra_sections)
    sections += [
        ("Plots", "".join(plots) or "<p>No plots.</p>"),
        ("Fit quality", _rows_table(quality_rows(result))),
        ("Flags", _list([with_symbols(plain_message(f)) for f in result.flags], "flag")),
        ("Measurement warnings", _list([with_symbols(w) for w in prov.warnings], "flag")),
        ("Model choice", f"<p><code>{_e(result.circuit.expression)}</code></p>" + _ranking(selection)),
        ("Correlation matrix", _correlation(result)),
    ]
    safety = "".join(f"<p><b>{_e(title)}.</b> {_e(text)}</p>" for title, text in SAFETY_NOTES)
    safety += ("<p>These notes are no substitute for training: follow your local electrical codes, your "
               "site's safety rules and licensed practice for any work on hazardous voltages.</p>")
    sections.append(("Safety", f'<div class="safety">{safety}</div>'))
    version = record.version if record is not None else ""
    date = record.date if record is not None else ""
    provenance = (
        "<details><summary>Part and input</summary>" + _part(result, record) + "</details>"
        + "<details><summary>How the data was read and corrected</summary>"
        + _list([with_symbols(step) for step in prov.steps]) + "</details>"
        + "<details><summary>Options of this run</summary>"
        + (_table(("option", "value"), options) if options else "<p>Not recorded.</p>") + "</details>")
    body = "".join(f"<h2>{_e(title)}</h2>{content}" for title, content in sections)
    body += f'<h2 id="provenance">Provenance and run record</h2>{provenance}'
    footer = f"<p><small>fitz_tool {_e(version)}, {_e(date)} (UTC)</small></p>"
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{_e('Equivalent circuit of ' + part)}</title><style>{_STYLE}</style></head><body>"
            f"<h1>{_e('Equivalent circuit of ' + part)}</h1>{summary}{body}{footer}</body></html>\n")
