"""The delimited-text reader: bytes -> table -> columns -> impedance -> a clean, sorted Measurement.

Bad data, as a user expects it (never silent: every drop is counted in ``Provenance.warnings``):

=====================================================  =======================================================
case                                                   handling
=====================================================  =======================================================
missing cell or no-reading marker in a used column     row dropped, counted
text that is not a number in a used column             error naming line and column
frequency 0 Hz (a DC point)                            row dropped, counted
negative frequency or negative amplitude/|Z|/ratio     error naming line and column
current (or shunt voltage) of zero                     row dropped, counted (Z undefined)
|Z| = 0                                                row dropped, counted (no phase, no log)
rows out of order                                      sorted by frequency, recorded in the steps
repeated frequency with the same impedance             repeat dropped, counted
repeated frequency with a different impedance          error naming both lines
=====================================================  =======================================================
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np

from ..exceptions import InputError
from ..limits import check_line_lengths
from ..measurement import Measurement, Provenance
from ..units import prefix_factor
from .columns import plan_columns
from .complex_form import complex_to_impedance
from .delimited import decode_bytes, numeric_column, split_table
from .forms import (
    AMPLITUDE_ROLES,
    build_impedance,
    convert_columns,
    refuse_unknown_unit,
    understood,
    unit_label,
)
from .headers import parse_header
from .options import ReadOptions
from .simulator import ComplexTable, find_simulator_table, vector_table
from .status import check_status

__all__ = ["read_delimited"]


def _lines(lines: np.ndarray, mask: np.ndarray) -> str:
    picked = [str(n) for n in lines[mask][:5]]
    return ", ".join(picked) + ("..." if int(mask.sum()) > 5 else "")


def _refuse(values: dict[str, np.ndarray], plan, lines: np.ndarray, where: str) -> None:
    """Raise for values no instrument writes: negative frequency or a negative amplitude."""
    for role in ("frequency", *AMPLITUDE_ROLES):
        if role not in values or (role == "ratio_magnitude" and plan.columns[role].base == "dB"):
            continue
        bad = np.flatnonzero(values[role] < 0)
        if bad.size:
            k = bad[0]
            what = "frequency" if role == "frequency" else "an amplitude"
            header = plan.columns[role].header
            raise InputError(f"{where}: line {lines[k]}, column {header!r}: negative value "
                             f"for {what}; check the column (--map) or correct that row")


def _drop(keep: np.ndarray, mask: np.ndarray, reason: str, lines: np.ndarray, warnings: list[str]) -> None:
    hit = mask & keep
    if hit.any():
        warnings.append(f"dropped {int(hit.sum())} row(s) {reason} (line(s) {_lines(lines, hit)})")
        keep &= ~hit


def _order_and_dedupe(f: np.ndarray, z: np.ndarray, lines: np.ndarray, steps: list[str],
                      warnings: list[str], where: str) -> tuple[np.ndarray, np.ndarray]:
    order = np.argsort(f, kind="stable")
    if np.any(np.diff(f) < 0):
        how = "descending" if np.all(np.diff(f) <= 0) else "no"
        steps.append(f"sorted {f.size} rows by frequency (the file lists them in {how} order)")
    f, z, lines = f[order], z[order], lines[order]
    repeat = np.concatenate([[False], np.diff(f) == 0])
    for k in np.flatnonzero(repeat):
        if not np.isclose(z[k], z[k - 1], rtol=1e-12, atol=0.0):
            raise InputError(f"{where}: lines {lines[k - 1]} and {lines[k]} are both at {f[k]:g} Hz with "
                             f"different readings; delete one of them")
    if repeat.any():
        warnings.append(f"dropped {int(repeat.sum())} repeated row(s) with the same frequency and reading "
                        f"(line(s) {_lines(lines, repeat)})")
    return f[~repeat], z[~repeat]


def _from_simulator(table: ComplexTable, column_map: dict[str, str], shunt: float | None,
                    reference: float | None, name: str, where: str):
    """Frequency (Hz), Z (ohm), lines, form, columns, units, steps, warnings of a simulator export."""
    lines = np.asarray(table.lines)
    steps = [f"read {name}: {table.layout}; frequency {table.frequency_header!r}, complex columns "
             f"{list(table.headers)}; {lines.size} data rows (lines {lines.min()}-{lines.max()})",
             *table.notes]
    info = parse_header(table.frequency_header, 0)
    if info.kind != "frequency" and "frequency" not in column_map:
        raise InputError(f"{where}: the first column {table.frequency_header!r} does not read as frequency; "
                         f"if it is, pass --map frequency='{table.frequency_header}'")
    refuse_unknown_unit("frequency", info, where)
    if info.base not in ("", "Hz", "rad/s"):
        raise InputError(f"{where}: column {table.frequency_header!r} is in {info.unit_text!r}, which is "
                         f"not a frequency unit ({understood('frequency')})")
    factor = prefix_factor(info.prefix) / (2 * np.pi if info.base == "rad/s" else 1.0)
    frequency = table.frequency * factor
    steps.append(f"frequency from {table.frequency_header!r}: in {info.unit_text or 'Hz (assumed)'}"
                 f"{f' (x {factor:g})' if factor != 1 else ''}")
    z, columns, units, z_steps, warnings = complex_to_impedance(table, column_map, where, shunt)
    steps += z_steps
    warnings = [*table.warnings, *warnings]
    if reference is not None:
        warnings.append(f"--reference {reference:g} ignored: the file holds complex impedance or V and I")
    columns = {"frequency": table.frequency_header, **columns}
    units = {"frequency": info.unit_text or "Hz (assumed)", **units}
    return frequency, z, lines, columns, units, steps, warnings


def read_delimited(path: str | Path, options: ReadOptions | None = None) -> Measurement:
    """Read a delimited text export (any of the five forms) into a Measurement.

    Parameters
    ----------
    path : str or Path
        The bench file; never modified.
    options : ReadOptions or None
        ``shunt`` (ohm, needed when the current column is a voltage), ``reference`` (ohm, for a
        transfer-ratio file), ``column_map`` (role -> header or ``#N``) and ``dbm_reference`` (ohm, for
        levels in dBm).

    Returns
    -------
    Measurement
        Frequency in Hz (ascending, unique), impedance in ohm, no sigmas (all conversions are
        multiplicative), provenance with file, sha256, form, columns, units, steps and warnings.

    Raises
    ------
    InputError
        Unreadable file, unrecognized or ambiguous columns, bad cells (line and column named), missing
        ``--shunt``/``--reference``, or no usable row.
    """
    options = options if options is not None else ReadOptions()
    shunt, reference, column_map = options.shunt, options.reference, dict(options.column_map)
    path = Path(path)
    where = str(path)
    if options.dbm_reference is not None and not (np.isfinite(options.dbm_reference)
                                                  and options.dbm_reference > 0):
        raise InputError(f"{where}: --dbm-reference {options.dbm_reference!r}: must be an impedance above 0 "
                         f"ohm, e.g. 50")
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"{where}: cannot read the file ({exc.strerror or exc})") from None
    text, encoding = decode_bytes(raw, where)
    check_line_lengths(text, where)
    simulator = find_simulator_table(text, where)
    if simulator is not None:
        return _simulator_measurement(simulator, raw, path, column_map or {}, shunt, reference)
    table = split_table(text, encoding, where, headerless=bool(column_map))
    if not table.rows:
        raise InputError(f"{where}: the table below the header has no rows")
    vectors = vector_table(table, where)
    if vectors is not None:
        return _simulator_measurement(vectors, raw, path, column_map or {}, shunt, reference)
    column_map = dict(column_map or {})
    status_header = column_map.pop("status", None)
    plan = plan_columns(table.headers, column_map, where)
    lines = np.asarray(table.lines)
    first, last = int(lines.min()), int(lines.max())
    steps = [f"read {path.name}: {table.describe()}; header {list(table.headers)}; {len(lines)} data rows "
             f"(lines {first}-{last})", *table.notes, *plan.steps]
    status = check_status(table, {info.index for info in plan.columns.values()}, status_header, where)
    steps += status.steps
    keep = np.ones(lines.size, dtype=bool)
    warnings = [*plan.warnings, *status.warnings]
    _drop(keep, status.bad, f"marked as not valid in the status column {status.status_header!r}", lines,
          warnings)
    numbers = {role: numeric_column(table, info.index, where, keep) for role, info in plan.columns.items()}
    values, convert_steps, convert_warnings = convert_columns(plan, numbers, where, options.dbm_reference)
    steps += convert_steps
    warnings += convert_warnings

    missing = np.zeros(lines.size, dtype=bool)
    for array in values.values():
        missing |= ~np.isfinite(array)
    _drop(keep, missing, "with missing or no-reading cells", lines, warnings)
    _refuse({r: v[keep] for r, v in values.items()}, plan, lines[keep], where)
    _drop(keep, values["frequency"] == 0, "at 0 Hz (a DC point has no phase)", lines, warnings)
    if "i_amplitude" in values:
        _drop(keep, values["i_amplitude"] == 0, "with zero current (Z = V/I undefined)", lines, warnings)
    z, form, z_steps, z_warnings = build_impedance(plan, {r: v[keep] for r, v in values.items()}, shunt,
                                                   reference, where)
    steps += z_steps
    warnings += z_warnings
    undefined = np.zeros(lines.size, dtype=bool)
    undefined[np.flatnonzero(keep)[~np.isfinite(z)]] = True
    _drop(keep, undefined, "where the impedance is undefined (a reading of 0 divides)", lines, warnings)
    z = z[np.isfinite(z)]
    frequency, kept_lines = values["frequency"][keep], lines[keep]
    zero = np.zeros(lines.size, dtype=bool)
    zero[np.flatnonzero(keep)[z == 0]] = True
    _drop(keep, zero, "with |Z| = 0 (no phase, no logarithm)", lines, warnings)
    z, frequency, kept_lines = z[z != 0], frequency[z != 0], kept_lines[z != 0]
    if frequency.size == 0:
        raise InputError(f"{where}: no usable row left ({'; '.join(warnings)})")
    frequency, z = _order_and_dedupe(frequency, z, kept_lines, steps, warnings, where)
    provenance = Provenance(
        source=where,
        sha256=hashlib.sha256(raw).hexdigest(),
        form=form,
        columns={role: info.header for role, info in plan.columns.items()},
        units={role: unit_label(role, info) for role, info in plan.columns.items()},
        steps=tuple(steps),
        warnings=tuple(warnings),
        ignored_columns=status.ignored,
    )
    return Measurement(frequency=frequency, impedance=z, provenance=provenance)


def _simulator_measurement(table: ComplexTable, raw: bytes, path: Path, column_map: dict[str, str],
                           shunt: float | None, reference: float | None) -> Measurement:
    """A Measurement from a simulator export with complex cells (form ``simulator_complex``)."""
    where = str(path)
    frequency, z, lines, columns, units, steps, warnings = _from_simulator(table, column_map, shunt,
                                                                           reference, path.name, where)
    keep = np.ones(lines.size, dtype=bool)
    _drop(keep, np.isnan(frequency) | np.isnan(z), "with missing cells", lines, warnings)
    negative = np.flatnonzero(keep & (frequency < 0))
    if negative.size:
        raise InputError(f"{where}: line {lines[negative[0]]}, column {table.frequency_header!r}: negative "
                         f"frequency; correct that row")
    _drop(keep, frequency == 0, "at 0 Hz (a DC point has no phase)", lines, warnings)
    _drop(keep, ~np.isfinite(z), "where the impedance is undefined (zero current)", lines, warnings)
    _drop(keep, z == 0, "with |Z| = 0 (no phase, no logarithm)", lines, warnings)
    if not keep.any():
        raise InputError(f"{where}: no usable row left ({'; '.join(warnings)})")
    f, z = _order_and_dedupe(frequency[keep], z[keep], lines[keep], steps, warnings, where)
    provenance = Provenance(source=where, sha256=hashlib.sha256(raw).hexdigest(), form="simulator_complex",
                            columns=columns, units=units, steps=tuple(steps), warnings=tuple(warnings))
    return Measurement(frequency=f, impedance=z, provenance=provenance)
