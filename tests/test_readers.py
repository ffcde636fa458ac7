"""Delimited bench files in every form and layout, and every bad-data case.

Check values come from an impedance computed here with numpy (a 1 ohm + 10 uH part with 50 pF across it),
written to a file in the form under test and read back: a round trip against an independent computation.
"""

import hashlib
import math

import numpy as np
import pytest

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

F = np.array([1e3, 1e4, 1e5, 1e6, 1e7, 3e7])
W = 2 * np.pi * F
Z = 1 / (1 / (1.0 + 1j * W * 10e-6) + 1j * W * 50e-12)
I_PHASOR = 0.02 * np.exp(1j * np.linspace(-0.5, 2.5, F.size))  # A peak, arbitrary reference per point
V_PHASOR = Z * I_PHASOR


def deg(x):
    return np.degrees(np.angle(x))


def write(tmp_path, name, header, columns, delimiter=",", decimal=".", preamble=(), encoding="utf-8",
          order=None, bom=False):
    rows = np.column_stack(columns)
    if order is not None:
        rows = rows[order]
    lines = list(preamble) + [delimiter.join(header)]
    for row in rows:
        lines.append(delimiter.join(f"{x:.17g}".replace(".", decimal) for x in row))
    data = ("\n".join(lines) + "\n").encode(encoding)
    path = tmp_path / name
    path.write_bytes((b"\xef\xbb\xbf" if bom else b"") + data)
    return path


def assert_z(m, z=Z, rel=1e-12):
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, z, rtol=rel)


# --- the five forms -------------------------------------------------------------------------------------

def test_form_a_voltage_and_current_phasors_with_mixed_conventions(tmp_path):
    # peak = sqrt(2) rms = pp / 2 for a sinusoid (common practice, no source)
    path = write(tmp_path, "vi.csv", ["Frequency (kHz)", "V (mV rms)", "Phase V (deg)", "I (mA pp)",
                                      "Phase I (deg)"],
                 [F / 1e3, 1e3 * abs(V_PHASOR) / math.sqrt(2), deg(V_PHASOR), 2e3 * abs(I_PHASOR),
                  deg(I_PHASOR)])
    m = read_measurement(path)
    assert_z(m)
    assert m.provenance.form == "v_i_phasors"
    assert m.provenance.units["v_amplitude"] == "mV rms"
    assert any("peak-to-peak -> peak" in s for s in m.provenance.steps)
    assert m.sigma_lnmag is None and m.sigma_phase is None


def test_form_b_part_and_shunt_voltages_need_the_shunt(tmp_path):
    # I = V(shunt) / R(shunt); Vpp = 2 peak, rms = peak / sqrt(2) (common practice, no source)
    shunt = 0.1
    header = ["f [MHz]", "Ch1 Amplitude (Vpp)", "Ch1 Phase (rad)", "Ch2 V(shunt) (mV rms)", "Ch2 Phase (rad)"]
    path = write(tmp_path, "vsh.csv", header,
                 [F / 1e6, 2 * abs(V_PHASOR), np.angle(V_PHASOR), 1e3 * abs(I_PHASOR * shunt) / math.sqrt(2),
                  np.angle(I_PHASOR)])
    m = read_measurement(path, ReadOptions(shunt=shunt))
    assert_z(m)
    assert m.provenance.form == "v_shunt"
    assert any("0.1 ohm" in s for s in m.provenance.steps)
    with pytest.raises(InputError, match="pass --shunt"):
        read_measurement(path)


def test_form_c_magnitude_and_phase(tmp_path):
    path = write(tmp_path, "polar.csv", ["Freq", "|Z| (kOhm)", "Theta (deg)"], [F, abs(Z) / 1e3, deg(Z)])
    m = read_measurement(path)
    assert_z(m)
    assert m.provenance.columns == {"frequency": "Freq", "z_magnitude": "|Z| (kOhm)",
                                    "z_phase": "Theta (deg)"}
    assert m.provenance.units["frequency"] == "Hz (assumed)"


