"""Property tests (hypothesis): tables generated from a known impedance in random layouts read back within
1e-9, by their headers and by --map; random garbage gives a clean InputError, never a traceback; random unit
words on role columns are read right or refused, never taken in an assumed unit.

Layouts: the forms |Z|-phase (|Z| with SI prefixes or in dBOhm), R-X, V-I, V and a shunt voltage, and a
transfer ratio (dB, V/V or no unit, with --reference); delimiters, decimal commas, units after a space or an
underscore or in () or [] (nested for conventions), pk/pp/rms before or after, dBV/dBmV/dBuV/dBA levels,
dBm into 50 or 600 ohm, rad/s, text columns, row order.

Check values: the impedance of a series R-L with a parallel C, computed here with numpy, and the level
relations of the trade (peak = sqrt(2) rms = pp / 2; L_dBV = 20 log10(V_rms / 1 V); dBm: P = V_rms^2 / R re
1 mW; common practice, no source). Generated cases per run: 150 (layouts) + 150 (text) + 100 (bytes) + 400
(unit words) = 800 (health checks, deadline and derandomization from the profile in conftest.py; the counts
per outcome: ``pytest --hypothesis-show-statistics``).
"""

import math
import string

import numpy as np
from hypothesis import event, given, settings
from hypothesis import strategies as st

from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement
from fitz_tool.readers.headers import FILLER, QUALIFIERS, _is_name_text
from fitz_tool.units import read_unit

PREFIX = {"": 1.0, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "k": 1e3, "M": 1e6}
PEAK_PER = {"pk": 1.0, "rms": math.sqrt(2), "pp": 0.5}  # peak = factor x stated amplitude


def _header(name: str, unit: str, style: str) -> str:
    if not unit:
        return name
    return {"paren": f"{name} ({unit})", "bracket": f"{name} [{unit}]", "space": f"{name} {unit}",
            "underscore": f"{name}_{unit.replace(' ', '_')}"}[style]


