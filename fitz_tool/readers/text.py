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

import dataclasses
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
    noise_terms,
    refuse_unknown_unit,
    stated_sigmas,
    understood,
    unit_label,
)
from .headers import parse_header
from .options import ReadOptions
from .simulator import ComplexTable, find_simulator_table, vector_table
from .status import check_status
from .tail import describe, drop_rows, finish_rows

__all__ = ["read_delimited"]


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
    for role in UNCERTAINTY_NAMES:
        if role in values:
            bad = np.flatnonzero(~(values[role] > 0))
            if bad.size:
                raise InputError(f"{where}: line {lines[bad[0]]}, column {plan.columns[role].header!r}: a "
                                 f"stated standard uncertainty must be above 0; correct that row")


UNCERTAINTY_NAMES = ("u_z_magnitude", "u_z_phase", "u_z_real", "u_z_imag")


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
    drop_rows(keep, status.bad, f"marked as not valid in the status column {status.status_header!r}", lines,
          warnings)
    numbers = {role: numeric_column(table, info.index, where, keep) for role, info in plan.columns.items()}
    values, convert_steps, convert_warnings = convert_columns(plan, numbers, where, options.dbm_reference)
    steps += convert_steps
    warnings += convert_warnings

    missing = np.zeros(lines.size, dtype=bool)
    for array in values.values():
        missing |= ~np.isfinite(array)
    drop_rows(keep, missing, "with missing or no-reading cells", lines, warnings)
    _refuse({r: v[keep] for r, v in values.items()}, plan, lines[keep], where)
    drop_rows(keep, values["frequency"] == 0, "at 0 Hz (a DC point has no phase)", lines, warnings)
    if "i_amplitude" in values:
        drop_rows(keep, values["i_amplitude"] == 0, "with zero current (Z = V/I undefined)", lines,
                  warnings)
    kept = {r: v[keep] for r, v in values.items()}
    z_kept, form, z_steps, z_warnings = build_impedance(plan, kept, shunt, reference, where)
    steps += z_steps
    warnings += z_warnings
    z = np.full(lines.size, np.nan, dtype=complex)
    z[keep] = z_kept
    stated = stated_sigmas(plan, kept, z_kept)
    terms = () if stated is not None else noise_terms(form, kept, shunt)
    carried = []
    for per_point in ([*stated[:2]] if stated is not None else [t.coefficient for t in terms]):
        row = np.full(lines.size, np.nan)
        row[keep] = per_point
        carried.append(row)
    if stated is not None:
        steps.append(stated[2])
    frequency, z, carried = finish_rows(values["frequency"], z, lines, keep, steps, warnings, where,
                                        tuple(carried))
    sigmas = carried if stated is not None else None
    provenance = Provenance(
        source=where,
        sha256=hashlib.sha256(raw).hexdigest(),
        form=form,
        columns={role: info.header for role, info in plan.columns.items()},
        units={role: unit_label(role, info) for role, info in plan.columns.items()},
        steps=tuple(steps),
        warnings=tuple(warnings),
        ignored_columns=status.ignored,
        description=describe(form, shunt, reference, stated is not None),
    )
    return Measurement(frequency=frequency, impedance=z, provenance=provenance,
                       sigma_lnmag=None if sigmas is None else sigmas[0],
                       sigma_phase=None if sigmas is None else sigmas[1], sigma_absolute=sigmas is not None,
                       noise_terms=() if sigmas is not None else tuple(
                           dataclasses.replace(t, coefficient=c)
                           for t, c in zip(terms, carried, strict=True)))


def _simulator_measurement(table: ComplexTable, raw: bytes, path: Path, column_map: dict[str, str],
                           shunt: float | None, reference: float | None) -> Measurement:
    """A Measurement from a simulator export with complex cells (form ``simulator_complex``)."""
    where = str(path)
    frequency, z, lines, columns, units, steps, warnings = _from_simulator(table, column_map, shunt,
                                                                           reference, path.name, where)
    keep = np.ones(lines.size, dtype=bool)
    drop_rows(keep, np.isnan(frequency) | np.isnan(z), "with missing cells", lines, warnings)
    negative = np.flatnonzero(keep & (frequency < 0))
    if negative.size:
        raise InputError(f"{where}: line {lines[negative[0]]}, column {table.frequency_header!r}: negative "
                         f"frequency; correct that row")
    f, z, _ = finish_rows(frequency, z, lines, keep, steps, warnings, where)
    provenance = Provenance(source=where, sha256=hashlib.sha256(raw).hexdigest(), form="simulator_complex",
                            columns=columns, units=units, steps=tuple(steps), warnings=tuple(warnings),
                            description=describe("simulator_complex", shunt, reference, False, columns))
    return Measurement(frequency=f, impedance=z, provenance=provenance)
