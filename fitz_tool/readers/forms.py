"""From the recognized columns to impedance: units to SI, amplitudes to peak, phases to rad, then Z.

Every input form is one entry of ``INPUT_FORMS`` (roles it needs, converter, what was read in words); the
column planner takes its forms from that table and ``build_impedance`` only looks the plan's form up in it.
The forms (e^{+jwt}, Z = V / I, positive phase inductive):

==================  =====================================  ==================================================
form                columns                                impedance
==================  =====================================  ==================================================
``v_i_phasors``     V, phase V, I (A), phase I             Z = (V_pk / I_pk) e^{j (phi_V - phi_I)}
``v_shunt``         V, phase V, V_shunt, phase V_shunt     I = V_shunt / R_shunt (``--shunt``), then as above
``z_polar``         |Z|, phase                             Z = |Z| e^{j phi}
``z_rect``          R, X                                   Z = R + j X
``ratio``           H = V_part / V_ref (dB or linear),     Z = R_ref H (``--reference``): the reference
                    phase of H                             resistor carries the part's current
==================  =====================================  ==================================================

With V and I amplitudes and one ``z_phase`` column (phase of V relative to I), Z = (V_pk / I_pk) e^{j phi}.
LCR-meter pairs (Cs-Rs, Ls-Q, Cp-D, ...) go through ``lcr.py``. A |Z| in dB re 1 ohm (``dBohm``) is
|Z| = 10^(dB/20) ohm (common practice, no source).
All conversions are multiplicative (prefix factors, convention factors, 1/R_shunt, R_ref), so relative
amplitude noise and absolute phase noise pass through unchanged and no per-point sigma is attached.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..exceptions import InputError
from ..measurement import NoiseTerm
from ..phasor import db_to_linear, phase_to_radians, phasors_to_impedance, polar_to_complex, to_peak
from ..units import prefix_factor, read_unit
from .headers import HeaderInfo
from .lcr import LCR_FORMS, lcr_to_impedance

if TYPE_CHECKING:
    from .columns import ColumnPlan

__all__ = ["AMPLITUDE_ROLES", "VOLTAGE_BASES", "unit_label", "understood", "refuse_unknown_unit",
           "convert_columns", "InputForm", "INPUT_FORMS", "SHUNT_FORM", "OTHER_FORMS", "form_words",
           "build_impedance", "stated_sigmas", "noise_terms"]

#: Roles whose values are magnitudes (never negative).
AMPLITUDE_ROLES = ("v_amplitude", "i_amplitude", "z_magnitude", "ratio_magnitude")
_SI = {"frequency": ("Hz", "rad/s"), "v_amplitude": ("V", "dBV", "dBm"),
       "i_amplitude": ("A", "dBA", "V", "dBV", "dBm"),
       "z_magnitude": ("ohm", "dBohm"), "z_real": ("ohm",), "z_imag": ("ohm",), "ratio_magnitude": ("dB",),
       "c_series": ("F",),
       "c_parallel": ("F",), "l_series": ("H",), "l_parallel": ("H",), "r_series": ("ohm",),
       "r_parallel": ("ohm",), "dissipation": ("", "%"), "quality": ("",),
       "u_z_magnitude": ("ohm", "%"), "u_z_real": ("ohm", "%"), "u_z_imag": ("ohm", "%")}
_ASSUMED = {"frequency": "Hz", "v_amplitude": "V", "i_amplitude": "A", "z_magnitude": "ohm", "z_real": "ohm",
            "z_imag": "ohm", "ratio_magnitude": "V/V", "c_series": "F", "c_parallel": "F", "l_series": "H",
            "l_parallel": "H", "r_series": "ohm", "r_parallel": "ohm", "dissipation": "1", "quality": "1",
            "u_z_magnitude": "ohm", "u_z_real": "ohm", "u_z_imag": "ohm"}
_CONVENTION_WORDS = {"peak": "peak", "rms": "rms", "pp": "peak-to-peak"}
#: The units understood for each role, in words (for the refusal of a unit not understood).
UNDERSTOOD = {
    "frequency": "Hz, kHz, MHz, GHz (any SI prefix) or rad/s",
    "phase": "deg (or °) or rad",
    "v_amplitude": "V, mV, uV (any SI prefix) with pk, pp or rms; dBV, dBmV, dBuV; dBm (with "
                   "--dbm-reference)",
    "i_amplitude": "A, mA, uA (any SI prefix) with pk, pp or rms; dBA, dBmA, dBuA; or a shunt voltage in V, "
                   "mV, dBV, dBmV, dBuV or dBm",
    "ohm": "Ohm, mOhm, kOhm, MOhm (or the ohm sign, any SI prefix)",
    "z_magnitude": "Ohm, mOhm, kOhm, MOhm (or the ohm sign, any SI prefix) or dBOhm",
    "ratio_magnitude": "dB or V/V (no unit)",
    "F": "F with any SI prefix (pF, nF, uF)", "H": "H with any SI prefix (nH, uH, mH)",
    "dissipation": "no unit or %", "quality": "no unit",
    "u_z_magnitude": "Ohm (any SI prefix) or % of |Z|", "u_z_real": "Ohm (any SI prefix) or % of R",
    "u_z_imag": "Ohm (any SI prefix) or % of X",
}
#: Voltage-level bases: a current column in one of these is the voltage across a shunt.
VOLTAGE_BASES = ("V", "dBV", "dBm")


def understood(role: str) -> str:
    """The units a role's column may state, in words."""
    if role.endswith("_phase"):
        return UNDERSTOOD["phase"]
    if role in UNDERSTOOD:
        return UNDERSTOOD[role]
    if role in ("z_real", "z_imag", "r_series", "r_parallel"):
        return UNDERSTOOD["ohm"]
    if role.startswith(("c_", "l_")):
        return UNDERSTOOD["F" if role.startswith("c_") else "H"]
    return UNDERSTOOD.get(role, "SI base units")