@st.composite
def layouts(draw):
    """A table of a known impedance in a random layout: (f Hz, Z ohm, columns, delimiter, decimal sign, row
    order, read options). Columns are (header, cells); on the --map route the role columns have neutral
    names (``c2 (mV rms)``) and the options carry the map."""
    n = draw(st.integers(3, 10))
    decades = draw(st.lists(st.floats(2.0, 7.0), min_size=n, max_size=n, unique=True))
    f = 10.0 ** np.array(sorted(decades))
    if np.any(np.diff(f) / f[1:] < 1e-6):
        f = np.logspace(2, 7, n)
    r, ind, c = draw(st.floats(1e-3, 1e3)), draw(st.floats(1e-9, 1e-3)), draw(st.floats(1e-13, 1e-6))
    w = 2 * np.pi * f
    z = 1 / (1 / (r + 1j * w * ind) + 1j * w * c)
    form = draw(st.sampled_from(["z_polar", "z_rect", "v_i", "v_shunt", "ratio"]))
    style = draw(st.sampled_from(["paren", "bracket", "space", "underscore"]))
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    decimal = "." if delimiter == "," else draw(st.sampled_from([".", ","]))
    f_unit = draw(st.sampled_from(["Hz", "kHz", "MHz", "GHz", "rad/s", ""]))
    f_scale = {"Hz": 1, "kHz": 1e-3, "MHz": 1e-6, "GHz": 1e-9, "rad/s": 2 * np.pi, "": 1}[f_unit]
    roles = [("frequency", "Frequency", f_unit, style, f * f_scale)]  # (role, name, unit, style, cells)
    phase_unit = draw(st.sampled_from(["deg", "rad", "°", ""]))
    phase_style = "paren" if phase_unit == "°" else style

    def phase(value):
        return value if phase_unit == "rad" else np.degrees(value)

    options = {}
    if form == "z_polar":
        prefix = draw(st.sampled_from(["", "m", "k", "M", "dB"]))
        ohm = draw(st.sampled_from(["Ohm", "Ω", "ohm"]))
        # |Z| in dB re 1 ohm: L = 20 log10(|Z| / 1 ohm) (common practice, no source)
        magnitude = 20 * np.log10(abs(z)) if prefix == "dB" else abs(z) / PREFIX[prefix]
        roles += [("z_magnitude", "|Z|", prefix + ohm, style, magnitude),
                  ("z_phase", "Phase", phase_unit, phase_style, phase(np.angle(z)))]
    elif form == "z_rect":
        prefix = draw(st.sampled_from(["", "m", "k", "M"]))
        ohm = draw(st.sampled_from(["Ohm", "Ω", "ohm"]))
        roles += [("z_real", "R", prefix + ohm, style, z.real / PREFIX[prefix]),
                  ("z_imag", "X", prefix + ohm, style, z.imag / PREFIX[prefix])]
    elif form == "ratio":
        options["reference"] = draw(st.sampled_from([10.0, 50.0, 1000.0]))
        h = z / options["reference"]  # the reference resistor carries the part's current
        gain = draw(st.sampled_from(["dB", "V/V", ""]))
        roles += [("ratio_magnitude", "Gain", gain, style if gain == "dB" else "paren",
                   20 * np.log10(abs(h)) if gain == "dB" else abs(h)),
                  ("ratio_phase", "Phase", phase_unit, phase_style, phase(np.angle(h)))]
    else:
        current = draw(st.floats(1e-4, 1.0)) * np.exp(1j * draw(st.floats(-3.0, 3.0)))
        shunt = draw(st.sampled_from([0.01, 0.1, 1.0, 10.0]))
        v = z * current
        i_col = (current * shunt if form == "v_shunt" else current) * np.ones_like(z)
        dbm_reference = draw(st.sampled_from([50.0, 600.0]))
        shunted = form == "v_shunt"
        for role, name, ph_name, value, base in (
                ("v", "Voltage", "Phase V", v, "V"),
                ("i", "Shunt voltage" if shunted else "Current", "Shunt phase" if shunted else "Phase I",
                 i_col, "V" if shunted else "A")):
            kind = draw(st.sampled_from(["linear", "db"] + (["dbm"] if base == "V" else [])))
            if kind == "db":
                prefix = draw(st.sampled_from(["", "m", "u", "µ"]))
                level = 20 * np.log10(abs(value) / math.sqrt(2) / PREFIX[prefix])
                roles.append((f"{role}_amplitude", name, f"dB{prefix}{base}", style, level))
            elif kind == "dbm":
                options["dbm_reference"] = dbm_reference
                level = 10 * np.log10((abs(value) / math.sqrt(2)) ** 2 / options["dbm_reference"] / 1e-3)
                roles.append((f"{role}_amplitude", name, "dBm", style, level))
            else:
                prefix = draw(st.sampled_from(["", "m", "u", "µ", "k"]))
                conv = draw(st.sampled_from(["pk", "rms", "pp"]))
                where = draw(st.sampled_from(["after", "before", "nested"]))
                unit = {"after": f"{prefix}{base} {conv}", "before": f"{conv} {prefix}{base}",
                        "nested": f"{prefix}{base}({conv})"}[where]
                amplitude = abs(value) / PREFIX[prefix] / PEAK_PER[conv]
                roles.append((f"{role}_amplitude", name, unit, "bracket" if where == "nested" else style,
                              amplitude))
            roles.append((f"{role}_phase", ph_name, phase_unit, phase_style, phase(np.angle(value))))
        if form == "v_shunt":
            options["shunt"] = shunt
    by_map = draw(st.booleans())
    columns = []
    for k, (role, name, unit, unit_style, cells) in enumerate(roles):
        header = _header(f"c{k + 1}" if by_map else name, unit, unit_style)
        columns.append((header, cells))
        if by_map:
            options.setdefault("column_map", {})[role] = header
    texts = draw(st.lists(st.sampled_from(["Status", "Comment", "Timestamp", "Range"]), unique=True,
                          max_size=3))
    for text in texts:
        cells = {"Status": ["OK"] * n, "Comment": [draw(st.sampled_from(["", "sweep A", "note"]))
                                                   for _ in range(n)],
                 "Timestamp": [f"2026-12-01 10:00:{k:02d}" for k in range(n)], "Range": ["AUTO"] * n}[text]
        columns.insert(draw(st.integers(0, len(columns))), (text, cells))
    order = draw(st.permutations(range(n)))
    event(f"form {form}{' by --map' if by_map else ''}")
    return f, z, columns, delimiter, decimal, order, options


