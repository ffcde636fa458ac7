"""Read right or refuse: a word after a space or underscore that ends the header of a used column is a unit
fitz_tool understands, a word of the name (role word, qualifier, channel or trace label), or a refusal.

Check values: an impedance computed here with numpy (a 1 ohm + 10 uH part with 50 pF across it), written
into the layout under test and read back; SI prefix multipliers from the BIPM SI Brochure, 9th edition,
Table 7; peak = sqrt(2) rms for a sinusoid (common practice, no source).
"""

import math
import re

import numpy as np
import pytest

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement
from fitz_tool.readers.headers import parse_header
from tests.test_readers_units import I_PK, V_PK, F, W, Z, deg, write  # the same part and table writer

POLAR = ["Frequency (Hz)", "|Z| (Ohm)", "Phase (deg)"]


def polar_with(position, header):
    """The |Z|-and-phase table with one header replaced."""
    headers = list(POLAR)
    headers[position] = header
    return headers


@pytest.mark.parametrize(("position", "header", "word", "role"), [
    (0, "Frequency furlongs", "furlongs", "frequency"),
    (0, "Freq_furlongs", "furlongs", "frequency"),
    (0, "Frequency 1/s", "1/s", "frequency"),
    (0, "Frequency points", "points", "frequency"),
    (1, "Impedance zorks", "zorks", "z_magnitude"),
    (1, "|Z| bananas 2", "bananas", "z_magnitude"),
    (2, "Phase grads", "grads", "z_phase"),
    (2, "Phase_turns", "turns", "z_phase"),
])
def test_an_unknown_word_ending_a_used_header_is_refused(tmp_path, position, header, word, role):
    path = write(tmp_path, polar_with(position, header), [F, abs(Z), deg(Z)])
    with pytest.raises(InputError) as err:
        read_measurement(path)
    text = str(err.value)
    assert text.startswith(str(path)) and f"column {header!r}" in text and "\n" not in text
    assert f"unit {word!r} is not understood (for {role}:" in text
    understood = {"frequency": "Hz, kHz, MHz, GHz", "z_magnitude": "Ohm, mOhm, kOhm, MOhm",
                  "z_phase": "deg (or °) or rad"}[role]
    assert understood in text and f"--map {role}='{header} (UNIT)'" in text


@pytest.mark.parametrize(("position", "header", "message"), [
    (2, "Phase pk", "'pk', which is not a phase unit"), (2, "Phase_rms", "'rms', which is not a phase unit"),
    (1, "|Z| xΩ", "unit 'xΩ' is not understood"), (1, "|Z| %", "'%', which does not fit z_magnitude"),
    (0, "Frequency °", "cannot tell which columns hold what"),
])
def test_a_convention_or_unit_sign_that_fits_no_role_is_refused(tmp_path, position, header, message):
    # found by the unit-word property: a convention on a phase column, and unit signs glued to a name word
    path = write(tmp_path, polar_with(position, header), [F, abs(Z), deg(Z)])
    with pytest.raises(InputError, match=re.escape(message)):
        read_measurement(path)


@pytest.mark.parametrize(("header", "word"), [
    ("Voltage_bananas", "bananas"), ("Voltage bananas pp", "bananas"), ("Voltage bananas (rms)", "bananas"),
    ("Voltage furlongs B", "furlongs"),
])
def test_unknown_words_on_the_voltage_and_current_channels(tmp_path, header, word):
    path = write(tmp_path, ["Freq", header, "Phase V", "Current zorks", "Phase I"],
                 [F, abs(V_PK), deg(V_PK), abs(I_PK), deg(I_PK)])
    with pytest.raises(InputError, match=re.escape(f"column '{header}': unit '{word}' is not understood "
                                                   f"(for v_amplitude: V, mV, uV")):
        read_measurement(path)
    good = write(tmp_path, ["Freq", "Voltage (V)", "Phase V", "Current zorks", "Phase I"],
                 [F, abs(V_PK), deg(V_PK), abs(I_PK), deg(I_PK)], "good_v.csv")
    with pytest.raises(InputError, match=r"column 'Current zorks': unit 'zorks' is not understood \(for "
                                         r"i_amplitude: A, mA, uA"):
        read_measurement(good)


