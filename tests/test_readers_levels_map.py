"""Channel levels in dB, angular frequency and text columns, by their headers and by --map, and the refusals.

Check values: an impedance computed here with numpy (a 1 ohm + 10 uH part with 50 pF across it); the levels
are written with scikit-rf's ``mathFunctions.mag_2_db`` (20 log10 of an amplitude ratio) and ``mag_2_db10``
(10 log10 of a power ratio), a reference library. The level references (dBV re 1 V rms, dBmV re 1 mV rms,
dBuV re 1 uV rms, dBA re 1 A rms; dBm re 1 mW, P = V_rms^2 / R into the stated reference impedance) and
w = 2 pi f are common practice, no source.
"""

import csv
import math
import re

import numpy as np
import pytest
from skrf.mathFunctions import mag_2_db, mag_2_db10

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

F = np.array([1e3, 1e4, 1e5, 1e6, 1e7])
W = 2 * np.pi * F
Z = 1 / (1 / (1.0 + 1j * W * 10e-6) + 1j * W * 50e-12)
I_PK = 0.02 * np.exp(1j * np.linspace(-0.5, 2.5, F.size))  # A peak
V_PK = Z * I_PK
SHUNT = 0.1
V_I_ROLES = ["frequency", "v_amplitude", "v_phase", "i_amplitude", "i_phase"]
POLAR_ROLES = ["frequency", "z_magnitude", "z_phase"]


def write(tmp_path, header, columns, name="l.csv", delimiter=","):
    """A table as a spreadsheet writes it (csv module: cells holding the delimiter or a quote are quoted)."""
    path = tmp_path / name
    with path.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle, delimiter=delimiter, lineterminator="\n")
        writer.writerow(header)
        writer.writerows([c if isinstance(c, str) else f"{c:.17g}" for c in row]
                         for row in zip(*columns, strict=True))
    return path


def deg(x):
    return np.degrees(np.angle(x))


def rms(x):
    return np.abs(x) / math.sqrt(2)  # rms of a sinusoid of peak |x| (common practice, no source)


LEVELS = [  # unit, reference amplitude (rms) of the level, V or A
    ("dBV", 1.0), ("dBmV", 1e-3), ("dBuV", 1e-6), ("dBµV", 1e-6),
]
CURRENT_LEVELS = [("dBA", 1.0), ("dBmA", 1e-3), ("dBuA", 1e-6)]


@pytest.mark.parametrize("route", ["headers", "map"])
@pytest.mark.parametrize(("v_unit", "v_ref"), LEVELS)
@pytest.mark.parametrize(("i_unit", "i_ref"), CURRENT_LEVELS)
def test_levels_written_by_scikit_rf_read_back(tmp_path, route, v_unit, v_ref, i_unit, i_ref):
    names = (["Frequency (Hz)", f"Part level ({v_unit})", "Part phase (deg)", f"Current ({i_unit})",
              "Current phase (deg)"] if route == "headers" else
             ["a (Hz)", f"b [{v_unit}]", "c (deg)", f"d {i_unit}", "e_deg"])
    path = write(tmp_path, names, [F, mag_2_db(rms(V_PK) / v_ref), deg(V_PK), mag_2_db(rms(I_PK) / i_ref),
                                   deg(I_PK)])
    column_map = dict(zip(V_I_ROLES, names, strict=True)) if route == "map" else {}
    m = read_measurement(path, ReadOptions(column_map=column_map))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