def refuse_unknown_unit(role: str, info: HeaderInfo, where: str) -> None:
    """Raise for a column used for ``role`` whose header states a unit fitz_tool does not understand."""
    if not info.unit_known:
        bracketed = re.search(r"[(\[{][^)\]}]*" + re.escape(info.unit_text), info.header)
        hint = (" or name another column with --map" if bracketed else
                f"; if {info.unit_text!r} is not a unit, state the unit: --map {role}='{info.header} (UNIT)'")
        raise InputError(f"{where}: column {info.header!r}: unit {info.unit_text!r} is not understood (for "
                         f"{role}: {understood(role)}); export in one of those units{hint}")


def _level_to_amplitude(role: str, info: HeaderInfo, raw: np.ndarray, dbm_reference: float | None,
                        where: str) -> tuple[np.ndarray, str]:
    """A channel level in dB to a peak amplitude in V or A, and the step in words.

    dBV (dBA): dB re 1 V (1 A) rms, x = 10^(L/20) V rms; dBmV, dBuV re 1 mV, 1 uV. dBm: dB re 1 mW into the
    reference impedance R, V_rms = sqrt(R * 1 mW * 10^(L/10)) (common practice, no source).
    """
    label = f"{role} from {info.header!r}"
    if info.base == "dBm":
        if dbm_reference is None:
            raise InputError(f"{where}: column {info.header!r} is a power level in dBm, which needs the "
                             f"impedance it is referred to: pass --dbm-reference OHMS (e.g. 50)")
        rms = np.sqrt(dbm_reference * 1e-3 * np.power(10.0, raw / 10.0))
        return to_peak(rms, "rms"), (f"{label}: dBm re 1 mW into {dbm_reference:g} ohm (--dbm-reference) -> "
                                     f"V rms = sqrt(R * 1 mW * 10^(dBm/10)) -> peak (x {math.sqrt(2):.6g})")
    unit = info.base[2:]
    reference = prefix_factor(info.prefix)
    convention = info.convention or "rms"
    values = to_peak(reference * np.power(10.0, raw / 20.0), convention)
    ref_text = f"1 {info.prefix.replace(chr(0x3bc), 'u').replace(chr(0xb5), 'u')}{unit} {convention}"
    step = f"{label}: dB re {ref_text} -> {unit} {convention} = {reference:g} x 10^(dB/20)"
    if convention != "peak":
        step += f" -> peak (x {to_peak(1.0, convention):.6g})"
    return values, step


def unit_label(role: str, info: HeaderInfo) -> str:
    """The unit of a column as the provenance records it (``"kHz"``, ``"mV rms"``, ``"deg (assumed)"``)."""
    if info.unit_text:
        return info.unit_text
    assumed = _ASSUMED.get(role, "deg")
    return f"{assumed}{' ' + info.convention if info.convention else ''} (assumed)"