# SI prefixes m = 1e-3, k = 1e3 (BIPM SI Brochure, from memory); "-Z''" columns hold minus the reactance, as
# impedance-spectroscopy plots show it (common practice, no source)
@pytest.mark.parametrize(("real", "imag", "scale", "sign"), [
    ("R (ohm)", "X (ohm)", 1.0, 1), ("Rs", "Xs", 1.0, 1), ("Re(Z) (mOhm)", "Im(Z) (mOhm)", 1e-3, 1),
    ("ESR (kΩ)", "Reactance (kΩ)", 1e3, 1), ("Z' (Ohm)", "-Z'' (Ohm)", 1.0, -1),
])
def test_form_d_resistance_and_reactance(tmp_path, real, imag, scale, sign):
    path = write(tmp_path, "rect.csv", ["Frequency (Hz)", real, imag],
                 [F, Z.real / scale, sign * Z.imag / scale])
    m = read_measurement(path)
    assert_z(m)
    assert m.provenance.form == "z_rect"


@pytest.mark.parametrize("in_db", [True, False])
def test_form_e_transfer_ratio_against_a_reference_resistor(tmp_path, in_db):
    r_ref = 4.7
    h = Z / r_ref  # V(part) / V(reference) = Z / R_ref; dB = 20 log10 |h| (common practice, no source)
    header = ["Frequency (Hz)", "Gain (dB)" if in_db else "Ratio", "Phase (deg)"]
    path = write(tmp_path, "ratio.csv", header, [F, 20 * np.log10(abs(h)) if in_db else abs(h), deg(h)])
    m = read_measurement(path, ReadOptions(reference=r_ref))
    assert_z(m, rel=1e-11)
    assert m.provenance.form == "ratio"
    with pytest.raises(InputError, match="pass --reference"):
        read_measurement(path)


def test_phase_of_v_relative_to_i_by_map(tmp_path):
    path = write(tmp_path, "vphase.csv",
                 ["Frequency (Hz)", "Voltage amplitude (V)", "Current (A)", "Phase (deg)"],
                 [F, abs(V_PHASOR), abs(I_PHASOR), deg(Z)])
    with pytest.raises(InputError, match=r"--map z_phase='Phase \(deg\)'"):
        read_measurement(path)
    assert_z(read_measurement(path, ReadOptions(column_map={"z_phase": "phase (deg)"})))


# --- layouts --------------------------------------------------------------------------------------------

PREAMBLE = ("Instrument: bench analyzer", "Date: 2024-05-17 10:31", "Operator; bench 2", "")


@pytest.mark.parametrize(("delimiter", "decimal"), [
    (",", "."), (";", ","), ("\t", "."), ("\t", ","), (";", "."), ("   ", "."),
])
def test_delimiters_decimal_marks_and_preamble(tmp_path, delimiter, decimal):
    path = write(tmp_path, "layout.txt", ["Frequency/Hz", "Z_Mag", "Z_Phase"], [F, abs(Z), deg(Z)],
                 delimiter=delimiter, decimal=decimal, preamble=PREAMBLE)
    m = read_measurement(path)
    assert_z(m)
    assert any("preamble" in s for s in m.provenance.steps)


@pytest.mark.parametrize(("encoding", "bom"), [("utf-8", True), ("utf-16", False), ("latin-1", False),
                                               ("utf-8", False)])
def test_encodings_with_micro_sign(tmp_path, encoding, bom):
    # micro = 1e-6 (BIPM SI Brochure, from memory); the UTF-8 byte-order mark is EF BB BF (Unicode
    # standard, from memory)
    path = write(tmp_path, "enc.csv", ["Frequency (kHz)", "Voltage (µV)", "Voltage phase (°)",
                                       "Current (µA)", "Current phase (°)"],
                 [F / 1e3, 1e6 * abs(V_PHASOR), deg(V_PHASOR), 1e6 * abs(I_PHASOR), deg(I_PHASOR)],
                 encoding=encoding, bom=bom)
    assert_z(read_measurement(path))


