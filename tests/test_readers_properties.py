"""Property tests (hypothesis): tables generated from a known impedance in random layouts read back exactly;
random garbage and random unit words give a clean InputError, never a traceback or an assumed unit.

Check values: the impedance of a series R-L with a parallel C, computed here with numpy, and the level
relations of the trade (peak = sqrt(2) rms = pp / 2; L_dBV = 20 log10(V_rms / 1 V); dBm: P = V_rms^2 / R re
1 mW; common practice, no source). Generated cases per run: 150 + 150 + 100 + 100 + 100 = 600 (health
checks and deadline from the profile in conftest.py).
"""

import math
import string

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement
from fitz_tool.readers.headers import _is_name_text
from fitz_tool.units import read_unit

PREFIX = {"": 1.0, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "k": 1e3, "M": 1e6}
PEAK_PER = {"pk": 1.0, "rms": math.sqrt(2), "pp": 0.5}  # peak = factor x stated amplitude


def _header(name: str, unit: str, style: str) -> str:
    if not unit:
        return name
    return {"paren": f"{name} ({unit})", "bracket": f"{name} [{unit}]", "space": f"{name} {unit}",
            "underscore": f"{name}_{unit}"}[style]


@st.composite
def layouts(draw):
    n = draw(st.integers(3, 10))
    decades = draw(st.lists(st.floats(2.0, 7.0), min_size=n, max_size=n, unique=True))
    f = 10.0 ** np.array(sorted(decades))
    if np.any(np.diff(f) / f[1:] < 1e-6):
        f = np.logspace(2, 7, n)
    r, ind, c = draw(st.floats(1e-3, 1e3)), draw(st.floats(1e-9, 1e-3)), draw(st.floats(1e-13, 1e-6))
    w = 2 * np.pi * f
    z = 1 / (1 / (r + 1j * w * ind) + 1j * w * c)
    form = draw(st.sampled_from(["z_polar", "z_rect", "v_i", "v_shunt"]))
    style = draw(st.sampled_from(["paren", "bracket", "space", "underscore"]))
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    decimal = "." if delimiter == "," else draw(st.sampled_from([".", ","]))
    f_unit = draw(st.sampled_from(["Hz", "kHz", "MHz", "GHz", "rad/s", ""]))
    f_scale = {"Hz": 1, "kHz": 1e-3, "MHz": 1e-6, "GHz": 1e-9, "rad/s": 2 * np.pi, "": 1}[f_unit]
    columns = [(_header("Frequency", f_unit, style), f * f_scale)]
    phase_unit = draw(st.sampled_from(["deg", "rad", "°", ""]))
    phase_style = "paren" if phase_unit == "°" else style

    def phase(value):
        return value if phase_unit == "rad" else np.degrees(value)

    options = {}
    if form in ("z_polar", "z_rect"):
        prefix = draw(st.sampled_from(["", "m", "k", "M"]))
        ohm = draw(st.sampled_from(["Ohm", "Ω", "ohm"]))
        scale = 1 / PREFIX[prefix]
        if form == "z_polar":
            columns += [(_header("|Z|", prefix + ohm, style), abs(z) * scale),
                        (_header("Phase", phase_unit, phase_style), phase(np.angle(z)))]
        else:
            columns += [(_header("R", prefix + ohm, style), z.real * scale),
                        (_header("X", prefix + ohm, style), z.imag * scale)]
    else:
        current = draw(st.floats(1e-4, 1.0)) * np.exp(1j * draw(st.floats(-3.0, 3.0)))
        shunt = draw(st.sampled_from([0.01, 0.1, 1.0, 10.0]))
        v = z * current
        i_col = (current * shunt if form == "v_shunt" else current) * np.ones_like(z)
        for name, ph_name, value, base in (("Voltage", "Phase V", v, "V"),
                                           ("Shunt voltage" if form == "v_shunt" else "Current",
                                            "Shunt phase" if form == "v_shunt" else "Phase I", i_col,
                                            "V" if form == "v_shunt" else "A")):
            kind = draw(st.sampled_from(["linear", "db"] + (["dbm"] if base == "V" else [])))
            if kind == "db":
                prefix = draw(st.sampled_from(["", "m", "u", "µ"]))
                level = 20 * np.log10(abs(value) / math.sqrt(2) / PREFIX[prefix])
                columns.append((_header(name, f"dB{prefix}{base}", "paren" if style == "space" else style),
                                level))
            elif kind == "dbm":
                options["dbm_reference"] = 50.0
                level = 10 * np.log10((abs(value) / math.sqrt(2)) ** 2 / 50.0 / 1e-3)
                columns.append((_header(name, "dBm", style), level))
            else:
                prefix = draw(st.sampled_from(["", "m", "u", "µ", "k"]))
                conv = draw(st.sampled_from(["pk", "rms", "pp"]))
                where = draw(st.sampled_from(["after", "before", "nested"]))
                unit = {"after": f"{prefix}{base} {conv}", "before": f"{conv} {prefix}{base}",
                        "nested": f"{prefix}{base}({conv})"}[where]
                unit_style = "bracket" if where == "nested" else ("paren" if style == "underscore" else style)
                amplitude = abs(value) / PREFIX[prefix] / PEAK_PER[conv]
                columns.append((_header(name, unit, unit_style), amplitude))
            columns.append((_header(ph_name, phase_unit, phase_style), phase(np.angle(value))))
        if form == "v_shunt":
            options["shunt"] = shunt
    texts = draw(st.lists(st.sampled_from(["Status", "Comment", "Timestamp", "Range"]), unique=True,
                          max_size=3))
    for text in texts:
        cells = {"Status": ["OK"] * n, "Comment": [draw(st.sampled_from(["", "sweep A", "note"]))
                                                   for _ in range(n)],
                 "Timestamp": [f"2026-12-01 10:00:{k:02d}" for k in range(n)], "Range": ["AUTO"] * n}[text]
        columns.insert(draw(st.integers(0, len(columns))), (text, cells))
    order = draw(st.permutations(range(n)))
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


