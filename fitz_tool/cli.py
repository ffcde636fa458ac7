"""Command line face of fitz_tool: argument parsing, output staging and exit codes; no computation here.

Exit codes: 0 success, 1 unexpected internal error, 2 bad input, 3 bad circuit expression, 4 fit cannot be
attempted, 5 output cannot be written (see ``exceptions.py``).
"""

from __future__ import annotations

import argparse
import io
import json
import math
import os
import re
import sys
import warnings
from collections.abc import Sequence
from pathlib import Path

from . import __version__, progress
from .exceptions import FitzError, InputError, ModelSyntaxError, OutputError
from .fitting.work import DEFAULT_MAX_EVALUATIONS, DEFAULT_MAX_TIME, work_budget
from .limits import check_expression, check_frequency, check_resistance, check_skew
from .units import parse_quantity

__all__ = ["main", "build_parser"]


def _key_value(text: str, what: str) -> tuple[str, str]:
    if "=" not in text:
        raise InputError(f"{what} {text!r}: expected NAME=VALUE")
    key, value = text.split("=", 1)
    return key.strip(), value.strip()


def add_reader_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("reading the bench file")
    group.add_argument("--map", action="append", default=[], metavar="ROLE=HEADER",
                       help="name the column for a role (repeatable), e.g. --map frequency='Freq (kHz)'; "
                            "a column may be given by position as #N; roles include frequency, z_magnitude, "
                            "z_phase, z_real, z_imag, z_complex, v_amplitude, v_phase, i_amplitude, i_phase; "
                            "stated uncertainties u_z_magnitude, u_z_phase, u_z_real, u_z_imag; status (a "
                            "status column whose bad words drop rows)")
    group.add_argument("--shunt", metavar="OHMS", help="series shunt resistance when current is a voltage")
    group.add_argument("--reference", metavar="OHMS",
                       help="reference resistor for a transfer-ratio file (part voltage / reference voltage)")
    group.add_argument("--dbm-reference", metavar="OHMS",
                       help="impedance that channel levels in dBm are referred to, e.g. 50")
    group.add_argument("--through", choices=["shunt", "series"],
                       help=".s2p files: part shunted across the through line, or in series with it")
    group.add_argument("--band", metavar="FMIN:FMAX", help="keep only this frequency range, e.g. 1k:30M")
    group.add_argument("--noise", metavar="REL:PHASE",
                       help="stated standard uncertainty of each point of Z, e.g. 0.5%%:0.2deg (|Z| "
                            "relative, phase); makes the weights absolute so chi-square tests the model")
    corr = parser.add_argument_group("corrections")
    corr.add_argument("--skew", metavar="SECONDS",
                      help="current channel delay relative to the voltage channel, removed as 2 pi f dt")
    corr.add_argument("--open", metavar="FILE", help="open-circuit standard measured in the same form")
    corr.add_argument("--short", metavar="FILE", help="short-circuit standard measured in the same form")
    corr.add_argument("--load", metavar="FILE", help="load standard measured in the same form")
    corr.add_argument("--load-value", metavar="OHMS", help="known impedance of the load standard")


def _read_options(args):
    from .readers import ReadOptions

    column_map = dict(_key_value(item, "--map") for item in args.map)
    return ReadOptions(
        shunt=_resistance(args.shunt, "--shunt"),
        reference=_resistance(args.reference, "--reference"),
        column_map=column_map,
        through=args.through,
        dbm_reference=(parse_quantity(args.dbm_reference, "ohm", "--dbm-reference")
                       if getattr(args, "dbm_reference", None) else None),
    )


def _resistance(text: str | None, option: str) -> float | None:
    return None if not text else check_resistance(parse_quantity(text, "ohm", option), option)


def _band(text: str) -> tuple[float, float]:
    if ":" not in text:
        raise InputError(f"--band {text!r}: expected FMIN:FMAX, e.g. 1k:30M")
    low, high = text.split(":", 1)
    fmin = parse_quantity(low, "Hz", "--band minimum") if low.strip() else 0.0
    fmax = parse_quantity(high, "Hz", "--band maximum") if high.strip() else float("inf")
    if not fmin < fmax:
        raise InputError(f"--band {text!r}: minimum must be below maximum")
    return fmin, fmax


def _noise(text: str) -> tuple[float, float]:
    """``"0.5%:0.2deg"`` -> (0.005, phase in rad); the phase may be given in deg (default) or rad."""
    if ":" not in text:
        raise InputError(f"--noise {text!r}: expected REL:PHASE, e.g. 0.5%:0.2deg")
    rel_text, phase_text = (part.strip() for part in text.split(":", 1))
    relative = (parse_quantity(rel_text[:-1], "", "--noise |Z| part") / 100 if rel_text.endswith("%")
                else parse_quantity(rel_text, "", "--noise |Z| part"))
    if phase_text.lower().endswith("rad"):
        phase = parse_quantity(phase_text[:-3], "", "--noise phase part")
    else:
        phase = math.radians(parse_quantity(phase_text.removesuffix("deg").removesuffix("\u00b0"), "",
                                            "--noise phase part"))
    return relative, phase


def _percent(text: str, option: str) -> float:
    """``"1%"`` or ``"1"`` (percent) -> 0.01."""
    value = parse_quantity(text.strip().removesuffix("%"), "", option) / 100
    if not (math.isfinite(value) and value >= 0):
        raise InputError(f"{option} {text!r}: give a tolerance in percent >= 0, e.g. 1%")
    return value