def test_units_row_below_the_header_and_rows_in_any_order(tmp_path):
    path = tmp_path / "units_row.csv"
    lines = ["Frequency,Impedance,Phase", "kHz,Ohm,deg"]
    for k in [3, 0, 5, 1, 4, 2]:
        lines.append(f"{F[k] / 1e3:.17g},{abs(Z[k]):.17g},{deg(Z[k]):.17g}")
    path.write_text("\n".join(lines) + "\n")
    m = read_measurement(path)
    assert_z(m)
    assert any("sorted 6 rows" in s for s in m.provenance.steps)


def test_provenance_records_file_hash_and_never_touches_the_input(tmp_path):
    path = write(tmp_path, "p.csv", ["F(Hz)", "Z Mag", "Z Phase (rad)", "Temperature (°C)"],
                 [F, abs(Z), np.angle(Z), np.full(F.size, 23.0)])
    before = path.read_bytes()
    m = read_measurement(path)
    assert path.read_bytes() == before
    assert m.provenance.source == str(path)
    assert m.provenance.sha256 == hashlib.sha256(before).hexdigest()
    assert any("'Temperature (°C)'" in s and "ignored column" in s for s in m.provenance.steps)


def test_touchstone_suffixes_go_to_the_touchstone_reader(tmp_path, monkeypatch):
    import fitz_tool.readers.touchstone as touchstone

    seen = []
    monkeypatch.setattr(touchstone, "read_touchstone", lambda path, options: seen.append(path) or "ok")
    assert read_measurement(tmp_path / "part.S2P", ReadOptions(through="shunt")) == "ok"
    assert read_measurement(tmp_path / "part.s1p") == "ok"
    assert len(seen) == 2


# --- recognition refused, and --map ---------------------------------------------------------------------

def test_unrecognised_headers_are_listed_with_a_map_line(tmp_path):
    path = write(tmp_path, "odd.csv", ["Sweep", "Trace 1", "Trace 2"], [F, abs(Z), deg(Z)])
    with pytest.raises(InputError) as err:
        read_measurement(path)
    text = str(err.value)
    assert "'Sweep', 'Trace 1', 'Trace 2'" in text and "--map frequency=" in text
    m = read_measurement(path, ReadOptions(column_map={"frequency": "Sweep", "z_magnitude": "#2",
                                                       "z_phase": "Trace 2"}))
    assert_z(m)


def test_two_candidates_for_one_role_are_refused(tmp_path):
    path = write(tmp_path, "two.csv",
                 ["Frequency (Hz)", "V1 (V)", "V2 (V)", "Phase V (deg)", "I (A)", "Phase I (deg)"],
                 [F, abs(V_PHASOR), abs(V_PHASOR) * 2, deg(V_PHASOR), abs(I_PHASOR), deg(I_PHASOR)])
    with pytest.raises(InputError, match=r"'V1 \(V\)' and 'V2 \(V\)' could both be v_amplitude; .*--map"):
        read_measurement(path)
    assert_z(read_measurement(path, ReadOptions(column_map={"v_amplitude": "V1 (V)"})))


@pytest.mark.parametrize(("column_map", "message"), [
    ({"voltage": "V"}, "unknown role"), ({"frequency": "Nope"}, "no such column"),
])
def test_bad_map_entries(tmp_path, column_map, message):
    path = write(tmp_path, "m.csv", ["Frequency (Hz)", "|Z|", "Phase"], [F, abs(Z), deg(Z)])
    with pytest.raises(InputError, match=message):
        read_measurement(path, ReadOptions(column_map=column_map))


# --- bad data -------------------------------------------------------------------------------------------

