"""Reading one column header: what quantity it names, in which unit and amplitude convention.

A header splits into a *name* and a *unit*. The unit is taken from, in this order: the last bracket group that
reads as a unit (``"Frequency (kHz)"``, ``"f [MHz]"``, ``"V(DUT) (mV rms)"``), a ``/unit`` suffix
(``"Frequency/Hz"``), or a last ``_``/space separated token of two or more letters (``"freq_hz"``,
``"phase deg"``). A unit is an optional SI prefix (``u``, ``µ`` and ``μ`` all micro; ``m`` milli,
``M`` mega), a base unit (Hz, V, A, ohm/Ω, deg/°, rad, dB, dBohm/dBΩ, V/V, F, H, %) and an optional
amplitude convention (rms, pp/p-p/pk-pk, pk/peak). ``F`` and ``H`` count only in capitals (``f`` is a
frequency, ``h`` a transfer function).

The name gives a *kind* (frequency, amplitude, phase, real, imaginary, or one of the equivalent-circuit
readings of an LCR meter: Cs, Ls, Cp, Lp, Rp, D, Q) and a *subject* (voltage across the part, current,
impedance, transfer ratio), from word lists below; a channel tag (``Ch1``, ``Channel B``,
``Input 2``) groups the columns of one channel. The unit fills in what the name leaves open (Hz means
frequency, A current, ohm impedance, dB a ratio, deg/rad a phase). Nothing here decides between columns: that
is ``columns.py``.
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass

__all__ = ["HeaderInfo", "VectorName", "parse_header", "parse_unit", "parse_vector_name"]

_PREFIX = r"(?P<prefix>meg|[fpnuµμmkKMGT])?"
_BASE = (r"(?P<base>(?i:hz|v/v|db\(?(?:ohms?|Ω)\)?|ohms?|Ω|degrees?|deg|°|radians?|rad|db|v|a)|F|H|%)?")
_CONVENTION = (r"(?P<conv>(?i:rms|peak-to-peak|peaktopeak|pk-pk|pkpk|p-p|pp|ptp|peak|pk))?")
_UNIT = re.compile(_PREFIX + _BASE + _CONVENTION)

_BASES = {"hz": "Hz", "v/v": "", "ohm": "ohm", "ohms": "ohm", "ω": "ohm", "deg": "deg", "degree": "deg",
          "degrees": "deg", "°": "deg", "rad": "rad", "radian": "rad", "radians": "rad", "db": "dB",
          "v": "V", "a": "A", "dbohm": "dBohm", "f": "F", "h": "H", "%": "%"}
_CONVENTIONS = {"rms": "rms", "peak-to-peak": "pp", "peaktopeak": "pp", "pk-pk": "pp", "pkpk": "pp",
                "p-p": "pp", "pp": "pp", "ptp": "pp", "peak": "peak", "pk": "peak"}

FREQ = {"f", "freq", "frequency", "frq", "frequenz", "fréquence", "frecuencia"}
AMPLITUDE = {"amp", "ampl", "amplitude", "mag", "magnitude", "abs", "level", "modulus", "mod"}
PHASE = {"phase", "phi", "φ", "theta", "θ", "angle", "arg", "ph", "phs", "phase_deg"}
REAL = {"real", "re", "resistance", "esr", "r", "rs"}
IMAG = {"imag", "im", "imaginary", "reactance", "x", "xs"}
VOLTAGE = {"v", "u", "volt", "volts", "voltage", "vdut", "vpart", "dut", "part", "device", "across", "vd"}
CURRENT = {"i", "current", "shunt", "vshunt", "ishunt", "sense", "vsense", "isense", "ish"}
IMPEDANCE = {"z", "impedance", "zmag", "zreal", "zimag", "zphase"}
RATIO = {"gain", "ratio", "h", "transfer", "tf"}
#: Equivalent-circuit readings of an LCR meter (series/parallel C or L, parallel R, dissipation, quality).
LCR = {"cs": "c_series", "ls": "l_series", "cp": "c_parallel", "lp": "l_parallel", "rp": "r_parallel",
       "d": "dissipation", "df": "dissipation", "q": "quality"}
FILLER = {"of", "the", "at", "in", "measured", "meas", "value", "val", "data", "mean", "avg", "average"}
_COMPOUNDS = {  # single tokens that carry subject and convention, e.g. "Vpp"
    "vpp": ("voltage", "pp"), "vrms": ("voltage", "rms"), "vpk": ("voltage", "peak"),
    "vpeak": ("voltage", "peak"), "ipp": ("current", "pp"), "irms": ("current", "rms"),
    "ipk": ("current", "peak"), "ipeak": ("current", "peak"),
}
_KNOWN = (FREQ | AMPLITUDE | PHASE | REAL | IMAG | VOLTAGE | CURRENT | IMPEDANCE | RATIO | FILLER
          | set(_COMPOUNDS) | set(_CONVENTIONS) | set(LCR) | {"zmag", "zreal", "zimag", "zphase"})
_CHANNEL = re.compile(r"\b(?:ch|chan|channel|input|in|trace|tr)\s*[-_#]?\s*(\d+|[a-d])\b")
_SUBSTITUTIONS = [  # written forms of Z-quantities, turned into single tokens before splitting
    (re.compile(r"\|\s*z\s*\|"), " zmag "),
    (re.compile(r"\b(?:abs|mag)\s*[({]\s*z\s*[)}]"), " zmag "),
    (re.compile(r"\b(?:re|real)\s*[({]\s*z\s*[)}]"), " zreal "),
    (re.compile(r"\b(?:im|imag)\s*[({]\s*z\s*[)}]"), " zimag "),
    (re.compile(r"\b(?:arg|angle|phase|ph)\s*[({]\s*z\s*[)}]"), " zphase "),
    (re.compile(r"\bz\s*''"), " zimag "),
    (re.compile(r"\bz\s*'"), " zreal "),
    (re.compile(r"peak[\s-]*to[\s-]*peak|\bpk[\s-]pk\b|\bp-p\b"), " pp "),
]


@dataclass(frozen=True)
class HeaderInfo:
    """What one header says.

    Attributes
    ----------
    header : str
        The header as written in the file.
    index : int
        0-based column position.
    unit_text : str
        The unit as written (``"mV rms"``), ``""`` when none.
    prefix : str
        SI prefix of the unit (``""`` for none).
    base : str
        Base unit: ``"Hz"``, ``"V"``, ``"A"``, ``"ohm"``, ``"deg"``, ``"rad"``, ``"dB"``, ``"dBohm"``
        (dB re 1 ohm), ``"F"``, ``"H"``, ``"%"`` or ``""`` (none/linear).
    convention : str or None
        Amplitude convention stated: ``"peak"``, ``"rms"``, ``"pp"``, or None.
    kind : str or None
        ``"frequency"``, ``"amplitude"``, ``"phase"``, ``"real"``, ``"imag"``, an LCR reading
        (``"c_series"``, ``"l_series"``, ``"c_parallel"``, ``"l_parallel"``, ``"r_parallel"``,
        ``"dissipation"``, ``"quality"``), or None when not recognized.
    subject : str or None
        ``"voltage"``, ``"current"``, ``"impedance"``, ``"ratio"``, or None when the header does not say.
    group : str or None
        Channel tag (``"1"``, ``"b"``) shared by the columns of one channel, or None.
    negated : bool
        True for headers like ``"-Im(Z)"`` / ``"-Z''"`` that hold the negative of the quantity.
    subject_from_unit : bool
        True when only the unit gave the subject (``"Mag (dB)"`` is a ratio because of ``dB``).
    """

    header: str
    index: int
    unit_text: str
    prefix: str
    base: str
    convention: str | None
    kind: str | None
    subject: str | None
    group: str | None
    negated: bool
    subject_from_unit: bool = False


def parse_unit(text: str) -> tuple[str, str, str | None] | None:
    """Read a unit such as ``"kHz"``, ``"mV rms"``, ``"Vpp"``, ``"kΩ"``, ``"°"``; None if it is not a unit.

    Returns ``(prefix, base, convention)``; ``base`` is ``""`` for a linear ratio (``V/V``) or a convention
    alone.
    """
    compact = re.sub(r"[\s_]+", "", unicodedata.normalize("NFKC", text))
    if not compact:
        return None
    match = _UNIT.fullmatch(compact)
    if match is None:
        return None
    prefix, base, conv = match.group("prefix") or "", match.group("base"), match.group("conv")
    if base is None and (prefix or conv is None):
        return None
    if base is not None and base.lower().startswith("db") and len(base) > 2:
        base = "dbohm"
    if base is not None and base.lower() in ("db", "dbohm", "deg", "degree", "degrees", "°", "rad", "radian",
                                             "radians", "%") and prefix:
        return None  # no "kdeg"/"mdB": not a unit we read
    if base is not None and base.lower() == "hz" and prefix == "m" and base == "hz":
        prefix = "M"  # all-lowercase "mhz" (as in freq_mhz) means megahertz; "mHz" stays milli
    return prefix, _BASES.get(base.lower(), "") if base else "", _CONVENTIONS[conv.lower()] if conv else None


def _split_unit(text: str) -> tuple[str, str]:
    """Split a header into (name, unit text)."""
    for match in reversed(list(re.finditer(r"[(\[{]([^()\[\]{}]*)[)\]}]", text))):
        if parse_unit(match.group(1)) is not None:
            return (text[:match.start()] + " " + text[match.end():]).strip(), match.group(1).strip()
    if "/" in text:
        left, right = text.rsplit("/", 1)
        last = re.split(r"[\s_]+", left.strip())[-1] if left.strip() else ""
        unit = parse_unit(right)
        if last and unit is not None and unit[1] and (len(last) > 1 or parse_unit(text) is None):
            return left.strip(), right.strip()
    tokens = re.split(r"([\s_]+)", text.strip())
    if len(tokens) >= 3 and len(tokens[-1]) >= 2 and parse_unit(tokens[-1]) is not None:
        return "".join(tokens[:-2]).strip(), tokens[-1]
    return text.strip(), ""


def _tokens(name: str) -> tuple[list[str], str | None, bool]:
    """Name -> (tokens, channel group, negated)."""
    text = unicodedata.normalize("NFKC", name).lower().strip()
    negated = text.startswith("-")
    text = text.lstrip("-+ ")
    group = None
    channel = _CHANNEL.search(text)
    if channel:
        group = channel.group(1)
        text = text[:channel.start()] + " " + text[channel.end():]
    for pattern, replacement in _SUBSTITUTIONS:
        text = pattern.sub(replacement, text)
    return [t for t in re.split(r"[^a-z0-9θφµμé]+", text) if t], group, negated


def _classify(tokens: list[str], base: str) -> tuple[str | None, str | None, str | None, bool]:
    """Tokens and base unit -> (kind, subject, convention named in the tokens, subject from the unit)."""
    kinds, subjects, convention, unknown = set(), set(), None, False
    from_unit = False
    for token in tokens:
        stem = token.rstrip("0123456789")
        if not (token in _KNOWN or stem in VOLTAGE | CURRENT):
            unknown = True
        if token in _COMPOUNDS:
            subject, convention = _COMPOUNDS[token]
            subjects.add(subject)
        elif token in _CONVENTIONS:
            convention = _CONVENTIONS[token]
        elif token in ("zmag", "zreal", "zimag", "zphase"):
            subjects.add("impedance")
            kinds.add({"zmag": "amplitude", "zreal": "real", "zimag": "imag", "zphase": "phase"}[token])
        elif stem and stem in VOLTAGE | CURRENT:
            subjects.add("current" if stem in CURRENT else "voltage")
        if token in LCR:
            kinds.add(LCR[token])
        for table, kind in ((FREQ, "frequency"), (AMPLITUDE, "amplitude"), (PHASE, "phase"),
                            (REAL, "real"), (IMAG, "imag")):
            if token in table:
                kinds.add(kind)
        for table, subject in ((IMPEDANCE, "impedance"), (RATIO, "ratio")):
            if token in table:
                subjects.add(subject)
    if "current" in subjects:  # "voltage across the shunt" is the current channel
        subjects.discard("voltage")
    if kinds & {"real", "imag"}:
        subjects.add("impedance")
    unit_kind = {"Hz": "frequency", "deg": "phase", "rad": "phase"}.get(base)
    unit_subject = {"A": "current", "ohm": "impedance", "dBohm": "impedance", "dB": "ratio",
                    "V": "voltage"}.get(base)
    if unit_kind and not unknown:  # "RBW (Hz)" or "Temp (deg)" are not ours
        kinds.add(unit_kind)
    if unit_subject and not unknown and not subjects and kinds <= {"amplitude", "real", "imag", "phase"}:
        subjects.add(unit_subject)
        from_unit = True
    if len(kinds) > 1 or len(subjects) > 1:
        return None, None, convention, False
    kind = next(iter(kinds), None)
    subject = next(iter(subjects), None)
    if kind is None and subject is not None:
        kind = "amplitude"
    if kind == "frequency" or kind in LCR.values():
        subject = None
    return kind, subject, convention, from_unit


#: ngspice vector names: ``vm(x)`` (short form), ``mag(v(x))`` (function form), ``v(x)`` / ``@r1[i]`` (bare).
_VEC_BARE = re.compile(r"^(?:([vi])\(([^()]+)\)|(@[^\[\]\s]+\[i\]))$", re.IGNORECASE)
_VEC_FUNC = re.compile(r"^(mag|ph|cph|real|re|imag|im|db)\((.+)\)$", re.IGNORECASE)
_VEC_SHORT = re.compile(r"^([vi])(m|p|r|i|db)\(([^()]+)\)$", re.IGNORECASE)
_VEC_UNIT = re.compile(r"^(.*\))\s*[\[(]\s*(deg|degrees|rad|radians|°)\s*[\])]$", re.IGNORECASE)
_FUNC_PART = {"mag": "m", "ph": "p", "cph": "p", "real": "r", "re": "r", "imag": "i", "im": "i", "db": "db"}
_PART_KIND = {"m": "amplitude", "p": "phase", "r": "real", "i": "imag", "db": "amplitude"}


@dataclass(frozen=True)
class VectorName:
    """A column named after a circuit-simulator vector (ngspice spelling).

    Attributes
    ----------
    vector : str
        The complex vector, lower case: ``"v(dut)"``, ``"i(vsense)"``, ``"@r1[i]"``.
    quantity : str
        ``"voltage"`` or ``"current"``.
    part : str
        ``"m"`` magnitude, ``"p"`` phase, ``"r"`` real, ``"i"`` imaginary, ``"db"`` magnitude in dB re 1 V or
        1 A, ``"pair"`` (a bare ``v(x)``: ngspice ``wrdata`` writes its real and imaginary parts under one
        name).
    phase_unit : str
        ``"deg"`` or ``"rad"`` when the header states it, else ``""``.
    print_style : bool
        True for ``im(vsense)``-style current columns (SPICE ``.print`` names; ngspice's own control
        language reads ``im()`` as the imaginary part, which is why only a bare source name counts).
    """

    vector: str
    quantity: str
    part: str
    phase_unit: str = ""
    print_style: bool = False


def _bare(text: str) -> tuple[str, str] | None:
    match = _VEC_BARE.match(text)
    if match is None:
        return None
    if match.group(3):
        return match.group(3).lower(), "current"
    letter = match.group(1).lower()
    return f"{letter}({match.group(2).strip().lower()})", "voltage" if letter == "v" else "current"


def parse_vector_name(header: str) -> VectorName | None:
    """An ngspice vector name (``vm(dut)``, ``ph(v(sh))``, ``mag(i(vsense))``, ``v(dut)``), or None.

    A trailing phase unit (``vp(x) (deg)``) is read; any other header gives None.
    """
    text = unicodedata.normalize("NFKC", header).strip().strip("\"'").strip()
    unit = ""
    match = _VEC_UNIT.match(text)
    if match:
        text, unit = match.group(1).strip(), "rad" if match.group(2).lower().startswith("rad") else "deg"
    function = _VEC_FUNC.match(text)
    if function and _bare(function.group(2).strip()):
        vector, quantity = _bare(function.group(2).strip())
        return VectorName(vector, quantity, _FUNC_PART[function.group(1).lower()], unit)
    short = _VEC_SHORT.match(text)
    if short and short.group(3).strip().lower() not in IMPEDANCE:  # "Im(Z)" is the imaginary part of Z
        letter, part, name = short.group(1).lower(), short.group(2).lower(), short.group(3).strip().lower()
        return VectorName(f"{letter}({name})", "voltage" if letter == "v" else "current", part, unit,
                          print_style=letter == "i")
    bare = _bare(text)
    if bare and not unit:
        return VectorName(bare[0], bare[1], "pair")
    return None


def parse_header(header: str, index: int) -> HeaderInfo:
    """Read one header (see the module docstring); never raises, unknown parts come back as None."""
    vector = parse_vector_name(header)
    if vector is not None and vector.part != "pair":
        return HeaderInfo(header=header, index=index, unit_text=vector.phase_unit, prefix="",
                          base=vector.phase_unit or ("dB" if vector.part == "db" else ""), convention=None,
                          kind=_PART_KIND[vector.part], subject=vector.quantity, group=None, negated=False)
    clean = unicodedata.normalize("NFKC", header).strip().lstrip("#!").strip()
    if len(clean) >= 2 and clean[0] == clean[-1] and clean[0] in "\"'":
        clean = clean[1:-1].strip()
    name, unit_text = _split_unit(clean)
    prefix, base, convention = parse_unit(unit_text) if unit_text else ("", "", None)
    tokens, group, negated = _tokens(name)
    kind, subject, named_convention, from_unit = _classify(tokens, base)
    return HeaderInfo(header=header, index=index, unit_text=unit_text, prefix=prefix, base=base,
                      convention=convention or named_convention, kind=kind, subject=subject, group=group,
                      negated=negated, subject_from_unit=from_unit)