def _convert(role: str, info: HeaderInfo, raw: np.ndarray, where: str,
             dbm_reference: float | None = None) -> tuple[np.ndarray, str]:
    """One column to SI (amplitudes to peak, phases to rad); returns values and the step in words."""
    label = f"{role} from {info.header!r}"
    refuse_unknown_unit(role, info, where)
    if role.endswith("_phase"):
        unit = info.base or "deg"
        if unit not in ("deg", "rad") or (read_unit(info.unit_text) or ("", "", None))[2]:
            raise InputError(f"{where}: column {info.header!r} is in {info.unit_text!r}, which is not a "
                             f"phase unit (deg or rad); name the right column with --map {role}=HEADER")
        return phase_to_radians(raw, unit), f"{label}: {unit_label(role, info)} -> rad"
    allowed = _SI[role]
    if info.base and info.base not in allowed:
        raise InputError(f"{where}: column {info.header!r} is in {info.unit_text!r}, which does not fit "
                         f"{role} (expected {' or '.join(allowed)}); name the right column with --map")
    if role == "ratio_magnitude":
        if info.base == "dB":
            return db_to_linear(raw), f"{label}: dB -> linear ratio (10^(dB/20))"
        return raw.copy(), f"{label}: linear ratio"
    if info.base == "dBohm":
        return db_to_linear(raw), f"{label}: dB re 1 ohm -> ohm (10^(dB/20))"
    if info.base == "%":
        return raw / 100, f"{label}: % -> fraction (x 0.01)"
    if info.base in ("dBV", "dBA", "dBm"):
        return _level_to_amplitude(role, info, raw, dbm_reference, where)
    if info.convention is not None and role not in ("v_amplitude", "i_amplitude"):
        raise InputError(f"{where}: column {info.header!r} states an amplitude convention "
                         f"({_CONVENTION_WORDS[info.convention]}), which does not fit {role}; name the "
                         f"right column with --map")
    factor = prefix_factor(info.prefix)
    if info.base == "rad/s":
        return raw * factor / (2 * np.pi), (f"{label}: angular frequency in {info.unit_text} -> Hz "
                                            f"(x {factor:g} / 2 pi)")
    unit = info.base or allowed[0]
    values = raw * factor
    step = (f"{label}: {unit_label(role, info)} -> {unit} (x {factor:g})" if factor != 1
            else f"{label}: in {unit_label(role, info)}")
    if role in ("v_amplitude", "i_amplitude"):
        convention = info.convention or "peak"
        values = to_peak(values, convention)
        if convention != "peak":
            step += f", {_CONVENTION_WORDS[convention]} -> peak (x {to_peak(1.0, convention):.6g})"
        step += "" if info.convention else ", amplitude convention not stated: taken as peak"
    if info.negated:
        values = -values
        step += ", sign reversed (the header holds the negative)"
    return values, step


def convert_columns(plan: ColumnPlan, raw: Mapping[str, np.ndarray], where: str,
                    dbm_reference: float | None = None) -> tuple[dict[str, np.ndarray], list[str], list[str]]:
    """Convert each column of the plan; returns (role -> values, steps, warnings).

    Parameters
    ----------
    plan : ColumnPlan
        The columns chosen for the form.
    raw : mapping of str to ndarray
        Role -> numbers as read (NaN where missing).
    where : str
        File name for messages.
    dbm_reference : float or None
        Impedance in ohm that dBm levels are referred to (``--dbm-reference``).
    """
    values, steps, warnings = {}, [], []
    for role, info in plan.columns.items():
        values[role], step = _convert(role, info, np.asarray(raw[role], dtype=float), where, dbm_reference)
        steps.append(step)
    if dbm_reference is not None and not any(i.base == "dBm" for i in plan.columns.values()):
        warnings.append(f"--dbm-reference {dbm_reference:g} ignored: no column used is in dBm")
    v, i = plan.columns.get("v_amplitude"), plan.columns.get("i_amplitude")
    if v is not None and i is not None and (v.convention is None) != (i.convention is None):
        stated, unstated = (v, i) if v.convention else (i, v)
        warnings.append(f"column {stated.header!r} states {_CONVENTION_WORDS[stated.convention]} but "
                        f"{unstated.header!r} states no amplitude convention (taken as peak); if both are "
                        f"the same, |Z| is off by the factor between them")
    return values, steps, warnings