def polar_file(tmp_path, rows, delimiter=","):
    path = tmp_path / "bad.csv"
    path.write_text("Frequency (Hz),|Z| (ohm),Phase (deg)\n" + "\n".join(rows) + "\n")
    return path


GOOD = [f"{F[k]:.17g},{abs(Z[k]):.17g},{deg(Z[k]):.17g}" for k in range(F.size)]


@pytest.mark.parametrize(("bad_row", "reason"), [
    ("5000,,12", "missing"), ("5000,NaN,12", "missing"), ("5000,***,12", "missing"), ("0,3.0,1.0", "0 Hz"),
])
def test_rows_dropped_with_a_counted_warning(tmp_path, bad_row, reason):
    m = read_measurement(polar_file(tmp_path, GOOD[:2] + [bad_row] + GOOD[2:]))
    assert_z(m)
    assert len(m.provenance.warnings) == 1
    assert "dropped 1 row(s)" in m.provenance.warnings[0] and reason in m.provenance.warnings[0]
    assert "line(s) 4" in m.provenance.warnings[0]


@pytest.mark.parametrize(("bad_row", "message"), [
    ("5000,abc,12", r"line 4, column '\|Z\| \(ohm\)': 'abc' is not a number"),
    ("-5000,3.0,12", r"line 4, column 'Frequency \(Hz\)': negative"),
    ("5000,-3.0,12", r"line 4, column '\|Z\| \(ohm\)': negative"),
])
def test_bad_cells_are_clean_errors(tmp_path, bad_row, message):
    with pytest.raises(InputError, match=message):
        read_measurement(polar_file(tmp_path, GOOD[:2] + [bad_row] + GOOD[2:]))


def test_duplicate_frequencies(tmp_path):
    m = read_measurement(polar_file(tmp_path, GOOD + [GOOD[2]]))
    assert_z(m)
    assert "dropped 1 repeated row(s)" in m.provenance.warnings[0]
    different = GOOD[2].split(",")[0] + ",1.0,0.0"
    with pytest.raises(InputError, match="lines 4 and 8 are both at 100000 Hz"):
        read_measurement(polar_file(tmp_path, GOOD + [different]))


def test_zero_current_rows_are_dropped(tmp_path):
    columns = [F, abs(V_PHASOR), deg(V_PHASOR), abs(I_PHASOR), deg(I_PHASOR)]
    columns[3] = columns[3].copy()
    columns[3][1] = 0.0
    path = write(tmp_path, "zero_i.csv",
                 ["Frequency (Hz)", "V (V)", "Phase V (deg)", "I (A)", "Phase I (deg)"], columns)
    m = read_measurement(path)
    assert len(m) == F.size - 1
    assert "zero current" in m.provenance.warnings[0]


@pytest.mark.parametrize(("text", "message"), [
    ("Frequency;Z;Phase\n1,5;2.5;3,0\n", "both decimal points"),
    ("1000,2,3\n2000,2,3\n", "no header line"),
    ("just words\nno numbers here\n", "no table of numbers"),
])
def test_unreadable_layouts(tmp_path, text, message):
    path = tmp_path / "x.csv"
    path.write_text(text)
    with pytest.raises(InputError, match=message):
        read_measurement(path)


def test_cli_reports_one_line_without_traceback(tmp_path, capsys):
    path = write(tmp_path, "vsh.csv", ["Frequency (Hz)", "V(DUT) (V)", "Phase V (deg)", "V(shunt) (V)",
                                       "Phase shunt (deg)"],
                 [F, abs(V_PHASOR), deg(V_PHASOR), 0.1 * abs(I_PHASOR), deg(I_PHASOR)])
    assert main(["inspect", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err and "--shunt" in err and str(path) in err
    assert main(["inspect", str(path), "--shunt", "100m"]) == 0
    assert "points    6" in capsys.readouterr().out