def _add_budget_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group(
        "accuracy (uncertainty budget, GUM)",
        "stated +/- limits of the bench, each a systematic offset common to the whole sweep (rectangular, "
        "u = a/sqrt 3); combined with the noise into u_c and U = k u_c")
    group.add_argument("--accuracy", metavar="MAG%:PHASEdeg",
                       help="accuracy of the measured |Z| and phase, e.g. 0.5%%:0.1deg")
    group.add_argument("--accuracy-table", metavar="FILE",
                       help="accuracy over frequency: columns frequency, |Z| limit %%, phase limit deg "
                            "(interpolated in log frequency)")
    group.add_argument("--shunt-tolerance", metavar="PCT", help="tolerance of the --shunt resistor, e.g. 1%%")
    group.add_argument("--reference-tolerance", metavar="PCT", help="tolerance of the --reference resistor")
    group.add_argument("--skew-uncertainty", metavar="SECONDS",
                       help="+/- limit of the channel skew (with or without --skew), e.g. 1n")
    group.add_argument("--load-tolerance", metavar="PCT", help="tolerance of the --load-value standard")
    group.add_argument("--budget-mc", type=int, default=0, metavar="N",
                       help="check the budget by a Monte Carlo propagation with N draws (JCGM 101)")


def budget_inputs_from_args(args):
    """The stated limits of the budget options (``BudgetInputs``), checked against the reading options."""
    from .budget import BudgetInputs, read_accuracy_table

    for option, needs, what in (("shunt_tolerance", "shunt", "--shunt OHMS"),
                                ("reference_tolerance", "reference", "--reference OHMS"),
                                ("load_tolerance", "load_value", "--load-value OHMS")):
        if getattr(args, option) and not getattr(args, needs):
            raise InputError(f"--{option.replace('_', '-')} needs {what} (the value it is the tolerance of)")
    if args.accuracy and args.accuracy_table:
        raise InputError("--accuracy and --accuracy-table: give one of them")
    magnitude = phase = None
    if args.accuracy:
        if ":" not in args.accuracy:
            raise InputError(f"--accuracy {args.accuracy!r}: expected MAG%:PHASEdeg, e.g. 0.5%:0.1deg")
        mag_text, phase_text = (part.strip() for part in args.accuracy.split(":", 1))
        magnitude = _percent(mag_text, "--accuracy |Z| part")
        phase = math.radians(parse_quantity(phase_text.removesuffix("deg").removesuffix("\u00b0"), "",
                                            "--accuracy phase part"))
        if phase < 0:
            raise InputError(f"--accuracy {args.accuracy!r}: the phase limit must be >= 0")
    if args.budget_mc < 0:
        raise InputError(f"--budget-mc {args.budget_mc}: give a number of draws >= 0")
    return BudgetInputs(
        magnitude_accuracy=magnitude, phase_accuracy=phase,
        accuracy_table=read_accuracy_table(args.accuracy_table) if args.accuracy_table else None,
        shunt_tolerance=_percent(args.shunt_tolerance, "--shunt-tolerance") if args.shunt_tolerance else None,
        reference_tolerance=(_percent(args.reference_tolerance, "--reference-tolerance")
                             if args.reference_tolerance else None),
        load_tolerance=_percent(args.load_tolerance, "--load-tolerance") if args.load_tolerance else None,
        skew_uncertainty=(parse_quantity(args.skew_uncertainty, "s", "--skew-uncertainty")
                          if args.skew_uncertainty else None))


def _two_port(args) -> bool:
    """Whether the part and its standards are 2-port files to de-embed on the full matrices (scikit-rf is
    imported only when standards are given)."""
    return _compensation(args)[0] == "two-port"


def _compensation(args) -> tuple[str | None, str]:
    """(method, reason) of the fixture compensation the files call for (``fixtures.compensation_choice``)."""
    from .fixtures import compensation_choice

    return compensation_choice(args.file, {"open": args.open, "short": args.short, "load": args.load})


def load_from_args(args):
    """Read the bench file and apply corrections as the options say; returns (Measurement, input paths)."""
    from .corrections import Corrections, apply_corrections
    from .readers import read_measurement

    options = _read_options(args)
    inputs = [args.file] + [p for p in (args.open, args.short, args.load) if p]
    if (args.open or args.short or args.load) and _two_port(args):
        from .fixtures import deembed_two_port

        if args.skew:
            raise InputError("--skew is for two-channel bench data, not for network-analyzer .s2p files")
        measurement = deembed_two_port(args.file, args.through, open=args.open, short=args.short)
        return _noise_and_band(args, measurement), inputs
    measurement = read_measurement(args.file, options)
    inputs = [args.file]
    standards = {}
    for role in ("open", "short", "load"):
        path = getattr(args, role)
        if path:
            standards[role] = read_measurement(path, options)
            inputs.append(path)
    if args.load_value and not args.load:
        raise InputError("--load-value needs --load FILE")
    if args.load and not args.load_value:
        raise InputError("--load FILE needs --load-value OHMS (the known impedance of the load standard)")
    corrections = Corrections(
        skew=check_skew(parse_quantity(args.skew, "s", "--skew")) if args.skew else None,
        open=standards.get("open"),
        short=standards.get("short"),
        load=standards.get("load"),
        load_value=_resistance(args.load_value, "--load-value"),
    )
    measurement = apply_corrections(measurement, corrections)
    if standards:
        measurement = measurement.replace(step=f"one-port compensation chosen: {_compensation(args)[1]}")
    return _noise_and_band(args, measurement), inputs


def _noise_and_band(args, measurement):
    """Stated noise (``--noise``) and the frequency band (``--band``) applied to a read measurement."""
    if args.noise:
        relative, phase = _noise(args.noise)
        measurement = measurement.with_stated_noise(relative, phase)
    if args.band:
        fmin, fmax = _band(args.band)
        mask = (measurement.frequency >= fmin) & (measurement.frequency <= fmax)
        if mask.sum() < 2:
            raise InputError(f"{args.file}: --band {args.band} keeps {int(mask.sum())} points; widen it")
        measurement = measurement.select(mask, f"kept {int(mask.sum())} of {len(measurement)} points in "
                                               f"--band {args.band}")
    return measurement