@pytest.mark.parametrize("route", ["headers", "map"])
@pytest.mark.parametrize("reference", [50.0, 600.0])
def test_dbm_levels_written_by_scikit_rf_read_back_for_the_stated_impedance(tmp_path, route, reference):
    power_part = rms(V_PK) ** 2 / reference  # W into the reference impedance
    power_shunt = rms(I_PK * SHUNT) ** 2 / reference
    names = (["Freq (kHz)", "Part level (dBm)", "Part phase (deg)", "Shunt level (dBm)", "Shunt phase (deg)"]
             if route == "headers" else ["f kHz", "p1 dBm", "p2 deg", "s1_dBm", "s2_deg"])
    path = write(tmp_path, names, [F / 1e3, mag_2_db10(power_part / 1e-3), deg(V_PK),
                                   mag_2_db10(power_shunt / 1e-3), deg(I_PK)])
    column_map = dict(zip(V_I_ROLES, names, strict=True)) if route == "map" else {}
    with pytest.raises(InputError, match="pass --dbm-reference OHMS"):
        read_measurement(path, ReadOptions(shunt=SHUNT, column_map=column_map))
    m = read_measurement(path, ReadOptions(shunt=SHUNT, dbm_reference=reference, column_map=column_map))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.form == "v_shunt"


def test_dbm_spot_values():
    # 0 dBm is 1 mW: sqrt(1 mW * 50 ohm) = 0.2236 V rms, sqrt(1 mW * 600 ohm) = 0.7746 V rms
    # (common practice, no source)
    from fitz_tool.readers.forms import _level_to_amplitude
    from fitz_tool.readers.headers import parse_header

    for reference, volts in ((50.0, math.sqrt(0.05)), (600.0, math.sqrt(0.6))):
        peak, _ = _level_to_amplitude("v_amplitude", parse_header("P (dBm)", 0), np.array([0.0, 10.0]),
                                      reference, "x")
        np.testing.assert_allclose(peak / math.sqrt(2), [volts, volts * math.sqrt(10)], rtol=1e-14)


@pytest.mark.parametrize("route", ["headers", "map"])
def test_a_gain_in_db_and_a_magnitude_in_db_ohm_read_back(tmp_path, route):
    reference = 50.0
    h = Z / reference
    names = ["Frequency (Hz)", "Gain (dB)", "Phase (deg)"] if route == "headers" else ["x1", "x2 dB", "x3"]
    path = write(tmp_path, names, [F, mag_2_db(np.abs(h)), deg(h)])
    column_map = dict(zip(["frequency", "ratio_magnitude", "ratio_phase"], names, strict=True)) \
        if route == "map" else {}
    m = read_measurement(path, ReadOptions(reference=reference, column_map=column_map))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    names = (["Frequency (Hz)", "|Z| (dBOhm)", "Phase (deg)"] if route == "headers"
             else ["x1", "x2_dBOhm", "x3"])
    path = write(tmp_path, names, [F, mag_2_db(np.abs(Z)), deg(Z)], "dbohm.csv")
    column_map = dict(zip(POLAR_ROLES, names, strict=True)) if route == "map" else {}
    m = read_measurement(path, ReadOptions(column_map=column_map))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


@pytest.mark.parametrize(("header", "scale"), [("w (rad/s)", 1.0), ("omega [krad/s]", 1e-3), ("w_rad/s", 1.0),
                                               ("#1 (rad/s)", 1.0)])
def test_angular_frequency_on_the_map_route(tmp_path, header, scale):
    if header.startswith("#"):
        path = tmp_path / "h.txt"
        path.write_text("\n".join(f"{w * scale:.17g} {z.real:.17g} {z.imag:.17g}" for w, z in zip(W, Z,
                                                                                                  strict=True)))
        column_map = {"frequency": header, "z_real": "#2", "z_imag": "#3"}
    else:
        path = write(tmp_path, [header, "r", "x"], [W * scale, Z.real, Z.imag])
        column_map = {"frequency": header, "z_real": "r", "z_imag": "x"}
    m = read_measurement(path, ReadOptions(column_map=column_map))
    np.testing.assert_allclose(m.frequency, F, rtol=1e-14)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert any("angular frequency" in s for s in m.provenance.steps)


