"""fitz_tool: bench measurements of a passive component -> equivalent circuit with honest uncertainties.

The public API (the CLI is a thin face over the same functions)::

    import fitz_tool as ft
    m = ft.read_measurement("sample_measurements/output_choke_scope.csv", ft.ReadOptions(shunt=0.1))
    result = ft.fit(m, "(Rs + L1) || Cp")
    print(ft.format_fit_report(result, None, ft.design_values(result, [100e3])))

Names are loaded on first use, so ``import fitz_tool`` stays light (matplotlib only loads for plots).
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_EXPORTS: dict[str, str] = {
    # the measured object and reading it
    "Measurement": "measurement",
    "Provenance": "measurement",
    "ReadOptions": "readers",
    "read_measurement": "readers",
    "Corrections": "corrections",
    "apply_corrections": "corrections",
    "deembed_two_port": "fixtures",
    "two_port_method": "fixtures",
    "read_network": "readers.touchstone",
    "summarize": "inspection",
    "lin_kk": "kramers_kronig",
    # circuits and fitting
    "Circuit": "circuit",
    "PRESETS": "presets",
    "resolve_model": "presets",
    "fit": "fitting.least_squares",
    "fit_auto": "fitting.selection",
    "FitResult": "results",
    "ParameterEstimate": "results",
    "ModelSelection": "results",
    # what the engineer reads and shares
    "design_values": "derived",
    # uncertainty budget (GUM)
    "BudgetInputs": "budget",
    "AccuracyTable": "budget",
    "read_accuracy_table": "budget",
    "uncertainty_budget": "budget",
    "Budget": "budget",
    "BudgetEntry": "budget",
    "format_fit_report": "outputs.report",
    "fit_to_json": "outputs.report",
    "curve_table": "outputs.report",
    "plot_measurement": "outputs.plots",
    "fit_figures": "outputs.plots",
    "summary_figure": "outputs.plots",
    "render_html_report": "outputs.html_report",
    "to_spice_subcircuit": "outputs.spice",
    "format_quantity": "units",
    # the part under a periodic drive
    "DriveModel": "drive",
    "DriveResult": "drive",
    "Waveform": "drive",
    "model_from_fit": "drive",
    "model_from_json": "drive",
    "read_waveform": "drive",
    "drive_waveform": "drive",
    "drive_response": "drive",
    "format_drive_report": "outputs.drive_report",
    "drive_to_json": "outputs.drive_report",
    "drive_figures": "outputs.drive_report",
    "parse_quantity": "units",
    # many parts: lots, spec verdicts, the results store
    "LotItem": "lot",
    "LotSettings": "lot",
    "LotResult": "lot",
    "collect_files": "lot",
    "read_manifest": "lot",
    "run_lot": "lot",
    "table_from_store": "lot",
    "ResultStore": "lot",
    "parse_spec": "lot",
    "lot_statistics": "lot",
    "format_lot_summary": "outputs.lot_report",
    "render_lot_html": "outputs.lot_report",
    "lot_figures": "outputs.lot_report",
    "compare_table": "outputs.lot_report",
    # errors
    "FitzError": "exceptions",
    "InputError": "exceptions",
    "ModelSyntaxError": "exceptions",
    "FitError": "exceptions",
    "WorkLimitError": "exceptions",
    "OutputError": "exceptions",
}

__all__ = ["__version__", *_EXPORTS]


def __getattr__(name: str):
    if name in _EXPORTS:
        value = getattr(importlib.import_module(f".{_EXPORTS[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'fitz_tool' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