def _add_message_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("messages")
    group.add_argument("--quiet", action="store_true",
                       help="no progress bar and no 'wrote PATH' lines (the report is still printed)")
    group.add_argument("--verbose", action="store_true",
                       help="add the raw figures: chi-square, AIC, optimiser message, Kramers-Kronig basis")


def _say(text: str, stream=None) -> None:
    """Print display text, spelled in ASCII (ohm, u, +/-) when the stream's encoding cannot show symbols."""
    from .units import for_terminal

    stream = stream or sys.stdout
    print(for_terminal(text, getattr(stream, "encoding", None)), file=stream)


def _wrote(paths, args) -> None:
    """One ``wrote PATH`` line on stderr per file written (none with ``--quiet``)."""
    if not getattr(args, "quiet", False):
        for path in paths:
            _say(f"wrote {path}", sys.stderr)


def _figure_bytes(figure, fmt: str) -> bytes:
    import matplotlib.pyplot as plt

    buffer = io.BytesIO()
    figure.savefig(buffer, format=fmt, dpi=120, bbox_inches="tight")
    plt.close(figure)
    return buffer.getvalue()


def _plot_format(path: str, option: str) -> str:
    """The figure format of ``path`` from its extension; InputError listing the formats matplotlib writes."""
    from matplotlib.backend_bases import FigureCanvasBase

    formats = sorted(FigureCanvasBase.get_supported_filetypes())
    fmt = Path(path).suffix[1:].lower()
    if fmt not in formats:
        shown = f"'.{fmt}'" if fmt else "no extension"
        raise InputError(f"{option} {path}: {shown} is not a figure format; end the name with one of "
                         f"{', '.join('.' + f for f in formats)}")
    return fmt


def _cmd_inspect(args) -> int:
    from .inspection import format_summary, summarize
    from .outputs.atomic import check_targets, write_outputs

    fmt = _plot_format(args.plot, "--plot") if args.plot else None
    check_targets([p for p in (args.csv, args.plot) if p], [args.file, *_standard_files(args)])
    measurement, inputs = load_from_args(args)
    summary = summarize(measurement)
    outputs: dict[str, bytes | str] = {}
    if args.csv:
        from .inspection import measurement_table

        outputs[args.csv] = measurement_table(measurement).to_csv(index=False)
    if args.plot:
        from .outputs.plots import plot_measurement

        outputs[args.plot] = _figure_bytes(plot_measurement(measurement), fmt)
    write_outputs(outputs, inputs)
    _say(format_summary(summary, measurement, verbose=args.verbose))
    _wrote(outputs, args)
    return 0


def _standard_files(args) -> list[str]:
    return [path for path in (getattr(args, role, None) for role in ("open", "short", "load")) if path]


def _finite(value: float, what: str) -> float:
    if not math.isfinite(value):
        raise InputError(f"{what}: {value!r} is not a finite number")
    return value


def _typed_unit(name: str) -> str:
    """The unit a value of parameter ``name`` may be typed with (``Cp=12pF``, ``Rs=10mOhm``), from the kind
    registry; "" (a bare number) for units that cannot be typed, such as a constant phase element's."""
    from .circuit import unit_of_parameter

    unit = unit_of_parameter(name) or ""
    return unit if unit.isalpha() else ""


def _parse_named_values(items: Sequence[str], option: str) -> dict[str, float]:
    values: dict[str, float] = {}
    for item in items:
        name, text = _key_value(item, option)
        if name in values:
            raise InputError(f"{option} {name} given twice ({name}={values[name]:g} and {item}); "
                             f"give it once")
        what = f"{option} {name}"
        values[name] = _finite(parse_quantity(text, _typed_unit(name), what), what)
    return values


def _parse_bounds(items: Sequence[str]) -> dict[str, tuple[float, float]]:
    bounds: dict[str, tuple[float, float]] = {}
    for item in items:
        name, text = _key_value(item, "--bound")
        if ":" not in text:
            raise InputError(f"--bound {item!r}: expected NAME=LOW:HIGH, e.g. Rs=1m:10")
        if name in bounds:
            raise InputError(f"--bound {name} given twice; give one range per parameter")
        low, high = text.split(":", 1)
        low_value = parse_quantity(low, _typed_unit(name), f"--bound {name} low")
        high_value = parse_quantity(high, _typed_unit(name), f"--bound {name} high")
        if math.isnan(low_value) or math.isnan(high_value) or not low_value < high_value:
            raise InputError(f"--bound {item!r}: the low limit must be below the high limit")
        bounds[name] = (low_value, high_value)
    return bounds


def _constraints(args) -> dict:
    """--fix, --guess and --bound parsed and checked against each other (one role per parameter)."""
    fixed = _parse_named_values(args.fix, "--fix")
    guesses = _parse_named_values(args.guess, "--guess")
    bounds = _parse_bounds(args.bound)
    for name in fixed.keys() & guesses.keys():
        raise InputError(f"--fix {name} and --guess {name}: a held parameter needs no starting value; "
                         f"give one of them")
    for name, value in fixed.items():
        if name in bounds and not bounds[name][0] <= value <= bounds[name][1]:
            low, high = bounds[name]
            raise InputError(f"--fix {name}={value:g} lies outside its --bound {name}={low:g}:{high:g}; "
                             f"move the value or the bound")
    for name, value in guesses.items():
        if name in bounds and not bounds[name][0] <= value <= bounds[name][1]:
            low, high = bounds[name]
            raise InputError(f"--guess {name}={value:g} lies outside its --bound {name}={low:g}:{high:g}; "
                             f"move the value or the bound")
    return dict(fixed=fixed, guesses=guesses, bounds=bounds, intervals=args.intervals)


