"""Impedance from the complex columns of a simulator export (``simulator.py``).

Roles (for ``--map``): ``z_complex`` (a complex impedance column, ohm), ``v_complex`` (the voltage across the
part, V) and ``i_complex`` (the current through it, A); ``frequency`` may name the frequency column.

Rules, in order:

1. ``--map z_complex=HEADER``, or ``--map v_complex=... --map i_complex=...``, wins.
2. One column whose name is an impedance (``Z``, ``Z(...)``, ``Impedance``, or a voltage over a current,
   ``V(n001)/I(V1)``, ``v(p)/(-i(v1))``) is Z.
3. Otherwise one voltage column (``V(a)``, ``V(a,b)``, ``V(a)-V(b)``) and one current column (``I(R1)``,
   ``Ix(U1:A)``) give Z = V / I.
4. Anything else (a voltage alone, several voltages) is refused with a ``--map`` line to try.

Sign: a simulator counts a source's current into its + terminal, so V / I(source) of a part driven by that
source comes out as -Z. A passive part has Re Z >= 0, so when Re Z < 0 at every point the current was taken
the other way round: Z is negated, and that is a step and a warning.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

import numpy as np

from ..exceptions import InputError
from .simulator import ComplexTable

__all__ = ["COMPLEX_ROLES", "complex_to_impedance"]

COMPLEX_ROLES = ("frequency", "z_complex", "v_complex", "i_complex")
_VOLTAGE = re.compile(r"^[-(\s]*[vu]\w*\(.*\)$", re.IGNORECASE)
_CURRENT = re.compile(r"^[-(\s]*i\w*\(.*\)$", re.IGNORECASE)
_IMPEDANCE = re.compile(r"^[-(\s]*(?:z|impedance|z\(.*\))[)\s]*$", re.IGNORECASE)


def _kind(name: str) -> str | None:
    """``"impedance"``, ``"voltage"``, ``"current"`` or None, from a simulator vector name."""
    text = name.strip()
    if _IMPEDANCE.match(text):
        return "impedance"
    if "/" in text:
        top, bottom = text.split("/", 1)
        return "impedance" if _VOLTAGE.match(top.strip()) and _CURRENT.match(bottom.strip()) else None
    if _VOLTAGE.match(text):
        return "voltage"
    if _CURRENT.match(text):
        return "current"
    return None


def _find(table: ComplexTable, role: str, wanted: str, where: str) -> int:
    text = wanted.strip()
    if text.startswith("#") and text[1:].isdigit() and 2 <= int(text[1:]) <= len(table.headers) + 1:
        return int(text[1:]) - 2  # #1 is the frequency column
    hits = [k for k, h in enumerate(table.headers) if h.strip().casefold() == text.casefold()]
    if len(hits) != 1:
        found = ", ".join(repr(h) for h in table.headers)
        raise InputError(f"{where}: --map {role}={wanted!r}: no single complex column of that name; complex "
                         f"columns found: {found}")
    return hits[0]


def _choose(table: ComplexTable, column_map: Mapping[str, str],
            where: str) -> tuple[dict[str, int], list[str]]:
    for role in column_map:
        if role not in COMPLEX_ROLES:
            raise InputError(f"{where}: --map {role}=...: this file holds complex columns; roles are "
                             f"{', '.join(COMPLEX_ROLES)}")
    mapped = {r: _find(table, r, h, where) for r, h in column_map.items() if r != "frequency"}
    if "z_complex" in mapped:
        return {"z_complex": mapped["z_complex"]}, ["column chosen by --map z_complex"]
    if "v_complex" in mapped and "i_complex" in mapped:
        return mapped, ["columns chosen by --map v_complex and i_complex"]
    kinds = [_kind(h) for h in table.headers]
    found = ", ".join(repr(h) for h in table.headers)
    impedances = [k for k, kind in enumerate(kinds) if kind == "impedance"]
    if len(impedances) == 1:
        return {"z_complex": impedances[0]}, [f"column {table.headers[impedances[0]]!r} names an impedance"]
    if len(impedances) > 1:
        raise InputError(f"{where}: several impedance columns ({found}); name one, e.g. "
                         f"--map z_complex='{table.headers[impedances[0]]}'")
    volts = ([mapped["v_complex"]] if "v_complex" in mapped
             else [k for k, x in enumerate(kinds) if x == "voltage"])
    amps = ([mapped["i_complex"]] if "i_complex" in mapped
            else [k for k, x in enumerate(kinds) if x == "current"])
    if len(volts) == 1 and len(amps) == 1:
        return {"v_complex": volts[0], "i_complex": amps[0]}, [
            f"columns {table.headers[volts[0]]!r} (voltage) and {table.headers[amps[0]]!r} (current)"]
    first = table.headers[volts[0]] if volts else table.headers[0]
    if len(volts) == 1 and not amps:
        raise InputError(f"{where}: column {first!r} is a voltage and no current is given, so it is not "
                         f"impedance by itself; if it is (the part driven by a 1 A AC current source), "
                         f"--map z_complex='{first}'; otherwise export V/I, e.g. {first}/I(V1)")
    raise InputError(f"{where}: cannot tell which complex columns give the impedance (found: {found}); name "
                     f"them, e.g. --map z_complex='{first}' or --map v_complex='{first}' --map i_complex=...")


def complex_to_impedance(table: ComplexTable, column_map: Mapping[str, str],
                         where: str) -> tuple[np.ndarray, dict[str, str], list[str], list[str]]:
    """Impedance in ohm from a simulator table; returns (Z, role -> header, steps, warnings).

    Z is NaN where a used cell is missing and non-finite where the current is 0 (the caller drops both).

    Raises
    ------
    InputError
        Unknown ``--map`` role or column, or columns that do not say which is the impedance.
    """
    chosen, steps = _choose(table, column_map, where)
    columns = {role: table.headers[k] for role, k in chosen.items()}
    warnings: list[str] = []
    if "z_complex" in chosen:
        z = table.columns[chosen["z_complex"]].copy()
        steps.append(f"Z from {columns['z_complex']!r} (ohm)")
    else:
        with np.errstate(divide="ignore", invalid="ignore"):
            z = table.columns[chosen["v_complex"]] / table.columns[chosen["i_complex"]]
        steps.append(f"Z = V / I = {columns['v_complex']} / {columns['i_complex']} (V, A)")
    finite = np.isfinite(z) & (z != 0)
    if finite.any() and np.all(z.real[finite] < -1e-9 * np.abs(z[finite])):
        z = -z
        steps.append("Z negated: Re Z < 0 at every point, so the current was counted the other way round")
        warnings.append(f"the impedance from {', '.join(repr(h) for h in columns.values())} had Re Z < 0 at "
                        f"every point, impossible for a passive part: the current runs the other way (a "
                        f"simulator counts a source's current into its + terminal), so Z was negated")
    return z, columns, steps, warnings
