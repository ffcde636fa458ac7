"""Impedance from the complex columns of a simulator export (``simulator.py``).

Roles (for ``--map``): ``z_complex`` (a complex impedance column, ohm), ``v_complex`` (the voltage across the
part, V) and ``i_complex`` (the current through it, A); ``frequency`` may name the frequency column.

Rules, in order:

1. ``--map z_complex=HEADER``, or ``--map v_complex=... --map i_complex=...``, wins.
2. One column whose name is an impedance (``Z``, ``Z(...)``, ``Impedance``, or a voltage over a current,
   ``V(n001)/I(V1)``, ``v(p)/(-i(v1))``) is Z.
3. Otherwise one voltage column (``V(a)``, ``V(a,b)``, ``V(a)-V(b)``) and one current column (``I(R1)``,
   ``Ix(U1:A)``) give Z = V / I.
4. Two voltages and ``--shunt``: the one whose node name reads as a shunt or sense resistor (``sh``,
   ``shunt``, ``sense``, ``rs``, ``cur``, ``i_...``) is I * R_shunt, the other the part voltage.
5. Anything else (a voltage alone, two voltages with no ``--shunt`` or no single shunt-like node) is refused
   with a ``--map`` line to try. For a table of ngspice vector columns, ``v_amplitude``/``v_phase`` and
   ``i_amplitude``/``i_phase`` may name any file column of a vector (``--map i_amplitude='vm(sh)'``).

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
_CURRENT = re.compile(r"^[-(\s]*(?:i\w*\(.*\)|@[^\[\]\s]+\[i\])$", re.IGNORECASE)
_SHUNT_NODE = re.compile(r"^(?:v\()?(?:i_\w*|(?:sh|shunt|rsh|sense|rsense|isense|rs|cur|curr|current)"
                         r"\d*)\)?$", re.IGNORECASE)
_ALIASES = {"v_amplitude": "v_complex", "v_phase": "v_complex", "i_amplitude": "i_complex",
            "i_phase": "i_complex"}
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
    if not hits and table.sources:
        hits = [k for k, cols in enumerate(table.sources)
                if any(c.strip().casefold() == text.casefold() for c in cols)]
    if len(hits) != 1:
        found = ", ".join(repr(h) for h in table.headers)
        raise InputError(f"{where}: --map {role}={wanted!r}: no single complex column of that name; complex "
                         f"columns found: {found}")
    return hits[0]


def _shunt_hint(table: ComplexTable, part: int, sense: int) -> str:
    def name(k: int) -> str:
        return table.sources[k][0] if table.sources else table.headers[k]
    role_v, role_i = ("v_amplitude", "i_amplitude") if table.sources else ("v_complex", "i_complex")
    return f"--shunt OHMS --map {role_v}='{name(part)}' --map {role_i}='{name(sense)}'"


def _choose(table: ComplexTable, column_map: Mapping[str, str], shunt: float | None,
            where: str) -> tuple[dict[str, int], list[str]]:
    aliases = _ALIASES if table.sources else {}
    for role in column_map:
        if role not in COMPLEX_ROLES and role not in aliases:
            raise InputError(f"{where}: --map {role}=...: this file holds complex columns; roles are "
                             f"{', '.join((*COMPLEX_ROLES, *aliases))}")
    mapped: dict[str, int] = {}
    for r, h in column_map.items():
        if r == "frequency":
            continue
        role, k = aliases.get(r, r), _find(table, r, h, where)
        if mapped.get(role, k) != k:
            raise InputError(f"{where}: --map names two different vectors for {role} "
                             f"({table.headers[mapped[role]]} and {table.headers[k]})")
        mapped[role] = k
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
    if len(volts) == 2 and not amps:
        sense = [k for k in volts if _SHUNT_NODE.match(table.headers[k].strip())]
        if shunt is not None and len(sense) == 1:
            part = volts[0] if sense[0] == volts[1] else volts[1]
            return {"v_complex": part, "i_complex": sense[0]}, [
                f"columns {table.headers[part]!r} (part voltage) and {table.headers[sense[0]]!r} (shunt "
                f"voltage: its node name reads as a shunt or sense resistor)"]
        a, b = (volts[1], volts[0]) if sense == [volts[0]] else (volts[0], volts[1])
        why = ("no --shunt was given" if shunt is None else
               "neither node name reads as a shunt or sense resistor" if not sense else
               "both node names read as a shunt or sense resistor")
        raise InputError(f"{where}: two voltages, {table.headers[a]} and {table.headers[b]}, and {why}; if "
                         f"one is across a series shunt, say which: {_shunt_hint(table, a, b)} (or the "
                         f"other way round: {_shunt_hint(table, b, a)})")
    first = table.headers[volts[0]] if volts else table.headers[0]
    if len(volts) == 1 and not amps:
        raise InputError(f"{where}: column {first!r} is a voltage and no current is given, so it is not "
                         f"impedance by itself; if it is (the part driven by a 1 A AC current source), "
                         f"--map z_complex='{first}'; otherwise export V/I, e.g. {first}/I(V1)")
    raise InputError(f"{where}: cannot tell which complex columns give the impedance (found: {found}); name "
                     f"them, e.g. --map z_complex='{first}' or --map v_complex='{first}' --map i_complex=...")


def complex_to_impedance(table: ComplexTable, column_map: Mapping[str, str], where: str,
                         shunt: float | None = None
                         ) -> tuple[np.ndarray, dict[str, str], dict[str, str], list[str], list[str]]:
    """Impedance in ohm from a simulator table; returns (Z, role -> header, role -> unit, steps, warnings).

    ``shunt`` (ohm) turns a voltage in the ``i_complex`` role into the current V_shunt / R_shunt.

    Z is NaN where a used cell is missing and non-finite where the current is 0 (the caller drops both).

    Raises
    ------
    InputError
        Unknown ``--map`` role or column, or columns that do not say which is the impedance.
    """
    chosen, steps = _choose(table, column_map, shunt, where)
    columns = {role: table.headers[k] for role, k in chosen.items()}
    units = {"z_complex": "ohm", "v_complex": "V", "i_complex": "A"}
    warnings: list[str] = []
    used_shunt = False
    if "z_complex" in chosen:
        z = table.columns[chosen["z_complex"]].copy()
        steps.append(f"Z from {columns['z_complex']!r} (ohm)")
    else:
        current = table.columns[chosen["i_complex"]]
        if _kind(columns["i_complex"]) == "voltage":
            if shunt is None:
                raise InputError(f"{where}: {columns['i_complex']} is a voltage, so the current was taken "
                                 f"across a shunt: pass --shunt OHMS (its resistance)")
            if not (np.isfinite(shunt) and shunt > 0):
                raise InputError(f"{where}: --shunt {shunt!r}: must be a resistance above 0 ohm")
            current, used_shunt = current / shunt, True
            units["i_complex"] = f"V (across the {shunt:g} ohm shunt)"
            steps.append(f"current = {columns['i_complex']} / {shunt:g} ohm (--shunt)")
        with np.errstate(divide="ignore", invalid="ignore"):
            z = table.columns[chosen["v_complex"]] / current
        steps.append(f"Z = V / I = {columns['v_complex']} / {columns['i_complex']}"
                     f"{' * R_shunt' if used_shunt else ''} (V, A)")
    if shunt is not None and not used_shunt:
        warnings.append(f"--shunt {shunt:g} ignored: the file holds complex impedance or V and I")
    finite = np.isfinite(z) & (z != 0)
    if finite.any() and np.all(z.real[finite] < -1e-9 * np.abs(z[finite])):
        z = -z
        steps.append("Z negated: Re Z < 0 at every point, so the current was counted the other way round")
        warnings.append(f"the impedance from {', '.join(repr(h) for h in columns.values())} had Re Z < 0 at "
                        f"every point, impossible for a passive part: the current runs the other way (a "
                        f"simulator counts a source's current into its + terminal), so Z was negated")
    return z, columns, {r: units[r] for r in columns}, steps, warnings