def _fit_targets(args) -> list[str]:
    return [p for p in (args.json, args.curve, args.spice, args.report, args.touchstone) if p]


def _curve_band(text: str):
    """``"1M:3G:401"`` -> 401 log-spaced frequencies in Hz (``--curve-band``)."""
    from .outputs.touchstone import curve_frequencies

    parts = text.split(":")
    if len(parts) != 3:
        raise InputError(f"--curve-band {text!r}: expected FMIN:FMAX:POINTS, e.g. 1M:3G:401")
    fmin = check_frequency(parse_quantity(parts[0], "Hz", "--curve-band minimum"), "--curve-band minimum")
    fmax = check_frequency(parse_quantity(parts[1], "Hz", "--curve-band maximum"), "--curve-band maximum")
    if not parts[2].strip().isdigit() or not 2 <= int(parts[2]) <= 100_000:
        raise InputError(f"--curve-band {text!r}: POINTS must be a whole number from 2 to 100000")
    return curve_frequencies(fmin, fmax, int(parts[2]))


def _touchstone_output(args, result) -> str:
    from .outputs.touchstone import to_touchstone

    frequency = _curve_band(args.curve_band) if args.curve_band else None
    return to_touchstone(result, args.touchstone, frequency, through=args.through)


def _fit_work(args, measurement, constraints, limits, at, waveform):
    """The fit (one model or auto), design values, uncertainty budget and drive response: the work that the
    budget of ``--max-time`` and ``--max-evaluations`` covers. Returns (selection, result, design, budget,
    drive)."""
    from .budget import uncertainty_budget
    from .derived import design_values
    from .fitting.least_squares import fit
    from .fitting.selection import fit_auto
    from .presets import resolve_model

    selection = None
    if args.model.strip().lower() == "auto":
        if args.jobs is not None and args.jobs < 1:
            raise InputError(f"--jobs {args.jobs}: give at least 1")
        from .presets import default_candidates

        with progress.bar("ranking models", len(default_candidates()), "model") as bar:
            started: list[str] = []

            def step(expression: str) -> None:  # called as each candidate's fit starts
                bar.update(1 if started else 0)
                bar.set_postfix_str(expression)
                started.append(expression)

            selection = fit_auto(measurement, **constraints, jobs=args.jobs, progress=step,
                                 noise_shape=getattr(args, "noise_shape", "estimate"))
        result = selection.chosen
    else:
        circuit = resolve_model(args.model)
        check_expression(circuit)
        result = fit(measurement, circuit, **constraints,
                     noise_shape=getattr(args, "noise_shape", "estimate"))
    design = design_values(result, at)
    budget = uncertainty_budget(result, limits, at, monte_carlo=args.budget_mc)
    drive = None
    if waveform is not None:
        from .drive import drive_response, model_from_fit

        drive = drive_response(model_from_fit(result, budget), waveform, args.allow_extrapolation)
    return selection, result, design, budget, drive


def _finite_positive(value: float, option: str) -> float:
    if not (math.isfinite(value) and value > 0):
        raise InputError(f"{option} {value:g}: give a positive number")
    return value


def _cmd_fit(args) -> int:
    from .outputs.atomic import check_targets, write_outputs
    from .outputs.report import fit_to_json, format_fit_report, run_record

    check_expression(args.model)
    at = [check_frequency(parse_quantity(a, "Hz", "--at"), "--at") for a in args.at]
    if args.curve_band and not args.touchstone:
        raise InputError("--curve-band sets the frequencies of the --touchstone export; "
                         "give --touchstone too")
    if args.curve_band:
        _curve_band(args.curve_band)
    if args.touchstone and Path(args.touchstone).suffix.lower() not in (".s1p", ".s2p"):
        raise OutputError(f"--touchstone {args.touchstone}: name the file .s1p (reflection) or .s2p "
                          f"(through line)")
    if args.touchstone and Path(args.touchstone).suffix.lower() == ".s2p" and not args.through:
        raise InputError(f"--touchstone {args.touchstone}: a .s2p export needs --through series or shunt "
                         f"(how the part sits in the line); or name it .s1p for the reflection")
    constraints = _constraints(args)
    limits = budget_inputs_from_args(args)
    check_targets(_fit_targets(args), [args.file, *_standard_files(args),
                                       *([args.accuracy_table] if args.accuracy_table else [])])
    if args.plot_dir and Path(args.plot_dir).exists() and not Path(args.plot_dir).is_dir():
        raise OutputError(f"--plot-dir {args.plot_dir}: is a file, not a folder; choose a folder name")
    waveform, drive_inputs = _drive_waveform_from_args(args, "drive-")  # read before the fit: errors first
    measurement, inputs = load_from_args(args)
    if args.accuracy_table:
        inputs.append(args.accuracy_table)
    with work_budget(_finite_positive(args.max_time, "--max-time"),
                     _finite_positive(args.max_evaluations, "--max-evaluations")):
        selection, result, design, budget, drive = _fit_work(args, measurement, constraints, limits, at,
                                                              waveform)
    inputs += drive_inputs
    record = run_record(args, inputs, __version__)

    outputs: dict[str, bytes | str] = {}
    if args.json:
        data = fit_to_json(result, selection, design, record, budget=budget)
        if drive is not None:
            from .outputs.drive_report import drive_to_json

            data["drive"] = drive_to_json(drive)
        outputs[args.json] = json.dumps(data, indent=2) + "\n"
    if args.curve:
        from .outputs.report import curve_table

        buffer = io.BytesIO()  # bytes straight away: a long sweep's table is held once, not as text and bytes
        curve_table(result).to_csv(buffer, index=False, encoding="utf-8")
        outputs[args.curve] = buffer.getvalue()
    if args.spice:
        from .outputs.spice import to_spice_subcircuit

        outputs[args.spice] = to_spice_subcircuit(result, name=args.subckt_name)
    if args.touchstone:
        outputs[args.touchstone] = _touchstone_output(args, result)
    figures = {}
    if args.plot_dir or args.report:
        from .outputs.plots import fit_figures

        figures = fit_figures(result, design)
    if args.plot_dir:
        stem = Path(args.file).stem
        for key, figure in figures.items():
            for fmt in ("png", "svg"):
                outputs[str(Path(args.plot_dir) / f"{stem}_{key}.{fmt}")] = _figure_bytes(figure, fmt)
        from .outputs.plots import summary_figure
        from .outputs.wording import verdict

        page = summary_figure(result, design, verdict=verdict(result))  # one landscape page for slides
        for fmt in ("png", "svg"):
            outputs[str(Path(args.plot_dir) / f"{stem}_summary.{fmt}")] = _figure_bytes(page, fmt)
        if drive is not None:
            outputs.update(_drive_figure_outputs(drive, stem, args.plot_dir))
    if args.report:
        from .outputs.html_report import render_html_report

        extra = []
        if drive is not None:
            from .outputs.drive_report import drive_figures, drive_html_section

            figures = {**figures, **drive_figures(drive)}
            extra.append(("Drive response", drive_html_section(drive)))
        outputs[args.report] = render_html_report(result, selection, design, record, figures,
                                                  budget=budget, extra_sections=extra)
    write_outputs(outputs, inputs)
    _say(format_fit_report(result, selection, design, budget=budget, verbose=args.verbose))
    if drive is not None:
        from .outputs.drive_report import format_drive_report

        _say(format_drive_report(drive).rstrip("\n"))
    _wrote(outputs, args)
    return 0


