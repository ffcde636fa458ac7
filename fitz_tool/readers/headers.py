"""Reading one column header: what quantity it names, in which unit and amplitude convention.

A header splits into a *name* and a *unit* (``_split_unit``). The unit is taken from, in this order: the last
bracket group that is not part of the name (``"Frequency (kHz)"``, ``"f [MHz]"``, ``"V(DUT) (mV rms)"``,
nested ``"Voltage [mV(rms)]"``), a ``/unit`` suffix (``"Frequency/Hz"``), or the last one to three words after
a space or underscore (``"freq_hz"``, ``"V mV pp"``, ``"Shunt voltage_V"``, past trailing qualifiers and
labels: ``"Voltage mV raw"``, ``"Frequency_Hz_1"``). The unit grammar is ``units.read_unit`` (SI prefixes on
Hz, rad/s, V, A, ohm, F, H; deg, rad, %, dB, dBV/dBA levels, dBm, dBOhm; an amplitude convention before or
after). ``F`` and ``H`` count only in capitals (``f`` is a frequency, ``h`` a transfer function).

Read right or refuse: a unit fitz_tool does not understand is kept as a unit *not understood*, and a column
used for a role is then refused, never read in an assumed unit. That is a bracketed word that is neither a
unit nor part of a name (``"(furlongs)"``), and, when the header names no base unit, a word ending the name
after a space or underscore that is neither a name word (the word lists below), a qualifier
(``QUALIFIERS``: ``"Freq swept"``, ``"Phase shift"``, ``"|Z| real part"``), nor a number or channel label
(``"Trace 1 Magnitude"``, ``"Voltage Ch B"``, ``"S21"``): ``"Frequency furlongs"``, ``"Voltage_bananas pp"``,
``"Current zorks 2"``. A single letter after a space is a channel label (``"Phase V"``).

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

from ..units import read_unit

__all__ = ["HeaderInfo", "VectorName", "parse_header", "parse_unit", "parse_vector_name"]

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
#: Words that qualify a quantity in instrument exports and may end a header without being a unit
#: (``"Freq swept"``, ``"|Z| real part"``, ``"Phase shift"``, ``"Voltage DUT raw"``, ``"|Z| sigma"``).
QUALIFIERS = {"part", "component", "comp", "difference", "diff", "delta", "shift", "lag", "lead", "raw",
              "corrected", "corr", "uncorrected", "calibrated", "cal", "reading", "result", "swept", "sweep",
              "stimulus", "stim", "source", "src", "actual", "act", "nominal", "nom", "response", "resp",
              "input", "output", "out", "ref", "reference", "signal", "sig", "trace", "trc", "marker", "mkr",
              "ch", "chan", "channel", "median", "smoothed", "filtered", "fundamental", "fund", "linear",
              "lin", "total", "through", "thru", "factor", "sigma", "std", "stdev", "stddev", "dev", "unc",
              "uncertainty", "probe", "monitor", "mon", "sensor", "clamp", "node", "port", "pin"}
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
    unit_known : bool
        False when the header states a unit fitz_tool does not understand (``unit_text`` holds it); a
        column used for a role is then refused, never read in an assumed unit.
    uncertainty : bool
        True for a stated standard uncertainty of the quantity the header names (``u(|Z|)``, ``|Z| sigma``,
        ``Phase std``, ``u(R)``).
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
    unit_known: bool = True
    uncertainty: bool = False


def parse_unit(text: str) -> tuple[str, str, str | None] | None:
    """Read a unit such as ``"kHz"``, ``"mV rms"``, ``"Vpp"``, ``"kΩ"``, ``"°"``, ``"dBuV"``.

    None if it is not one fitz_tool understands (see ``units.read_unit``).

    Returns ``(prefix, base, convention)``; ``base`` is ``""`` for a linear ratio (``V/V``) or a convention
    alone.
    """
    return read_unit(text)


#: Words directly followed by a bracket that holds their argument, not a unit: ``V(DUT)``, ``u(|Z|)``.
_FUNCTIONS = {"v", "i", "u", "z", "x", "r", "re", "im", "real", "imag", "abs", "mag", "arg", "angle", "ph",
              "phase", "sigma", "σ", "std", "unc", "db", "vm", "vp", "vr", "vi", "vdb", "ip", "ir", "ii",
              "idb", "cph", "ch", "channel", "input", "trace", "tr"}
_CHANNEL_WORDS = {"ch", "chan", "channel", "input", "in", "trace", "tr"}
_LABEL = re.compile(r"#?[a-z]{0,3}\d+[a-z]?")
_UNIT_SIGN = re.compile("[°%\u03a9\u2126]")


def _is_name_text(text: str) -> bool:
    """Whether text reads as part of a name (``DUT``, ``Ch1``, ``V-I``, ``shunt``, ``raw``), not a unit.

    Text with a unit sign in it (``°``, ``%``, the ohm sign) is never a name (``"pp°"``, ``"xΩ"``).
    """
    if _UNIT_SIGN.search(unicodedata.normalize("NFKC", text)):
        return False
    tokens, group, _ = _tokens(text)
    if not tokens:
        return group is not None or bool(re.fullmatch(r"[\s|'\-+]*", text))
    return all(t in _KNOWN or t in QUALIFIERS or t.rstrip("0123456789") in VOLTAGE | CURRENT or t.isdigit()
               for t in tokens)


def _is_probe_label(word: str) -> bool:
    """A simulator-style probe name such as ``V(out)`` or ``I(R1)``: a function word and its argument."""
    found = re.fullmatch(r"([^\W\d_]+)\((.+)\)", word)
    return found is not None and found.group(1).lower() in _FUNCTIONS


def _is_label(word: str) -> bool:
    """A number or channel/trace label (``1``, ``#2``, ``Ch1``, ``tr2``, ``S21``, ``2a``): never a unit."""
    return bool(_LABEL.fullmatch(word.lower()))


def _is_letter(word: str) -> bool:
    """A single Latin letter: after a space a channel label (``"Phase V"``), not a unit; ``°``, ``%``, ``Ω``
    alone are units."""
    return len(word) == 1 and word.isascii() and word.isalpha()


def _groups(text: str) -> list[tuple[int, int, bool]]:
    """Top-level bracket groups as (start, end, attached to the word before); nesting allowed."""
    groups, depth, start = [], 0, 0
    for k, char in enumerate(text):
        if char in "([{":
            if depth == 0:
                start = k
            depth += 1
        elif char in ")]}" and depth:
            depth -= 1
            if depth == 0:
                groups.append((start, k + 1, start > 0 and not text[start - 1].isspace()))
    return groups


def _bracket_unit(text: str) -> tuple[str, str, bool] | None:
    """The unit in the last bracket group that is not part of the name, as (name, unit, understood)."""
    for start, end, attached in reversed(_groups(text)):
        content = text[start + 1:end - 1].strip()
        name = (text[:start] + " " + text[end:]).strip()
        if parse_unit(content) is not None:
            return name, content, True
        before = re.findall(r"[^\W\d_]+$", text[:start])
        if _is_name_text(content) or (attached and text[start] != "[" and before
                                      and before[0].lower() in _FUNCTIONS):
            continue
        return name, content, False
    return None


def _name_end(words: list[str]) -> int:
    """How many words remain once trailing qualifiers, name words and labels are passed over (at least 1).

    ``["Voltage", "mV", "raw"]`` -> 2, ``["Frequency", "Hz", "avg"]`` -> 2. A word that reads as a unit
    (``"V"``, ``"Amp"``) or an amplitude convention (``"pp"``) is never passed over.
    """
    end = len(words)
    while end > 1:
        word = words[end - 1].lower()
        named = word in QUALIFIERS | FILLER or (word in _KNOWN and word not in _CONVENTIONS)
        if not (_is_label(word) or (named and parse_unit(words[end - 1]) is None)):
            break
        end -= 1
    return end


def _word_unit(text: str) -> tuple[str, str, bool]:
    """The unit in the last one to three words after a space or underscore, as (name, unit, understood).

    Trailing qualifiers, name words and labels are passed over first (``"Voltage mV raw"`` and
    ``"Ch1 mV Amplitude"`` are in mV). A single letter after a space is a channel label, not a unit
    (``"Phase V"``, ``"Voltage A"``).
    """
    tokens = re.split(r"([\s_]+)", text.strip())
    words, separators = tokens[0::2], tokens[1::2]
    end = _name_end(words)
    for size in (3, 2, 1):
        if end <= size:
            continue
        suffix = words[end - size:end]
        if size == 1 and _is_letter(suffix[0]) and ("_" not in separators[end - size - 1]
                                                    or words[end - size - 1].lower() in _CHANNEL_WORDS):
            continue
        if parse_unit(" ".join(suffix)) is not None:
            name = "".join(tokens[:2 * (end - size) - 1] + tokens[2 * end - 1:])
            return re.sub(r"^[\s_]+|[\s_]+$", "", name), " ".join(suffix), True
    return text.strip(), "", True


def _unknown_trailing_word(name: str) -> tuple[str, str] | None:
    """The word ending a name that is neither a name word, a qualifier nor a label: (name without it, word).

    ``"Frequency furlongs"`` -> ("Frequency", "furlongs"); ``"Phase of Z"``, ``"Trace 1 Magnitude"``,
    ``"Freq swept"``, ``"Voltage Ch A"`` -> None. Qualifiers and labels at the end are passed over
    (``"Current zorks 2"`` -> "zorks"); the first word is always the name.
    """
    tokens = re.split(r"([\s_]+)", name.strip())
    words = tokens[0::2]
    end = _name_end(words)
    while end > 2 and _is_letter(words[end - 1]):  # a channel letter ("Voltage furlongs B")
        end = _name_end(words[:end - 1])
    if end < 2:
        return None
    word, before = words[end - 1], words[end - 2].lower()
    if _is_letter(word) or before in _CHANNEL_WORDS or _is_name_text(word) or _is_probe_label(word):
        return None
    rest = "".join(tokens[:2 * (end - 1) - 1] + tokens[2 * end - 1:])
    return re.sub(r"^[\s_]+|[\s_]+$", "", rest), word


def _split_unit(text: str) -> tuple[str, str, bool]:
    """Split a header into (name, unit text, whether the unit is understood).

    A unit stands in the last bracket group that is not part of the name (``"Frequency (kHz)"``,
    ``"V [mV(rms)]"``), after a ``/`` (``"Frequency/Hz"``), or in the last one to three words after a space or
    underscore (``"V mV pp"``, ``"Shunt voltage_V"``). A bracket group that is neither a unit fitz_tool
    understands nor part of a name (``"(furlongs)"``, ``"[rpm]"``) is returned as a unit not understood.
    When no unit names a base unit (none at all, or only a convention such as ``"(rms)"``), the last word of
    the name must be a name word (``FREQ``, ``PHASE``... ``FILLER``), a qualifier (``QUALIFIERS``) or a
    label (a number, ``Ch1``); any other (``"Frequency furlongs"``, ``"Voltage_bananas pp"``) is returned as
    a unit not understood. The caller refuses a unit not understood if the column is used.
    """
    found = _bracket_unit(text)
    if found is None and "/" in text:
        left, right = text.rsplit("/", 1)
        last = re.split(r"[\s_]+", left.strip())[-1] if left.strip() else ""
        unit = parse_unit(right)
        if last and unit is not None and unit[1] and (len(last) > 1 or parse_unit(text) is None):
            found = left.strip(), right.strip(), True
    if found is None:
        found = _word_unit(text)
    elif found[2] and not parse_unit(found[1])[1]:  # a convention in brackets after the unit: "V mV (rms)"
        name, unit, _ = _word_unit(found[0])
        combined = " ".join(f"{unit} {found[1]}".split())
        if unit and parse_unit(combined) is not None:
            found = name, combined, True
    name, unit_text, known = found
    if known and not (unit_text and parse_unit(unit_text)[1]):
        trailing = _unknown_trailing_word(name)
        if trailing is not None:
            return trailing[0], trailing[1], False
    return name, unit_text, known


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
    unit_kind = {"Hz": "frequency", "rad/s": "frequency", "deg": "phase", "rad": "phase"}.get(base)
    unit_subject = {"A": "current", "dBA": "current", "ohm": "impedance", "dBohm": "impedance", "dB": "ratio",
                    "dBV": "voltage", "dBm": "voltage", "V": "voltage"}.get(base)
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


_UNCERTAINTY_FUNCTION = re.compile(r"(?i)^\s*(?:u|σ|sigma|std|stdev|unc|uncertainty)\s*\((.+)\)\s*$")
_UNCERTAINTY_WORD = re.compile(r"(?i)(?:^|(?<=[\s_\-]))(?:σ|sigma|std|stdev|stddev|std\.?\s*dev\.?|"
                               r"uncertainty|unc)(?=$|[\s_\-])")


def _uncertainty(name: str) -> tuple[str, bool]:
    """Name without its uncertainty marker (``u(|Z|)``, ``|Z| sigma``, ``Phase std``) and whether it had one.

    ``u`` counts only in function form (``u(R)``), since ``U`` is also a voltage.
    """
    match = _UNCERTAINTY_FUNCTION.match(name)
    if match:
        return match.group(1).strip(), True
    words = re.split(r"[\s_\-]+", name.strip())
    if len(words) >= 2:
        stripped = _UNCERTAINTY_WORD.sub(" ", name).strip()
        if stripped != name.strip() and stripped:
            return stripped, True
    return name, False


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
    name, unit_text, unit_known = _split_unit(clean)
    prefix, base, convention = parse_unit(unit_text) if unit_text and unit_known else ("", "", None)
    name, uncertainty = _uncertainty(name)
    tokens, group, negated = _tokens(name)
    kind, subject, named_convention, from_unit = _classify(tokens, base)
    return HeaderInfo(header=header, index=index, unit_text=unit_text, prefix=prefix, base=base,
                      convention=convention or named_convention, kind=kind, subject=subject, group=group,
                      negated=negated, subject_from_unit=from_unit, unit_known=unit_known,
                      uncertainty=uncertainty)