@pytest.mark.parametrize("headers", [
    ["Freq", "Impedance magnitude", "Phase of Z"],
    ["Sweep Frequency", "Z magnitude corrected", "Z phase"],
    ["Freq swept", "Mag Z", "Phase Z"],
    ["Frequency_1", "|Z| ch1", "Phase shift"],
    ["Frequency Hz avg", "Impedance Ohm raw", "Phase angle deg"],
])
def test_natural_headers_without_a_unit_still_read(tmp_path, headers):
    path = write(tmp_path, headers, [F, abs(Z), deg(Z)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


@pytest.mark.parametrize("headers", [
    ["Freq", "V Ch1", "Phase Ch1", "I probe", "Phase Ch2"],
    ["Frequency", "Voltage", "Voltage phase", "Current probe", "Current probe phase"],
    ["Frequency", "V(out)", "Phase V(out)", "I(R1)", "Phase I(R1)"],
    ["Frequency", "Voltage monitor", "Voltage monitor phase", "Current sensor", "Current sensor phase"],
])
def test_probe_words_and_simulator_probe_names_are_part_of_the_name(tmp_path, headers):
    """A current probe or a simulator probe name (V(out), I(R1)) ends a header without being a unit."""
    path = write(tmp_path, headers, [F, abs(V_PK), deg(V_PK), abs(I_PK), deg(I_PK)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.columns["i_amplitude"] == headers[3]


def test_trace_numbers_and_channel_letters_are_labels_not_units(tmp_path):
    path = write(tmp_path, ["Frequency", "Trace 1 Magnitude", "Trace 1 Phase", "Trace 2 Temperature"],
                 [F, abs(Z), deg(Z), np.ones(F.size)])
    m = read_measurement(path)  # the bare magnitude of trace 1 is |Z| (a warning says so)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.ignored_columns == ("Trace 2 Temperature",)


def test_a_unit_before_trailing_qualifiers_and_labels_is_read(tmp_path):
    # "Voltage mV raw" is in mV, "Current mA avg 2" in mA: the prefix is not lost to the qualifier
    path = write(tmp_path, ["Frequency_Hz_1", "Voltage mV raw", "Phase V", "Current mA avg 2", "Phase I"],
                 [F, abs(V_PK) * 1e3, deg(V_PK), abs(I_PK) * 1e3, deg(I_PK)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.units["v_amplitude"] == "mV" and m.provenance.units["i_amplitude"] == "mA"


def test_a_convention_in_brackets_after_a_unit_word_and_a_volt_before_a_convention(tmp_path):
    # "Voltage mV (rms)" is mV rms (not volts rms); "Shunt voltage V pp" is a shunt voltage (not amperes)
    shunt = 0.1
    path = write(tmp_path, ["Frequency", "Voltage mV (rms)", "Phase V", "Shunt voltage V pp", "Shunt phase"],
                 [F, abs(V_PK) * 1e3 / math.sqrt(2), deg(V_PK), abs(I_PK) * shunt * 2, deg(I_PK)])
    m = read_measurement(path, ReadOptions(shunt=shunt))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.form == "v_shunt"
    assert m.provenance.units["v_amplitude"] == "mV rms" and m.provenance.units["i_amplitude"] == "V pp"


def test_lcr_headers_with_a_qualifier(tmp_path):
    # Ls and Q of a series R-L: Q = w L / R (common practice, no source)
    r, ind = 0.5, 22e-6
    path = write(tmp_path, ["Frequency (Hz)", "Ls (uH)", "Q factor"], [F, np.full(F.size, ind * 1e6),
                                                                        W * ind / r])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, r + 1j * W * ind, rtol=1e-12)


def test_capacitance_with_its_unit_spelled_out_after_a_space(tmp_path):
    # Cs and Rs of a series R-C: Z = Rs + 1 / (j w Cs) (common practice, no source)
    r, cap = 0.02, 4.7e-6
    path = write(tmp_path, ["Frequency Hz", "Cs microfarad", "Rs Ohm"],
                 [F, np.full(F.size, cap * 1e6), np.full(F.size, r)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, r + 1 / (1j * W * cap), rtol=1e-12)


def test_an_unknown_word_in_an_unused_column_is_only_ignored(tmp_path):
    path = write(tmp_path, [*POLAR, "Temperature probe", "Bias furlongs"],
                 [F, abs(Z), deg(Z), np.full(F.size, 23.0), np.zeros(F.size)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.ignored_columns == ("Temperature probe", "Bias furlongs")


def test_the_map_route_refuses_the_same_words(tmp_path):
    path = write(tmp_path, ["a furlongs", "b", "c"], [F, abs(Z), deg(Z)])
    with pytest.raises(InputError, match="column 'a furlongs': unit 'furlongs' is not understood"):
        read_measurement(path, ReadOptions(column_map={"frequency": "a furlongs", "z_magnitude": "b",
                                                       "z_phase": "c"}))
    path = write(tmp_path, ["x", "Level zorks", "y"], [F, abs(Z), deg(Z)], "m2.csv")
    with pytest.raises(InputError, match="unit 'zorks' is not understood"):
        read_measurement(path, ReadOptions(column_map={"frequency": "x", "z_magnitude": "Level zorks",
                                                       "z_phase": "y"}))


def test_the_map_route_can_state_the_unit_of_a_header_without_one(tmp_path):
    path = write(tmp_path, ["Freq swept", "Magnitude furlongs", "Phase"], [F / 1e3, abs(Z) * 1e3, deg(Z)])
    m = read_measurement(path, ReadOptions(column_map={"frequency": "Freq swept (kHz)",
                                                       "z_magnitude": "Magnitude furlongs [mOhm]",
                                                       "z_phase": "Phase"}))
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.columns["frequency"] == "Freq swept"
    assert m.provenance.units["frequency"] == "kHz" and m.provenance.units["z_magnitude"] == "mOhm"
    assert any("in kHz as the --map states" in s for s in m.provenance.steps)


def test_the_map_route_states_units_of_a_headerless_table(tmp_path):
    path = tmp_path / "h.txt"
    rows = zip(F / 1e6, abs(V_PK) / math.sqrt(2) * 1e3, deg(V_PK), abs(I_PK) * 1e3, deg(I_PK), strict=True)
    path.write_text("\n".join(" ".join(f"{x:.17g}" for x in row) for row in rows) + "\n")
    m = read_measurement(path, ReadOptions(column_map={
        "frequency": "#1 (MHz)", "v_amplitude": "#2 [mV rms]", "v_phase": "#3", "i_amplitude": "#4 (mA)",
        "i_phase": "#5"}))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


def test_the_map_route_keeps_a_unit_the_header_states(tmp_path):
    path = write(tmp_path, POLAR, [F, abs(Z), deg(Z)])
    with pytest.raises(InputError, match=r"column 'Frequency \(Hz\)' already states its unit 'Hz'"):
        read_measurement(path, ReadOptions(column_map={"frequency": "Frequency (Hz) (kHz)"}))
    with pytest.raises(InputError, match="no such column"):
        read_measurement(path, ReadOptions(column_map={"frequency": "Frequenz (kHz)"}))


@pytest.mark.parametrize(("header", "kind", "subject", "group"), [
    ("Phase of Z", "phase", "impedance", None), ("Trace 1 Magnitude", "amplitude", None, "1"),
    ("Impedance magnitude", "amplitude", "impedance", None), ("Z phase", "phase", "impedance", None),
    ("Channel A amplitude", "amplitude", None, "a"), ("Voltage In B", "amplitude", "voltage", "b"),
    ("Phase V-I", "phase", "current", None), ("|Z| sigma", "amplitude", "impedance", None),
])
def test_natural_headers_state_no_unit_and_no_refusal(header, kind, subject, group):
    info = parse_header(header, 0)
    assert (info.unit_text, info.unit_known) == ("", True)
    assert (info.kind, info.subject, info.group) == (kind, subject, group)


def test_cli_refusal_is_one_line_exit_2_and_writes_nothing(tmp_path, capsys):
    path = write(tmp_path, ["Frequency furlongs", "|Z| (Ohm)", "Phase (deg)"], [F, abs(Z), deg(Z)])
    original = path.read_bytes()
    out = tmp_path / "out"
    code = main(["fit", str(path), "--model", "R1 + L1 || C1", "--json", str(out / "fit.json"),
                 "--curve", str(out / "curve.csv"), "--report", str(out / "report.html")])
    assert code == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert str(path) in err and "'Frequency furlongs'" in err and "'furlongs'" in err and "rad/s" in err
    assert not out.exists() and path.read_bytes() == original