def _add_drive_source(group, prefix: str) -> None:
    """The drive options (``prefix`` "" on the drive command, "drive-" on fit)."""
    source = group.add_mutually_exclusive_group(required=not prefix)
    source.add_argument(f"--{prefix}current", metavar="WAVE.csv",
                        help="drive current record: time and current columns, units in the header, one or "
                             "more whole periods")
    source.add_argument(f"--{prefix}voltage", metavar="WAVE.csv",
                        help="drive voltage record (the current then follows from the model)")
    source.add_argument("--drive", metavar="SPEC",
                        help="built-in drive, e.g. 'triangle:0.6App@500k+dc:2A' (shapes sine, triangle, "
                             "square, trapezoid; options ,duty=0.25 ,rise=20n ,phase=90)")
    group.add_argument(f"--{prefix}period", metavar="SECONDS",
                       help="period of the record when it is not whole periods (the last whole ones "
                            "are used)")
    group.add_argument(f"--{prefix}column", metavar="HEADER", help="value column when the record has several")
    group.add_argument(f"--{prefix}bandwidth", metavar="FREQ",
                       help="drop the record's content above FREQ (probe noise), as a scope's bandwidth "
                            "limit does, e.g. 20M")
    group.add_argument("--allow-extrapolation", action="store_true",
                       help="accept a drive with most of its AC content outside the fitted band")


def _drive_waveform_from_args(args, prefix: str):
    """(Waveform, input files) for the drive options, or (None, []) when no drive was asked for."""
    from .drive import drive_waveform, read_waveform

    key = prefix.replace("-", "_")
    current, voltage = getattr(args, f"{key}current"), getattr(args, f"{key}voltage")
    if not (current or voltage or args.drive):
        return None, []
    period_text = getattr(args, f"{key}period")
    period = parse_quantity(period_text, "s", f"--{prefix}period") if period_text else None
    if args.drive:
        if period is not None:
            raise InputError(f"--{prefix}period applies to a record (WAVE.csv), not to --drive")
        waveform, inputs = drive_waveform(args.drive), []
    else:
        path = current or voltage
        waveform = read_waveform(path, "current" if current else "voltage", period,
                                 getattr(args, f"{key}column"))
        inputs = [path]
    bandwidth = getattr(args, f"{key}bandwidth")
    if bandwidth:
        from .drive import band_limited

        waveform = band_limited(waveform, parse_quantity(bandwidth, "Hz", f"--{prefix}bandwidth"))
    return waveform, inputs


def _drive_figure_outputs(drive, stem: str, plot_dir: str) -> dict[str, bytes]:
    from .outputs.drive_report import drive_figures

    outputs = {}
    for key, figure in drive_figures(drive).items():
        for fmt in ("png", "svg"):
            outputs[str(Path(plot_dir) / f"{stem}_{key}.{fmt}")] = _figure_bytes(figure, fmt)
    return outputs


def _cmd_drive(args) -> int:
    from .drive import model_from_json
    from .outputs.atomic import write_outputs
    from .outputs.drive_report import drive_to_json, format_drive_report

    model = model_from_json(args.fit_json)
    from .drive import drive_response

    waveform, inputs = _drive_waveform_from_args(args, "")
    drive = drive_response(model, waveform, args.allow_extrapolation)
    inputs = [args.fit_json, *inputs]
    outputs: dict[str, bytes | str] = {}
    if args.json:
        from .outputs.report import run_record

        record = run_record(args, inputs, __version__)
        data = drive_to_json(drive)
        data["run"] = {"options": dict(record.options), "inputs": [{"path": i.path, "sha256": i.sha256}
                                                                   for i in record.inputs],
                       "version": record.version, "date": record.date}
        outputs[args.json] = json.dumps(data, indent=2) + "\n"
    if args.plot_dir:
        outputs.update(_drive_figure_outputs(drive, Path(args.fit_json).stem, args.plot_dir))
    write_outputs(outputs, inputs)
    _say(format_drive_report(drive).rstrip("\n"))
    _wrote(outputs, args)
    return 0