Converter = Callable[[Mapping[str, np.ndarray], "float | None", "float | None"], tuple[np.ndarray, list[str]]]


@dataclass(frozen=True)
class InputForm:
    """One input form: the roles it needs, how Z follows from them, and what was read in words.

    Attributes
    ----------
    roles : tuple of str
        The roles the form needs, frequency first.
    convert : callable
        ``convert(values, shunt, reference) -> (Z in ohm, steps in words)``; values are role -> SI values
        (amplitudes peak, phases rad), ``shunt`` is the shunt resistance in ohm when the current column holds
        a shunt voltage (else None), ``reference`` the reference resistance in ohm (``--reference``).
    description : str
        What was read, in words; ``{current}`` (V/I forms) becomes "current through it" or "across a R ohm
        shunt", ``{reference}`` the reference resistance.
    recorded : str
        The name recorded in ``Provenance.form`` (the key when empty).
    """

    roles: tuple[str, ...]
    convert: Converter
    description: str
    recorded: str = ""


def _current(values: Mapping[str, np.ndarray], shunt: float | None) -> tuple[np.ndarray, list[str]]:
    """Current in A (peak): the current column, or the shunt voltage over the shunt resistance."""
    if shunt is None:
        return values["i_amplitude"], []
    return values["i_amplitude"] / shunt, [f"current = shunt voltage / {shunt:g} ohm (--shunt)"]


def _z_polar(values, shunt, reference):
    return polar_to_complex(values["z_magnitude"], values["z_phase"]), ["Z = |Z| e^(j phase)"]


def _z_rect(values, shunt, reference):
    return values["z_real"] + 1j * values["z_imag"], ["Z = R + j X"]


def _v_i(values, shunt, reference):
    current, steps = _current(values, shunt)
    z = phasors_to_impedance(values["v_amplitude"], values["v_phase"], current, values["i_phase"])
    return z, [*steps, "Z = V / I: |Z| = V_pk / I_pk, phase = phase(V) - phase(I) wrapped to (-180, 180] deg"]


def _v_i_difference(values, shunt, reference):
    current, steps = _current(values, shunt)
    z = polar_to_complex(values["v_amplitude"] / current, values["z_phase"])
    return z, [*steps, "Z = V / I: |Z| = V_pk / I_pk, phase = the phase of V relative to I"]


def _ratio(values, shunt, reference):
    z = reference * polar_to_complex(values["ratio_magnitude"], values["ratio_phase"])
    return z, [f"Z = R_ref * H with R_ref = {reference:g} ohm (--reference), H = V_part / V_ref"]


def _lcr(form: str) -> Converter:
    return lambda values, shunt, reference: lcr_to_impedance(form, values)


_LCR_WORDS = {"cs": "series capacitance", "ls": "series inductance", "cp": "parallel capacitance",
              "lp": "parallel inductance", "rs": "series resistance", "rp": "parallel resistance",
              "d": "dissipation factor D", "q": "quality factor Q"}

#: The input forms of a delimited table, in order of preference (the first complete one is read).
INPUT_FORMS: dict[str, InputForm] = {
    "z_polar": InputForm(("frequency", "z_magnitude", "z_phase"), _z_polar, "impedance magnitude and phase"),
    "z_rect": InputForm(("frequency", "z_real", "z_imag"), _z_rect, "resistance and reactance (Z = R + jX)"),
    "v_i": InputForm(("frequency", "v_amplitude", "v_phase", "i_amplitude", "i_phase"), _v_i,
                     "voltage across the part and {current}", "v_i_phasors"),
    "v_i_difference": InputForm(("frequency", "v_amplitude", "i_amplitude", "z_phase"), _v_i_difference,
                                "voltage across the part and {current}", "v_i_phasors"),
    "ratio": InputForm(("frequency", "ratio_magnitude", "ratio_phase"), _ratio,
                       "part voltage over the voltage across a {reference}reference resistor"),
    **{form: InputForm(roles, _lcr(form), "LCR-meter readings (" + " and ".join(
        _LCR_WORDS[k] for k in form.split("_")[1:]) + ")")
       for form, roles in LCR_FORMS.items()},
}
#: A V/I form whose current column is a shunt voltage is recorded under this name.
SHUNT_FORM = "v_shunt"
#: Forms read outside the table (Touchstone, circuit-simulator cells, fixture de-embedding, data built in
#: code), by the name recorded in ``Provenance.form``, in words.
OTHER_FORMS: dict[str, str] = {
    "touchstone_s11": "network-analyzer reflection (S11, Touchstone)",
    "touchstone_s21_shunt": "network-analyzer transmission S21, part shunted across the through line "
                            "(Touchstone)",
    "touchstone_s21_series": "network-analyzer transmission S21, part in series with the line (Touchstone)",
    "touchstone_2port_shunt": "network-analyzer two-port of the part in a fixture, de-embedded, part shunted "
                              "across the through line (Touchstone)",
    "touchstone_2port_series": "network-analyzer two-port of the part in a fixture, de-embedded, part in "
                               "series with the line (Touchstone)",
    "simulator_complex": "complex values from a circuit-simulator export",
    "synthetic": "data built in code",
}