@pytest.mark.parametrize(("header", "message"), [
    ("b (dBu)", "unit 'dBu' is not understood"),          # dB re 0.7746 V: not among the units understood
    ("b (dBFS)", "unit 'dBFS' is not understood"),        # full scale of an unknown converter
    ("b (dB)", "column 'b (dB)' is in 'dB', which does not fit v_amplitude"),  # a ratio is no level
    ("b (A)", "column 'b (A)' is in 'A', which does not fit v_amplitude"),
])
def test_levels_that_cannot_be_read_are_refused_on_the_map_route(tmp_path, header, message):
    names = ["a (Hz)", header, "c (deg)", "d (A)", "e (deg)"]
    path = write(tmp_path, names, [F, np.full(F.size, -10.0), deg(V_PK), np.abs(I_PK), deg(I_PK)])
    column_map = dict(zip(V_I_ROLES, names, strict=True))
    with pytest.raises(InputError, match=re.escape(message)):
        read_measurement(path, ReadOptions(column_map=column_map))


def test_a_shunt_voltage_on_the_map_route_needs_the_shunt(tmp_path, capsys):
    names = ["a (Hz)", "b (mV rms)", "c (deg)", "d (mV rms)", "e (deg)"]
    path = write(tmp_path, names, [F, rms(V_PK) * 1e3, deg(V_PK), rms(I_PK * SHUNT) * 1e3, deg(I_PK)])
    maps = [f"--map={r}={h}" for r, h in zip(V_I_ROLES, names, strict=True)]
    assert main(["inspect", str(path), *maps]) == 2
    err = capsys.readouterr().err
    assert "pass --shunt OHMS" in err and len(err.strip().splitlines()) == 1
    assert main(["inspect", str(path), *maps, "--shunt", "0.1"]) == 0
    m = read_measurement(path, ReadOptions(shunt=SHUNT, column_map=dict(a.split("=", 1)[1].split("=", 1)
                                                                       for a in maps)))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


TEXT_KINDS = {  # header -> cells of one text column of each kind a bench export carries
    "Empty": ["", "", "", "", ""],
    "Time": ["10:00:00.250", "10:00:00.500", "10:00:00.750", "10:00:01.000", "10:00:01.250"],
    "Timestamp": [f"2026-12-01T10:00:0{k}Z" for k in range(5)],
    "Date": ["01.12.2026"] * 5,
    "Mixed": ["1{d}5", "n/a", "2{d}5", "", "3{d}5"],  # numbers in the file's own decimal mark
    "Bias": ["1{d}5 V"] * 5,
    "Status": ["OK"] * 5,
    "Range": ["AUTO", "AUTO", "10 mA", "10 mA", "AUTO"],
    "Comment": ["note, with a comma; and a semicolon", "", "sweep A", "", 'said "twice"'],
}


@pytest.mark.parametrize("route", ["headers", "map"])
@pytest.mark.parametrize(("delimiter", "decimal"), [(",", "."), (";", ","), ("\t", ",")])
def test_text_columns_of_every_kind_beside_the_numbers(tmp_path, route, delimiter, decimal):
    numbers = [[f"{x:.17g}".replace(".", decimal) for x in column] for column in (F, np.abs(Z), deg(Z))]
    names = ["Frequency (Hz)", "|Z| (Ohm)", "Phase (deg)"] if route == "headers" else ["f1", "f2", "f3"]
    text = {h: [c.replace("{d}", decimal) for c in cells] for h, cells in TEXT_KINDS.items()}
    headers = [*list(text)[:4], names[0], names[1], *list(text)[4:7], names[2], *list(text)[7:]]
    columns = [*list(text.values())[:4], numbers[0], numbers[1], *list(text.values())[4:7], numbers[2],
               *list(text.values())[7:]]
    path = write(tmp_path, headers, columns, delimiter=delimiter)
    column_map = dict(zip(POLAR_ROLES, names, strict=True)) if route == "map" else {}
    m = read_measurement(path, ReadOptions(column_map=column_map))
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.ignored_columns == tuple(TEXT_KINDS)