def _cmd_models(args) -> int:
    from .presets import PRESETS

    width = max(len(name) for name in PRESETS)
    for name, preset in PRESETS.items():
        print(f"{name:<{width}}  {preset.expression:<34}  {preset.description}")
    return 0


# ---------------------------------------------------------------------------------------------- lots


def _lot_settings(args, model: str):
    from .lot import LotSettings
    from .lot.job import BUDGET_FIELDS, READING_FIELDS

    budget_inputs_from_args(args)  # refuse bad accuracy options before any work
    if args.budget_mc:
        raise InputError("--budget-mc: the Monte Carlo check of the budget is for one part (fit); a lot uses "
                         "the first-order budget")

    at = {}
    for text in args.at:
        label = text.strip().removesuffix("Hz")
        at[label] = parse_quantity(text, "Hz", "--at")
    return LotSettings(model=model, reading={k: getattr(args, k) for k in READING_FIELDS},
                       **_constraints(args), noise_shape=args.noise_shape, at=at, specs=tuple(args.spec),
                       per_file_model=getattr(args, "per_file_model", False),
                       budget={k: getattr(args, k) for k in BUDGET_FIELDS})


def _lot_report_outputs(result, stats, report: str | None, title: str) -> dict[str, bytes | str]:
    if not report:
        return {}
    from .outputs.lot_report import lot_figures, render_lot_html

    return {report: render_lot_html(result, stats, lot_figures(result), title=title)}


def _cmd_lot(args) -> int:
    from .lot import collect_files, lot_statistics, read_manifest, run_lot, table_from_store, write_table
    from .lot.table import check_table_path
    from .outputs.atomic import write_outputs
    from .outputs.lot_report import format_lot_summary

    check_table_path(args.table)
    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers {args.workers}: give 1 or more")
    if args.from_store:
        if args.paths or args.manifest:
            raise InputError("--from-store rebuilds the table from the store: give no files or --manifest")
        result = table_from_store(args.from_store, specs=args.spec or None)
        inputs = [args.from_store]
    else:
        if not args.model:
            raise InputError("lot: --model EXPR|PRESET|auto is required (unless --from-store)")
        if args.per_file_model and args.model.strip().lower() != "auto":
            raise InputError("--per-file-model applies to --model auto only")
        if args.manifest and args.paths:
            raise InputError("lot: give files or --manifest, not both")
        items = read_manifest(args.manifest) if args.manifest else collect_files(args.paths)
        store = args.store or str(Path(args.table).resolve().parent / "fitz_results.sqlite")
        inputs = [i.file for i in items] + ([args.manifest] if args.manifest else []) + [store]
        result = run_lot(items, _lot_settings(args, args.model), store=store, refit=args.refit,
                         workers=args.workers, scheduler=args.scheduler,
                         progress=progress.wanted(getattr(args, "quiet", False)))
    stats = lot_statistics(result.table, result.specs)
    outputs = {args.table: write_table(result.table, args.table)}
    outputs.update(_lot_report_outputs(result, stats, args.report, "Lot report"))
    written = write_outputs(outputs, inputs)
    print(format_lot_summary(result, stats), end="")
    print("Written: " + ", ".join(str(p) for p in written)
          + ("" if args.from_store else f"; results store: {store}"))
    return 1 if result.n_errors else 0


def _cmd_compare(args) -> int:
    from .lot import LotItem, lot_statistics, run_lot
    from .outputs.atomic import write_outputs
    from .outputs.lot_report import format_comparison

    if not 2 <= len(args.files) <= 3:
        raise InputError(f"compare: give two or three files ({len(args.files)} given)")
    items = [LotItem(file=f, part=Path(f).stem) for f in args.files]
    if len({i.part for i in items}) < len(items):
        items = [LotItem(file=i.file, part=f"{k + 1}:{i.part}") for k, i in enumerate(items)]
    result = run_lot(items, _lot_settings(args, args.model), workers=1)
    if result.n_errors == len(items) or len(items) - result.n_errors < 2:
        errors = "; ".join(result.table.loc[result.table["status"] != "ok", "error"])
        raise InputError(f"compare: fewer than two parts gave a result ({errors})")
    stats = lot_statistics(result.table, result.specs)
    outputs = _lot_report_outputs(result, stats, args.report, "Comparison of " + ", ".join(args.files))
    if args.table:
        from .lot import write_table
        from .outputs.lot_report import compare_table

        outputs[args.table] = write_table(compare_table(result), args.table)
    written = write_outputs(outputs, args.files)
    print(format_comparison(result), end="")
    if written:
        print("Written: " + ", ".join(str(p) for p in written))
    return 1 if result.n_errors else 0


def _add_fit_options(parser: argparse.ArgumentParser) -> None:
    """Model constraints and operating frequencies shared by lot and compare."""
    group = parser.add_argument_group("parameters and design values")
    group.add_argument("--fix", action="append", default=[], metavar="NAME=VALUE", help="hold a parameter")
    group.add_argument("--guess", action="append", default=[], metavar="NAME=VALUE", help="starting value")
    group.add_argument("--bound", action="append", default=[], metavar="NAME=LOW:HIGH", help="limits")
    group.add_argument("--intervals", choices=["flagged", "all", "none"], default="flagged",
                       help="profile-likelihood intervals, as for fit")
    group.add_argument("--noise-shape", choices=["estimate", "single"], default="estimate",
                       help="noise model as for fit; with --model auto and one model for the lot the rows "
                            "are the single-shape fits the lot's BIC ranking compares")
    group.add_argument("--at", action="append", default=[], metavar="FREQ",
                       help="operating frequency for design values (repeatable), e.g. --at 100k")
    group.add_argument("--spec", action="append", default=[], metavar="NAME=LIMITS",
                       help="spec limit (repeatable): NAME=NOMINAL+-TOL%%, NAME=LOW:HIGH, NAME=LOW: or "
                            "NAME=:HIGH; NAME a parameter, SRF or VALUE@FREQ (ESR@100k, Q@100k, L_eff@100k)")