def _cell(value, decimal):
    if isinstance(value, str):
        return value
    return f"{value:.17g}".replace(".", decimal)


@settings(max_examples=150)
@given(layout=layouts())
def test_random_layouts_read_back_the_known_impedance(tmp_path_factory, layout):
    f, z, columns, delimiter, decimal, order, options = layout
    lines = [delimiter.join(h for h, _ in columns)]
    for k in order:
        lines.append(delimiter.join(_cell(values[k], decimal) for _, values in columns))
    path = tmp_path_factory.mktemp("p") / "t.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    m = read_measurement(path, ReadOptions(**options))
    np.testing.assert_allclose(m.frequency, f, rtol=1e-9)
    np.testing.assert_allclose(m.impedance, z, rtol=1e-9)


@settings(max_examples=150)
@given(text=st.text(alphabet=string.printable + "µΩ°;\t", max_size=400))
def test_random_text_is_read_or_refused_cleanly(tmp_path_factory, text):
    path = tmp_path_factory.mktemp("g") / "g.csv"
    path.write_text(text, encoding="utf-8")
    try:
        read_measurement(path)
    except InputError as err:
        assert "\n" not in str(err) and str(path) in str(err)


@settings(max_examples=100)
@given(data=st.binary(max_size=300))
def test_random_bytes_are_read_or_refused_cleanly(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("b") / "b.txt"
    path.write_bytes(data)
    try:
        read_measurement(path)
    except InputError:
        pass


#: SI prefix multipliers, BIPM SI Brochure 9th edition, Table 7 ("K" for kilo as some exports write it).
SI = {"": 1.0, "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3, "k": 1e3,
      "K": 1e3, "M": 1e6, "G": 1e9, "T": 1e12}
#: Unit words the reader must understand, mixed into the random words so that both outcomes are drawn.
UNDERSTOOD_WORDS = ["Hz", "kHz", "MHz", "GHz", "mhz", "khz", "rad/s", "Ohm", "mOhm", "kΩ", "MΩ", "ohms",
                    "dBOhm", "deg", "°", "rad", "degrees", "V", "mV", "uV", "µV", "Vrms", "mVpp", "pk", "rms",
                    "pp", "dBV", "dBmV", "dBuV", "A", "mA", "uA", "mArms", "dBA", "dBuA", "dBm", "F", "pF",
                    "H", "uH", "%", "dB"]
RANDOM_WORDS = st.one_of(st.text(alphabet=string.ascii_letters + "µΩ°", min_size=1, max_size=6),
                         st.sampled_from(UNDERSTOOD_WORDS), st.sampled_from(sorted(QUALIFIERS)))
#: The role columns of the two tables: (table, role, name written before the unit).
ROLE_COLUMNS = [("polar", "frequency", "Frequency"), ("polar", "z_magnitude", "|Z|"),
                ("polar", "z_phase", "Phase"), ("v_i", "v_amplitude", "Voltage"),
                ("v_i", "i_amplitude", "Current")]


def _in_unit(role: str, unit, true_si: np.ndarray) -> np.ndarray | None:
    """The true SI values of a role written in ``unit`` = (prefix, base, convention), or None when the unit
    does not fit the role (the reader must refuse). Level and conversion relations: w = 2 pi f; L_dB =
    20 log10(x / x_ref) with x_ref 1 (prefixed) V or A rms unless another convention is stated; |Z| in dB re
    1 ohm (common practice, no source)."""
    prefix, base, convention = unit
    scale = SI[prefix]
    per_peak = {"peak": 1.0, "rms": 1 / math.sqrt(2), "pp": 2.0}  # stated amplitude per peak amplitude
    if role == "frequency" and convention is None:
        return {"Hz": true_si / scale, "rad/s": 2 * np.pi * true_si / scale}.get(base)
    if role == "z_magnitude" and convention is None:
        return {"ohm": true_si / scale, "dBohm": 20 * np.log10(true_si) if not prefix else None}.get(base)
    if role == "z_phase":
        return {"deg": np.degrees(true_si), "rad": true_si}.get(base)
    own = {"v_amplitude": "V", "i_amplitude": "A"}.get(role)
    if own is None:
        return None
    if base in ("", own):
        return true_si / scale * per_peak[convention or "peak"]
    if base == "dB" + own:
        return 20 * np.log10(true_si * per_peak[convention or "rms"] / scale)
    return None  # a voltage level on the current column is a shunt voltage: refused without --shunt


def _letter(word: str) -> bool:
    return len(word) == 1 and word in string.ascii_letters


def _name_word(word: str, style: str) -> bool:
    """Whether the header reads the word as part of its name: a name word, a qualifier or a label (a single
    letter or a number after a space or underscore); in brackets, name text only. A unit sign makes no
    name."""
    if any(sign in word for sign in "°%Ω\u2126"):
        return False
    if style in ("paren", "bracket"):
        return _is_name_text(word)
    lower = word.lower()
    return _letter(word) or _is_name_text(word) or lower in QUALIFIERS | FILLER or lower.isdigit()


@settings(max_examples=400)
@given(word=RANDOM_WORDS, style=st.sampled_from(["space", "underscore", "paren", "bracket"]),
       column=st.sampled_from(ROLE_COLUMNS))
def test_random_unit_words_on_role_columns_are_read_right_or_refused(tmp_path_factory, word, style, column):
    table, role, name = column
    f = np.array([1e3, 1e4, 1e5])
    z = 1 / (1 / (0.5 + 2j * np.pi * f * 1e-5) + 2j * np.pi * f * 1e-9)
    current = 0.01 * np.exp(0.3j) * np.ones(3)
    if table == "polar":
        true = {"frequency": f, "z_magnitude": abs(z), "z_phase": np.angle(z)}
        headers = {"frequency": "Frequency (Hz)", "z_magnitude": "|Z| (Ohm)", "z_phase": "Phase (deg)"}
        cells = {"frequency": f, "z_magnitude": abs(z), "z_phase": np.degrees(np.angle(z))}
    else:
        v = z * current
        true = {"v_amplitude": abs(v), "i_amplitude": abs(current)}
        headers = {"frequency": "Frequency (Hz)", "v_amplitude": "Voltage (V)", "v_phase": "Phase V (deg)",
                   "i_amplitude": "Current (A)", "i_phase": "Phase I (deg)"}
        cells = {"frequency": f, "v_amplitude": abs(v), "v_phase": np.degrees(np.angle(v)),
                 "i_amplitude": abs(current), "i_phase": np.degrees(np.angle(current))}
    headers[role] = _header(name, word, style)
    unit = read_unit(word)
    lone_letter = style == "space" and _letter(word)  # a channel label after a space, never a unit
    if unit is not None and not lone_letter:
        branch, written = "understood unit", _in_unit(role, unit, true[role])
    elif _name_word(word, style):
        branch, written = "name word (SI, recorded as assumed)", true[role] if role != "z_phase" else \
            np.degrees(true[role])
    else:
        branch, written = "unknown word", None
    if written is not None:
        cells[role] = written
    path = tmp_path_factory.mktemp("u") / "u.csv"
    rows = np.column_stack(list(cells.values()))
    path.write_text("\n".join([",".join(headers.values()), *(",".join(f"{x:.17g}" for x in r) for r in rows)])
                    + "\n", encoding="utf-8")
    try:
        m = read_measurement(path)
    except InputError as err:
        event(f"{branch}: refused")
        assert "\n" not in str(err) and str(path) in str(err)
        if branch == "unknown word":
            assert word in str(err)
        assert branch != "understood unit" or written is None, f"{headers[role]!r} refused: {err}"
        return
    event(f"{branch}: read")
    assert written is not None, f"header {headers[role]!r} was read in an assumed unit"
    if branch.startswith("name word"):
        assert m.provenance.units[role].endswith("(assumed)")
    np.testing.assert_allclose(m.frequency, f, rtol=1e-9)
    np.testing.assert_allclose(m.impedance, z, rtol=1e-9)