def form_words(form: str, shunt: float | None = None, reference: float | None = None) -> str | None:
    """What a recorded form (``Provenance.form``) read, in words; None for a form fitz_tool does not record.

    The one home of these words: the readers record them, the terminal, JSON and HTML reports show them.
    ``shunt`` and ``reference`` (ohm) complete the words of the shunt and transfer-ratio forms when known.
    """
    if form in OTHER_FORMS:
        return OTHER_FORMS[form]
    current = "current through it"
    if form == SHUNT_FORM:
        current = f"across a {shunt:g} ohm shunt" if shunt else "across a series current shunt"
    for name, entry in INPUT_FORMS.items():
        if (entry.recorded or name) == form or (form == SHUNT_FORM and "{current}" in entry.description):
            return entry.description.format(current=current,
                                            reference=f"{reference:g} ohm " if reference else "")
    return None


def build_impedance(plan: ColumnPlan, values: Mapping[str, np.ndarray], shunt: float | None,
                    reference: float | None, where: str) -> tuple[np.ndarray, str, list[str], list[str]]:
    """Impedance in ohm from converted columns by the plan's entry in ``INPUT_FORMS``.

    Returns (Z, recorded form name, steps, warnings).

    Parameters
    ----------
    plan : ColumnPlan
        Chosen form and columns.
    values : mapping of str to ndarray
        Role -> SI values (amplitudes peak, phases rad), as from ``convert_columns``.
    shunt : float or None
        Series shunt resistance in ohm (a current column that holds a shunt voltage).
    reference : float or None
        Reference resistance in ohm (form ``ratio``).
    where : str
        File name for messages.
    """
    warnings: list[str] = []
    for name, value in (("--shunt", shunt), ("--reference", reference)):
        if value is not None and not (np.isfinite(value) and value > 0):
            raise InputError(f"{where}: {name} {value!r}: must be a resistance above 0 ohm")
    entry = INPUT_FORMS[plan.form]
    form = entry.recorded or plan.form
    used_shunt = None
    if plan.form == "ratio" and reference is None:
        info = plan.columns["ratio_magnitude"]
        if info.subject_from_unit:
            raise InputError(f"{where}: column {info.header!r} is a magnitude in dB with no reference, "
                             f"so it cannot be read as impedance: if it is V_part / V_ref, pass "
                             f"--reference OHMS; if it is |Z| in dB re 1 ohm, say so in its unit, "
                             f"e.g. 'Mag (dBOhm)'")
        raise InputError(f"{where}: a transfer-ratio file (column {info.header!r}) "
                         f"needs the reference resistor: pass --reference OHMS")
    i_info = plan.columns.get("i_amplitude")
    if i_info is not None and i_info.base in VOLTAGE_BASES:
        if shunt is None:
            raise InputError(f"{where}: column {i_info.header!r} is a voltage, so the current was "
                             f"measured across a shunt: pass --shunt OHMS (its resistance)")
        used_shunt, form = shunt, SHUNT_FORM
    elif i_info is not None and shunt is not None:
        warnings.append(f"--shunt {shunt:g} ignored: column {i_info.header!r} already holds current")
    z, steps = entry.convert(values, used_shunt, reference)
    words = form_words(form, shunt, reference)
    if reference is not None and plan.form != "ratio":
        warnings.append(f"--reference {reference:g} ignored: the file is not a transfer ratio (it holds "
                        f"{words})")
    if shunt is not None and i_info is None:
        warnings.append(f"--shunt {shunt:g} ignored: the file holds no shunt voltage (it holds {words})")
    return z, form, list(steps), warnings