def _add_lot_commands(commands) -> None:
    lot = commands.add_parser("lot", help="fit many bench files alike: table, spec verdicts, statistics")
    lot.add_argument("paths", nargs="*", metavar="PATH", help="bench files, folders or globs")
    lot.add_argument("--manifest", metavar="FILE.csv",
                     help="CSV listing file, part, condition columns and per-file shunt/through/open/short")
    lot.add_argument("--model", metavar="EXPR|PRESET|auto",
                     help="one model for every file; auto picks the one with the best total BIC")
    lot.add_argument("--per-file-model", action="store_true", help="with auto: each file its own model")
    add_reader_options(lot)
    _add_budget_options(lot)
    _add_fit_options(lot)
    out = lot.add_argument_group("table, store and workers")
    out.add_argument("--table", required=True, metavar="OUT.csv", help="the lot table (.csv, or .parquet)")
    out.add_argument("--report", metavar="OUT.html", help="HTML report with statistics and plots")
    out.add_argument("--store", metavar="PATH",
                     help="SQLite results store (default: fitz_results.sqlite beside the table)")
    out.add_argument("--refit", action="store_true", help="fit every file again, ignoring stored results")
    out.add_argument("--from-store", metavar="PATH", help="rebuild the table of the store's latest run")
    out.add_argument("--workers", type=int, metavar="N", help="worker processes (default: the core count)")
    out.add_argument("--scheduler", metavar="ADDRESS",
                     help="Dask scheduler address, e.g. tcp://10.0.0.5:8786 (needs 'distributed')")
    lot.set_defaults(handler=_cmd_lot)

    compare = commands.add_parser("compare", help="fit two or three parts alike and tabulate differences")
    compare.add_argument("files", nargs="+", metavar="FILE")
    compare.add_argument("--model", required=True, metavar="EXPR|PRESET|auto", help="as for lot")
    add_reader_options(compare)
    _add_budget_options(compare)
    _add_fit_options(compare)
    compare.add_argument("--table", metavar="OUT.csv", help="write the difference table")
    compare.add_argument("--report", metavar="OUT.html", help="HTML report with the |Z| and phase overlay")
    compare.set_defaults(handler=_cmd_compare)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="fitz-tool",
        description="Measured impedance of a passive part -> fitted equivalent circuit with uncertainties.")
    parser.add_argument("--version", action="version", version=f"fitz-tool {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    inspect = commands.add_parser("inspect", help="read a bench file and summarize the measured impedance")
    inspect.add_argument("file", metavar="FILE")
    add_reader_options(inspect)
    inspect.add_argument("--plot", metavar="OUT.png", help="write a Bode plot of |Z| and phase")
    inspect.add_argument("--csv", metavar="OUT.csv", help="write the normalized impedance table")
    _add_message_options(inspect)
    inspect.set_defaults(handler=_cmd_inspect)

    fitp = commands.add_parser("fit", help="fit an equivalent circuit to a bench file")
    fitp.add_argument("file", metavar="FILE")
    fitp.add_argument("--model", required=True, metavar="EXPR|PRESET|auto",
                      help="circuit expression (e.g. 'Rs + L1 || Cp'), a preset name (see 'models'), or auto")
    add_reader_options(fitp)
    model = fitp.add_argument_group("parameters")
    model.add_argument("--fix", action="append", default=[], metavar="NAME=VALUE", help="hold a parameter")
    model.add_argument("--guess", action="append", default=[], metavar="NAME=VALUE", help="starting value")
    model.add_argument("--bound", action="append", default=[], metavar="NAME=LOW:HIGH", help="limits")
    model.add_argument("--intervals", choices=["flagged", "all", "none"], default="flagged",
                       help="68 %% profile-likelihood intervals: for parameters whose first-order error "
                            "is not trustworthy (default), for every parameter, or none")
    model.add_argument("--noise-shape", choices=["estimate", "single"], default="estimate",
                       help="without stated uncertainties: a noise model from the data (relative part plus "
                            "channel floors, kept when the likelihood supports it; default) or the reader's "
                            "single shape (relative to |Z|; additive in S for Touchstone)")
    model.add_argument("--jobs", type=int, default=None, metavar="N",
                       help="processes for --model auto on large files (default: the core count)")
    model.add_argument("--max-time", type=float, default=DEFAULT_MAX_TIME, metavar="SECONDS",
                       help="stop a fit that runs longer, with nothing written "
                            f"(default {DEFAULT_MAX_TIME:g})")
    model.add_argument("--max-evaluations", type=float, default=DEFAULT_MAX_EVALUATIONS, metavar="N",
                       help="stop a fit after this many model evaluations (impedance at one frequency; "
                            f"default {DEFAULT_MAX_EVALUATIONS:.0e})")
    _add_budget_options(fitp)
    out = fitp.add_argument_group("outputs")
    out.add_argument("--at", action="append", default=[], metavar="FREQ",
                     help="operating frequency for design values (repeatable), e.g. --at 100k")
    out.add_argument("--json", metavar="OUT.json", help="machine-readable result (SI units)")
    out.add_argument("--curve", metavar="OUT.csv", help="measured and model impedance with residuals")
    out.add_argument("--spice", metavar="OUT.cir", help="SPICE subcircuit of the fitted network")
    out.add_argument("--subckt-name", default="FITTED_PART", metavar="NAME", help="subcircuit name")
    out.add_argument("--plot-dir", metavar="DIR", help="write PNG and SVG plots into DIR")
    out.add_argument("--report", metavar="OUT.html", help="self-contained HTML report")
    out.add_argument("--touchstone", metavar="OUT.s1p|OUT.s2p",
                     help="the model as Touchstone (scikit-rf, 50 ohm reference): .s1p reflection, or .s2p "
                          "through line as --through says")
    out.add_argument("--curve-band", metavar="FMIN:FMAX:POINTS",
                     help="frequencies of the --touchstone export, log-spaced (default: the measured ones), "
                          "e.g. 1M:3G:401")
    _add_drive_source(fitp.add_argument_group("the part under a periodic drive (see 'drive')"), "drive-")
    _add_message_options(fitp)
    fitp.set_defaults(handler=_cmd_fit)

    drivep = commands.add_parser("drive", help="voltage, ripple and loss of a fitted part under a periodic "
                                               "current or voltage")
    drivep.add_argument("fit_json", metavar="FIT.json", help="the record 'fit --json' wrote")
    _add_drive_source(drivep.add_argument_group("the drive"), "")
    dout = drivep.add_argument_group("outputs")
    dout.add_argument("--json", metavar="OUT.json", help="machine-readable result (SI units)")
    dout.add_argument("--plot-dir", metavar="DIR", help="write PNG and SVG plots into DIR")
    drivep.set_defaults(handler=_cmd_drive)

    models = commands.add_parser("models", help="list the named starting topologies")
    models.set_defaults(handler=_cmd_models)
    _add_lot_commands(commands)
    return parser


#: A value that starts with "-" and reads as a number ("-5n", "-1e3", "-1k:2k", "-0.5%:0.2deg").
_NEGATIVE_VALUE = re.compile(r"^-(\d|\.\d)")


def _value_options(parser: argparse.ArgumentParser) -> set[str]:
    """Every option string (of the parser and its subcommands) that takes exactly one value."""
    options: set[str] = set()
    stack = [parser]
    while stack:
        current = stack.pop()
        for action in current._actions:
            if isinstance(action, argparse._SubParsersAction):
                stack.extend(action.choices.values())
            elif action.option_strings and action.nargs is None and not isinstance(
                    action, argparse._StoreConstAction | argparse._StoreTrueAction | argparse._VersionAction
                    | argparse._HelpAction | argparse._CountAction):
                options.update(action.option_strings)
    return options


def join_negative_values(argv: Sequence[str], parser: argparse.ArgumentParser) -> list[str]:
    """``--skew -5n`` -> ``--skew=-5n``: argparse would take a value starting with "-" for an option."""
    options = _value_options(parser)
    joined: list[str] = []
    k = 0
    while k < len(argv):
        token = argv[k]
        if token == "--":
            joined.extend(argv[k:])
            break
        if token in options and k + 1 < len(argv) and _NEGATIVE_VALUE.match(argv[k + 1]):
            joined.append(f"{token}={argv[k + 1]}")
            k += 2
            continue
        joined.append(token)
        k += 1
    return joined


def refuse_repeated_options(argv: Sequence[str], parser: argparse.ArgumentParser) -> None:
    """A single-value option given twice (``--shunt 1 --shunt 2``) is an error, not "the last one wins"."""
    commands = next((a for a in parser._actions if isinstance(a, argparse._SubParsersAction)), None)
    command = next((t for t in argv if commands is not None and t in commands.choices), None)
    if command is None:
        return
    actions = commands.choices[command]._option_string_actions
    seen: dict[str, str] = {}
    for token in argv:
        if token == "--":
            break
        if not token.startswith("--"):
            continue
        name = token.split("=", 1)[0]
        matches = [name] if name in actions else [o for o in actions if o.startswith(name)]
        action = actions[matches[0]] if len({id(actions[m]) for m in matches}) == 1 else None
        if action is None or type(action) is not argparse._StoreAction:
            continue
        if action.dest in seen:
            parser.error(f"{matches[0]} given twice ({seen[action.dest]} and {token}); give it once")
        seen[action.dest] = token


def _run(args) -> int:
    try:
        with progress.shown(progress.wanted(getattr(args, "quiet", False))):  # bars only on a terminal
            return args.handler(args)
    except RecursionError:
        raise ModelSyntaxError("input nested too deeply to follow; simplify it") from None


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code (also used by the ``fitz-tool`` console script).

    No Python warning reaches the user (what matters is in the report's warnings); running out of memory is
    one line; an unexpected error is one line asking for a report (``FITZ_TOOL_DEBUG=1`` shows the traceback).
    """
    parser = build_parser()
    argv = list(sys.argv[1:] if argv is None else argv)
    argv = join_negative_values(argv, parser)
    refuse_repeated_options(argv, parser)
    args = parser.parse_args(argv)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return _run(args)
    except FitzError as exc:
        print(f"fitz-tool: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except MemoryError:
        print("fitz-tool: error: out of memory; use fewer points (--band) or a smaller model",
              file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("fitz-tool: interrupted; no output written", file=sys.stderr)
        return 130
    except SystemExit as exc:  # outputs.atomic.Terminated on SIGTERM during the writes
        if exc.code == 143:
            print("fitz-tool: terminated; no output written", file=sys.stderr)
        raise
    except BrokenPipeError:
        # the reader of our output (e.g. `| head`) went away; nothing is wrong with the work done
        # (Python docs, "Note on SIGPIPE"): point stdout at devnull so the exit flush stays quiet.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except Exception as exc:  # noqa: BLE001 - the last guard: one line instead of a traceback
        if os.environ.get("FITZ_TOOL_DEBUG"):
            raise
        detail = (str(exc).strip().splitlines() or [""])[0][:200]
        print(f"fitz-tool: internal error: {type(exc).__name__}: {detail} (please report this with the input "
              f"file and command; FITZ_TOOL_DEBUG=1 shows the details)", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