UNIT_WORDS = st.text(alphabet=string.ascii_letters + "µΩ°/%", min_size=1, max_size=8).filter(
    lambda w: read_unit(w) is None and not _is_name_text(w))


@settings(max_examples=100)
@given(word=UNIT_WORDS, style=st.sampled_from(["paren", "bracket"]),
       role=st.sampled_from(["frequency", "|Z|", "Phase"]))
def test_random_unit_words_are_refused_never_assumed(tmp_path_factory, word, style, role):
    headers = {"frequency": "Frequency (Hz)", "|Z|": "|Z| (Ohm)", "Phase": "Phase (deg)"}
    name = {"frequency": "Frequency", "|Z|": "|Z|", "Phase": "Phase"}[role]
    headers[role] = _header(name, word, style)
    path = tmp_path_factory.mktemp("u") / "u.csv"
    path.write_text(",".join(headers.values()) + "\n1000,10,45\n2000,11,46\n", encoding="utf-8")
    try:
        read_measurement(path)
    except InputError as err:
        assert word in str(err)
    else:
        raise AssertionError(f"header {headers[role]!r} was read in an assumed unit")


@settings(max_examples=100)
@given(word=UNIT_WORDS.filter(lambda w: w.isalpha() and len(w) >= 2))
def test_random_unit_words_after_an_underscore_are_refused(tmp_path_factory, word):
    path = tmp_path_factory.mktemp("w") / "w.csv"
    path.write_text(f"freq_{word},zmag_ohm,phase_deg\n1000,10,45\n2000,11,46\n", encoding="utf-8")
    try:
        read_measurement(path)
    except InputError as err:
        assert word in str(err)
    else:
        raise AssertionError(f"freq_{word} was read in an assumed unit")