def stated_sigmas(plan: ColumnPlan, values: Mapping[str, np.ndarray],
                  z: np.ndarray) -> tuple[np.ndarray, np.ndarray, str] | None:
    """Per-point standard uncertainties of ln|Z| and of the phase (rad) from stated uncertainty columns.

    |Z| and phase: sigma_ln|Z| = u(|Z|) / |Z| (or the stated fraction), sigma_phase = u(phase).
    R and X with independent u(R), u(X): first-order propagation to ln Z = ln|Z| + j phase,
    sigma_ln|Z| = sqrt(R^2 u_R^2 + X^2 u_X^2) / |Z|^2 and sigma_phase = sqrt(X^2 u_R^2 + R^2 u_X^2) / |Z|^2
    (GUM, JCGM 100:2008, 5.1.2); their correlation, zero when u_R = u_X, is not carried.

    Returns None when the plan has no uncertainty columns; else (sigma_lnmag, sigma_phase, step in words).
    """
    columns = plan.columns
    if "u_z_magnitude" in columns:
        u_mag = values["u_z_magnitude"]
        relative = u_mag if columns["u_z_magnitude"].base == "%" else u_mag / np.abs(z)
        headers = (columns["u_z_magnitude"].header, columns["u_z_phase"].header)
        sig = (relative, values["u_z_phase"].copy())
    elif "u_z_real" in columns:
        r, x = z.real, z.imag
        u_r = values["u_z_real"] * (np.abs(r) if columns["u_z_real"].base == "%" else 1.0)
        u_x = values["u_z_imag"] * (np.abs(x) if columns["u_z_imag"].base == "%" else 1.0)
        mag2 = np.abs(z) ** 2
        sig = (np.hypot(r * u_r, x * u_x) / mag2, np.hypot(x * u_r, r * u_x) / mag2)
        headers = (columns["u_z_real"].header, columns["u_z_imag"].header)
    else:
        return None
    step = (f"stated standard uncertainties (k = 1) from {headers[0]!r} and {headers[1]!r}, carried to ln|Z| "
            f"and phase per point: absolute weights (uncertainties from them, chi-square tests the model)")
    return sig[0], sig[1], step


def noise_terms(form: str, values: Mapping[str, np.ndarray], shunt: float | None) -> tuple[NoiseTerm, ...]:
    """The terms a noise model of this form is built from, per row of ``values`` (SI, amplitudes peak).

    Every form: a part relative to |Z| (the default shape: equal weights on ln|Z| and phase), and parts of
    ln|Z| alone and of the phase alone (magnitude and phase noise of different sizes). V/I forms: timing
    jitter between the two channels (a phase error of 2 pi f sigma_t), and a
    floor on each channel, as a phasor error of fixed size, so the variance of ln Z it adds is
    floor^2 / level^2: the part channel's level is |I| |Z| (from the model), the current or shunt channel's
    |I| or |V_shunt| as read. Other forms: a floor in ohm on Z (floor^2 / |Z|^2). Channel levels are peak
    amplitudes, so a floor is a peak amplitude too (common practice, no source).
    """
    if form == "simulator_complex":
        return ()
    n = len(values["frequency"])
    relative = (NoiseTerm("relative", np.ones(n), False, "%", "of |Z|", default=True),
                NoiseTerm("magnitude", np.ones(n), False, "%", "of |Z| alone", component="magnitude"),
                NoiseTerm("phase", np.ones(n), False, "%", "of phase alone", component="phase"))
    if "i_amplitude" not in values:
        return *relative, NoiseTerm("impedance_floor", np.ones(n), True, "ohm", "in Z")
    sense = values["i_amplitude"]
    current = sense / shunt if form == SHUNT_FORM else sense
    jitter = NoiseTerm("jitter", (2 * np.pi * values["frequency"]) ** 2, False, "s",
                       "of timing jitter between the channels", component="phase")
    part = NoiseTerm("part_floor", 1.0 / current**2, True, "V", "on the part channel (peak)")
    unit, channel = ("V", "shunt") if form == SHUNT_FORM else ("A", "current")
    sense_term = NoiseTerm("sense_floor", 1.0 / sense**2, False, unit, f"on the {channel} channel (peak)")
    return *relative, jitter, part, sense_term
