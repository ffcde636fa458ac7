"""Deciding which column fills which role, from the headers (``headers.py``) and the user's ``--map``.

Roles: ``frequency``, ``v_amplitude``, ``v_phase``, ``i_amplitude``, ``i_phase``, ``z_magnitude``,
``z_phase``, ``z_real``, ``z_imag``, ``ratio_magnitude``, ``ratio_phase``, and the LCR-meter readings
``c_series``, ``l_series``, ``c_parallel``, ``l_parallel``, ``r_series``, ``r_parallel``, ``dissipation``,
``quality`` (``lcr.py``; a resistance column such as ``Rs`` or ``R`` can be ``z_real`` or ``r_series``).
With voltage and current amplitudes, ``z_phase`` is the phase of V relative to I (only ever taken from
``--map`` or a header that names Z, because the sign of a bare "phase difference" column depends on the
instrument).

Rules, in order:

1. ``--map ROLE=HEADER`` (header as written, case and surrounding spaces ignored, or ``#N`` for the N-th
   column) wins and takes that column out of automatic recognition. ``--map ROLE='HEADER (UNIT)'`` also
   states the unit of a column whose header states none or one not understood.
2. Each header gives a role when its name and unit say it unambiguously. A lone magnitude that names no
   subject (``mag``, ``Magnitude``) beside a phase is |Z| in ohm when no column of the file names a voltage,
   current or ratio and its unit is not V, A or dB; this assumption is a warning.
3. A phase column that names no subject takes the subject of its channel (``Ch1 Phase`` beside
   ``Ch1 V(DUT)``); else, when every unpaired phase column directly follows an unpaired amplitude column, the
   two are paired; else, when only one family of amplitudes is present (|Z| or a ratio), it is its phase.
4. The first complete form of ``FORMS`` is used. Two columns that could fill one of its roles are refused
   with a ``--map`` hint; nothing is guessed.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from ..exceptions import InputError
from .forms import INPUT_FORMS
from .headers import LCR, HeaderInfo, parse_header, parse_unit

__all__ = ["ROLES", "FORMS", "UNCERTAINTY_ROLES", "ColumnPlan", "plan_columns"]

ROLES: tuple[str, ...] = ("frequency", "v_amplitude", "v_phase", "i_amplitude", "i_phase", "z_magnitude",
                          "z_phase", "z_real", "z_imag", "ratio_magnitude", "ratio_phase",
                          "c_series", "l_series", "c_parallel", "l_parallel", "r_series", "r_parallel",
                          "dissipation", "quality", "u_z_magnitude", "u_z_phase", "u_z_real", "u_z_imag")

#: Stated standard-uncertainty (k = 1) roles each form can take, with the kind of header they match.
UNCERTAINTY_ROLES: dict[str, dict[str, str]] = {
    "z_polar": {"u_z_magnitude": "amplitude", "u_z_phase": "phase"},
    "z_rect": {"u_z_real": "real", "u_z_imag": "imag"},
}

#: Forms in order of preference, with the roles each needs (from the one table of input forms).
FORMS: dict[str, tuple[str, ...]] = {name: form.roles for name, form in INPUT_FORMS.items()}
_MEANING = {"v_i_difference": " (z_phase: the phase of V relative to I)",
            "ratio": " (ratio: part voltage over reference-resistor voltage)"}
_PREFIX = {"voltage": "v", "current": "i", "impedance": "z", "ratio": "ratio"}
_AMPLITUDE = {"voltage": "v_amplitude", "current": "i_amplitude", "impedance": "z_magnitude",
              "ratio": "ratio_magnitude"}


@dataclass(frozen=True)
class ColumnPlan:
    """Which column fills each role of the chosen form.

    Attributes
    ----------
    form : str
        A key of ``FORMS``.
    columns : dict of str to HeaderInfo
        Role -> the column used for it.
    steps : tuple of str
        How the columns were chosen, in words (mapped, paired, not used).
    warnings : tuple of str
        Assumptions the user should know about (a bare magnitude taken as |Z|).
    """

    form: str
    columns: dict[str, HeaderInfo]
    steps: tuple[str, ...]
    warnings: tuple[str, ...] = ()


def _roles(info: HeaderInfo) -> tuple[str, ...]:
    """Roles a column could fill (a resistance can be the real part of Z or an LCR meter's Rs)."""
    if info.uncertainty:
        return ()
    if info.kind == "frequency":
        return ("frequency",)
    if info.kind in LCR.values():
        return (info.kind,)
    if info.subject is None:
        return ()
    if info.kind == "amplitude":
        return (_AMPLITUDE[info.subject],)
    if info.kind == "phase":
        return (f"{_PREFIX[info.subject]}_phase",)
    if info.subject == "impedance" and info.kind == "real":
        return ("z_real",) if info.negated else ("z_real", "r_series")
    if info.subject == "impedance" and info.kind == "imag":
        return ("z_imag",)
    return ()


def _bare_magnitude(infos: list[HeaderInfo], taken: set[int], steps: list[str],
                    warnings: list[str]) -> list[HeaderInfo]:
    """Take a lone subjectless magnitude as |Z| when nothing in the file names V, I or a ratio."""
    bare = [k for k, o in enumerate(infos) if o.kind == "amplitude" and o.subject is None and k not in taken]
    named = {o.subject for o in infos if o.subject is not None}
    phases = [o for o in infos if o.kind == "phase" and o.subject in (None, "impedance")]
    if len(bare) != 1 or named - {"impedance"} or not phases or infos[bare[0]].base not in ("", "ohm"):
        return infos
    if any(o.kind == "amplitude" and o.subject == "impedance" for o in infos):
        return infos
    k = bare[0]
    out = list(infos)
    out[k] = dataclasses.replace(infos[k], subject="impedance")
    steps.append(f"column {infos[k].header!r}: a magnitude naming no quantity, taken as |Z|")
    warnings.append(f"column {infos[k].header!r} names no quantity and no unit; read as |Z| in ohm (nothing "
                    f"in the file says voltage, current or ratio); if it is not, name it with --map")
    return out


def _find(headers: Sequence[str], wanted: str, role: str, where: str) -> int:
    text = wanted.strip()
    if text.startswith("#") and text[1:].isdigit():
        number = int(text[1:])
        if not 1 <= number <= len(headers):
            raise InputError(f"{where}: --map {role}={wanted}: the file has columns #1 to #{len(headers)}")
        return number - 1
    for exact in (True, False):
        hits = [k for k, h in enumerate(headers)
                if (h == wanted if exact else h.strip().casefold() == text.casefold())]
        if len(hits) == 1:
            return hits[0]
        if len(hits) > 1:
            raise InputError(f"{where}: --map {role}={wanted!r}: {len(hits)} columns have that header; name "
                             f"one by position instead, e.g. --map {role}=#{hits[0] + 1}")
    found = ", ".join(repr(h) for h in headers)
    raise InputError(f"{where}: --map {role}={wanted!r}: no such column; headers found: {found}")


_MAPPED_UNIT = re.compile(r"^(?P<header>.*\S)\s*[(\[](?P<unit>[^()\[\]]+)[)\]]\s*$")


def _find_mapped(headers: Sequence[str], infos: list[HeaderInfo], wanted: str, role: str,
                 where: str) -> tuple[HeaderInfo, str]:
    """The column ``--map ROLE=HEADER`` names, and the step in words.

    ``HEADER (UNIT)`` or ``#N [UNIT]`` names a column whose header states no unit, or one not understood
    (``--map frequency='Freq swept (kHz)'``), and states its unit; a header that states a unit keeps it.
    """
    try:
        index = _find(headers, wanted, role, where)
    except InputError as missing:
        match = _MAPPED_UNIT.match(wanted.strip())
        if match is None or parse_unit(match["unit"]) is None:
            raise
        try:
            index = _find(headers, match["header"], role, where)
        except InputError:
            raise missing from None
        info = infos[index]
        if info.unit_text and info.unit_known:
            raise InputError(f"{where}: --map {role}={wanted!r}: column {info.header!r} already states its "
                             f"unit {info.unit_text!r}; name it as written, --map {role}='{info.header}'"
                             ) from None
        stated = parse_header(f"{info.header} [{match['unit'].strip()}]", index)
        info = dataclasses.replace(stated, header=info.header, unit_known=True)
        return info, f"column {info.header!r} is {role} (--map), in {info.unit_text} as the --map states"
    return infos[index], f"column {headers[index]!r} is {role} (--map)"


def _resolve_phases(infos: list[HeaderInfo], taken: set[int], steps: list[str]) -> list[HeaderInfo]:
    """Give phase columns that name no subject the subject of their channel, neighbour or only family."""
    out = list(infos)
    for k, info in enumerate(out):
        if info.kind == "phase" and info.subject is None and info.group is not None:
            subjects = {o.subject for o in out if o.group == info.group and o.subject}
            if len(subjects) == 1:
                out[k] = dataclasses.replace(info, subject=subjects.pop())
                steps.append(f"column {info.header!r}: phase of channel {info.group.upper()} "
                             f"({out[k].subject})")
    pending = [k for k, o in enumerate(out) if o.kind == "phase" and o.subject is None and k not in taken]
    if not pending:
        return out
    phased = {o.subject for o in out if o.kind == "phase" and o.subject}
    unpaired = [k for k, o in enumerate(out) if o.kind == "amplitude" and o.subject not in phased
                and k not in taken]
    if len(pending) == len(unpaired) and all(k - 1 in unpaired for k in pending):
        for k in pending:
            out[k] = dataclasses.replace(out[k], subject=out[k - 1].subject)
            steps.append(f"column {out[k].header!r}: phase of the column before it, {out[k - 1].header!r}")
        return out
    families = {o.subject for k, o in enumerate(out) if o.kind == "amplitude" and k not in taken}
    if len(pending) == 1 and len(families) == 1 and families <= {"impedance", "ratio"}:
        k = pending[0]
        out[k] = dataclasses.replace(out[k], subject=families.pop())
        steps.append(f"column {out[k].header!r}: phase of the only amplitude family ({out[k].subject})")
    return out


def _hint(form: str, candidates: dict[str, list[HeaderInfo]], headers: Sequence[str],
          free: list[str]) -> str:
    used = {c[0].header for c in candidates.values() if len(c) == 1}
    spare = [h for h in dict.fromkeys(free) if h not in used]
    parts = []
    for role in FORMS[form]:
        if len(candidates.get(role, [])) != 1:
            fits = [h for h in spare if _fits(role, parse_header(h, 0))]
            if fits:
                spare.remove(fits[0])
            parts.append(f"--map {role}='{fits[0] if fits else 'HEADER'}'")
    return " ".join(parts)


def _fits(role: str, info: HeaderInfo) -> bool:
    """Whether a header could be meant for a role: it names no other subject and no other kind."""
    subject = {"v": "voltage", "i": "current", "z": "impedance", "ratio": "ratio"}.get(role.split("_")[0])
    kind = {"amplitude": "amplitude", "magnitude": "amplitude", "phase": "phase", "real": "real",
            "imag": "imag"}.get(role.rsplit("_", 1)[-1])
    if subject is None or kind is None:
        return info.kind in (None, role) and info.subject is None
    return info.subject in (None, subject) and info.kind in (None, kind)


def _uncertainty_columns(form: str, mapped: dict[str, HeaderInfo], stated: list[HeaderInfo], used: set[int],
                         steps: list[str], where: str) -> dict[str, HeaderInfo]:
    """The stated standard-uncertainty columns of the form (both of a pair, or none)."""
    wanted = UNCERTAINTY_ROLES.get(form, {})
    extra = [r for r in mapped if r.startswith("u_") and r not in wanted]
    if extra:
        allowed = " and ".join(" / ".join(roles) for roles in UNCERTAINTY_ROLES.values())
        raise InputError(f"{where}: --map {extra[0]}=...: this file is read as {form}, which takes the "
                         f"uncertainty roles {' / '.join(wanted) or 'none'}; uncertainty columns are read "
                         f"beside |Z| and phase or R and X ({allowed})")
    found: dict[str, HeaderInfo] = {}
    for role, kind in wanted.items():
        if role in mapped:
            found[role] = mapped[role]
            continue
        hits = [i for i in stated
                if i.kind == kind and i.subject in (None, "impedance") and i.index not in used]
        if len(hits) > 1:
            names = " and ".join(repr(i.header) for i in hits)
            raise InputError(f"{where}: columns {names} could both be {role}; name the one to use, e.g. "
                             f"--map {role}='{hits[0].header}'")
        if hits:
            found[role] = hits[0]
    if len(found) == 1:
        (role, info), = found.items()
        other = next(r for r in wanted if r not in found)
        raise InputError(f"{where}: column {info.header!r} states the uncertainty of one part only ({role}); "
                         f"give the other as well (--map {other}=HEADER) or leave both out")
    for role, info in found.items():
        steps.append(f"column {info.header!r} is {role}: a stated standard uncertainty (k = 1)"
                     f"{' (--map)' if role in mapped else ''}")
    return found


def plan_columns(headers: Sequence[str], column_map: Mapping[str, str], where: str) -> ColumnPlan:
    """Choose the form and the column for each of its roles.

    Parameters
    ----------
    headers : sequence of str
        Column headers as written in the file.
    column_map : mapping of str to str
        Role -> header (or ``#N``) from ``--map``.
    where : str
        File name for messages.

    Raises
    ------
    InputError
        Unknown role or header in ``column_map``, two columns for one role, or no complete form (the message
        lists the headers found and a ``--map`` line to try).
    """
    steps: list[str] = []
    infos = [parse_header(h, k) for k, h in enumerate(headers)]
    mapped: dict[str, HeaderInfo] = {}
    for role, wanted in column_map.items():
        if role not in ROLES:
            raise InputError(f"{where}: --map {role}=...: unknown role; roles are {', '.join(ROLES)}")
        info, step = _find_mapped(headers, infos, wanted, role, where)
        if any(m.index == info.index for m in mapped.values()):
            raise InputError(f"{where}: --map names column {info.header!r} for two roles")
        mapped[role] = info
        steps.append(step)
    taken = {m.index for m in mapped.values()}
    warnings: list[str] = []
    stated = [i for i in infos if i.uncertainty]
    infos = [dataclasses.replace(i, kind=None, subject=None) if i.uncertainty else i for i in infos]
    infos = _bare_magnitude(infos, taken, steps, warnings)
    infos = _resolve_phases(infos, taken, steps)
    candidates: dict[str, list[HeaderInfo]] = {role: [info] for role, info in mapped.items()}
    for info in infos:
        for role in _roles(info):
            if info.index not in taken and role not in mapped:
                candidates.setdefault(role, []).append(info)

    complete = [f for f, roles in FORMS.items() if all(candidates.get(r) for r in roles)]
    if not complete:
        missing = {f: sum(1 for r in roles if not candidates.get(r)) for f, roles in FORMS.items()}
        best = min(FORMS, key=lambda f: missing[f])
        free = [i.header for i in infos if i.index not in taken and not _roles(i)] + list(headers)
        found = ", ".join(repr(h) for h in headers)
        raise InputError(f"{where}: cannot tell which columns hold what (headers found: {found}); name them, "
                         f"e.g. {_hint(best, candidates, headers, free)}{_MEANING.get(best, '')}")
    form = complete[0]
    for role in FORMS[form]:
        if len(candidates[role]) > 1:
            names = " and ".join(repr(c.header) for c in candidates[role])
            raise InputError(f"{where}: columns {names} could both be {role}; name the one to use, e.g. "
                             f"--map {role}='{candidates[role][0].header}'")
    if len(complete) > 1:
        steps.append(f"the file also holds the form(s) {', '.join(complete[1:])}; used {form}")
    columns = {role: candidates[role][0] for role in FORMS[form]}
    columns.update(_uncertainty_columns(form, mapped, stated, {c.index for c in columns.values()} | taken,
                                        steps, where))
    return ColumnPlan(form=form, columns=columns, steps=tuple(steps), warnings=tuple(warnings))
