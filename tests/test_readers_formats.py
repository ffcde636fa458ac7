"""More bench layouts: bare magnitude/phase, header spellings, LCR-meter readings, header-less tables.

Check values: the impedance of a part computed here with numpy, (1.5 ohm + 22 uH) || 47 pF, written to a
file in the layout under test and read back (a round trip against an independent computation).
"""

import numpy as np
import pytest

from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement
from fitz_tool.readers.headers import parse_header

F = np.logspace(3, 7, 9)
W = 2 * np.pi * F
Z = 1 / (1 / (1.5 + 1j * W * 22e-6) + 1j * W * 47e-12)


def deg(x):
    return np.degrees(np.angle(x))


def write(tmp_path, header, columns, delimiter=",", name="part.txt", encoding="utf-8"):
    lines = [delimiter.join(header) if header else None]
    lines += [delimiter.join(f"{x:.17g}" for x in row) for row in np.column_stack(columns)]
    path = tmp_path / name
    path.write_bytes(("\n".join(x for x in lines if x is not None) + "\n").encode(encoding))
    return path


# --- a bare magnitude and phase -------------------------------------------------------------------------

@pytest.mark.parametrize(("header", "delimiter"), [
    (["freq", "mag", "phase"], " "), (["Frequency", "Magnitude", "Phase"], "  "),
    (["Freq", "Mag", "Phase (deg)"], "\t"), (["f/kHz", "Mag", "Theta"], ";"),
])
def test_bare_magnitude_and_phase_is_impedance_with_a_warning(tmp_path, header, delimiter):
    scale = 1e3 if "kHz" in header[0] else 1.0
    path = write(tmp_path, header, [F / scale, abs(Z), deg(Z)], delimiter)
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.form == "z_polar"
    assert any("read as |Z| in ohm" in w for w in m.provenance.warnings)


def test_bare_magnitude_beside_a_voltage_is_not_taken_as_impedance(tmp_path):
    path = write(tmp_path, ["freq", "mag", "phase", "V (V)"], [F, abs(Z), deg(Z), abs(Z)])
    with pytest.raises(InputError, match="cannot tell which columns"):
        read_measurement(path)


def test_bare_magnitude_in_db_is_refused_unless_it_says_db_ohm(tmp_path):
    path = write(tmp_path, ["Freq", "Mag(dB)", "Phase"], [F, 20 * np.log10(abs(Z)), deg(Z)], "  ")
    with pytest.raises(InputError, match=r"magnitude in dB with no reference.*--reference.*dBOhm"):
        read_measurement(path)
    path = write(tmp_path, ["Freq", "Mag (dBΩ)", "Phase"], [F, 20 * np.log10(abs(Z)), deg(Z)], "\t")
    m = read_measurement(path)
    # |Z| = 10^(dB/20) ohm (common practice, no source)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


# --- spellings ------------------------------------------------------------------------------------------

# SI prefix multipliers k, M, G, m (BIPM SI Brochure, from memory)
@pytest.mark.parametrize(("freq", "scale"), [
    ("Frequency/Hz", 1.0), ("f/kHz", 1e3), ("Freq(MHz)", 1e6), ("FREQ [GHz]", 1e9), ("freq_khz", 1e3),
])
@pytest.mark.parametrize(("mag", "mag_scale"), [
    ("Z (Ohm)", 1.0), ("|Z|", 1.0), ("Zmag", 1.0), ("Impedance", 1.0), ("|Z| (Ω)", 1.0), ("Z (kΩ)", 1e3),
    ("Z (mΩ)", 1e-3), ("Z (ohms)", 1.0), ("|Z|/Ohm", 1.0),
])
def test_polar_spellings(tmp_path, freq, scale, mag, mag_scale):
    path = write(tmp_path, [freq, mag, "Theta (deg)"], [F / scale, abs(Z) / mag_scale, deg(Z)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


# phases without a unit are degrees, as bench instruments report them (common practice, no source)
@pytest.mark.parametrize(("phase", "to_unit"), [
    ("Theta", np.degrees), ("θ", np.degrees), ("Phase Z", np.degrees), ("arg(Z)", np.degrees),
    ("Phase (°)", np.degrees), ("θ (rad)", lambda x: x), ("phi/deg", np.degrees),
])
def test_phase_spellings(tmp_path, phase, to_unit):
    path = write(tmp_path, ["Frequency (Hz)", "|Z| (Ohm)", phase], [F, abs(Z), to_unit(np.angle(Z))],
                 encoding="latin-1" if "°" in phase else "utf-8")
    np.testing.assert_allclose(read_measurement(path).impedance, Z, rtol=1e-12)


@pytest.mark.parametrize(("real", "imag", "sign"), [
    ("Re(Z)", "Im(Z)", 1), ("Z'", "Z''", 1), ("Zreal", "Zimag", 1), ("R", "X", 1), ("Z' (Ω)", "-Z'' (Ω)", -1),
])
def test_rectangular_spellings(tmp_path, real, imag, sign):
    path = write(tmp_path, ["Frequency (Hz)", real, imag], [F, Z.real, sign * Z.imag])
    np.testing.assert_allclose(read_measurement(path).impedance, Z, rtol=1e-12)


@pytest.mark.parametrize(("header", "convention"), [
    ("U (V)", None), ("Vrms", "rms"), ("Vpp", "pp"), ("Vpk", "peak"), ("V_pp", "pp"),
    ("Voltage (V RMS)", "rms"), ("U/V rms", "rms"),
])
def test_voltage_spellings(header, convention):
    info = parse_header(header, 0)
    assert (info.kind, info.subject, info.convention) == ("amplitude", "voltage", convention)


def test_voltage_and_current_with_u_symbol_and_rms(tmp_path):
    i = 0.01 * np.exp(1j * np.radians(10.0))
    v = Z * i
    path = write(tmp_path, ["f/Hz", "U/V rms", "phi_U/°", "I/A rms", "phi_I/°"],
                 [F, abs(v), deg(v), np.full(F.size, abs(i)), np.full(F.size, 10.0)], name="vi.csv")
    np.testing.assert_allclose(read_measurement(path).impedance, Z, rtol=1e-12)


# --- LCR-meter readings ---------------------------------------------------------------------------------
# The readings are made here from Z with the handbook definitions (common practice, no source):
# series Z = Rs + j X with X = w Ls = -1/(w Cs); parallel Y = 1/Z = 1/Rp + j B with B = w Cp = -1/(w Lp);
# D = Rs w Cs (series C), Q = w Ls / Rs (series L), D = 1/(w Cp Rp), Q = Rp / (w Lp) (parallel).

RS, X = Z.real, Z.imag
Y = 1 / Z
RP, B = 1 / Y.real, Y.imag
CS, LS, CP, LP = -1 / (W * X), X / W, B / W, -1 / (W * B)
D_SERIES, Q_SERIES = RS * W * CS, W * LS / RS  # D of series C; Q of series L
D_PARALLEL, Q_PARALLEL = 1 / (W * CP * RP), RP / (W * LP)  # D of parallel C; Q of parallel L


@pytest.mark.parametrize(("reactive", "reactive_value", "loss", "loss_value"), [
    ("Cs (F)", CS, "Rs (ohm)", RS), ("Cs (nF)", CS * 1e9, "R", RS), ("Ls (H)", LS, "Rs (ohm)", RS),
    ("Ls (uH)", LS * 1e6, "Q", Q_SERIES), ("Cs (F)", CS, "D", D_SERIES),
    ("Cp (pF)", CP * 1e12, "Rp (kΩ)", RP / 1e3),
    ("Lp (mH)", LP * 1e3, "Rp (kΩ)", RP / 1e3), ("Cp (pF)", CP * 1e12, "D", D_PARALLEL),
    ("Lp (mH)", LP * 1e3, "Q", Q_PARALLEL),
    # D and Q of one equivalent are reciprocal (common practice, no source)
    ("Ls (H)", LS, "D", 1 / Q_SERIES), ("Cs (F)", CS, "Q", 1 / D_SERIES),
    ("Cp (pF)", CP * 1e12, "Q", 1 / D_PARALLEL),
    ("Lp (mH)", LP * 1e3, "D", 1 / Q_PARALLEL),
])
def test_lcr_meter_pairs_give_the_impedance_they_were_made_from(tmp_path, reactive, reactive_value, loss,
                                                              loss_value):
    path = write(tmp_path, ["Frequency (Hz)", reactive, loss], [F, reactive_value, loss_value])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)  # handbook relations (common practice, no source)
    assert m.provenance.form.startswith("lcr_")
    assert any("equivalent" in s for s in m.provenance.steps)


def test_lcr_capacitor_at_one_frequency_against_the_handbook(tmp_path):
    # 100 nF with 20 mohm ESR at 10 kHz: Z = 0.02 - j/(2 pi 1e4 1e-7) = 0.02 - j 159.15 ohm
    # (common practice, no source)
    w, c, esr = 2 * np.pi * 1e4, 100e-9, 0.02
    path = tmp_path / "c.csv"
    path.write_text(f"Frequency (kHz),Cs (nF),D\n10,100,{w * c * esr!r}\n")  # D = w C ESR
    z = read_measurement(path).impedance[0]
    assert z.real == pytest.approx(esr, rel=1e-12)
    assert z.imag == pytest.approx(-1 / (w * c), rel=1e-12)
    assert z.imag == pytest.approx(-159.155, rel=1e-5)


def test_lcr_dissipation_in_percent(tmp_path):
    # D in percent is 100 D (common practice, no source)
    path = write(tmp_path, ["Frequency (Hz)", "Cs (F)", "D (%)"], [F, CS, 100 * RS * W * CS])
    np.testing.assert_allclose(read_measurement(path).impedance, Z, rtol=1e-12)


def test_lcr_zero_quality_rows_are_dropped_and_counted(tmp_path):
    q = W * LS / RS
    q[2] = 0.0
    path = write(tmp_path, ["Frequency (Hz)", "Ls (H)", "Q"], [F, LS, q])
    m = read_measurement(path)
    assert len(m) == F.size - 1
    assert "impedance is undefined" in m.provenance.warnings[0]


def test_resistance_and_reactance_still_win_over_lcr(tmp_path):
    path = write(tmp_path, ["Frequency (Hz)", "Rs (ohm)", "X (ohm)", "Cs (F)"], [F, RS, X, CS])
    m = read_measurement(path)
    assert m.provenance.form == "z_rect"
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


# --- header-less tables ---------------------------------------------------------------------------------

def test_headerless_table_is_refused_with_the_map_line_to_use(tmp_path):
    path = write(tmp_path, None, [F, Z.real, Z.imag], "  ")
    with pytest.raises(InputError) as err:
        read_measurement(path)
    assert "--map frequency=#1 --map z_real=#2 --map z_imag=#3" in str(err.value)
    m = read_measurement(path, ReadOptions(column_map={"frequency": "#1", "z_real": "#2", "z_imag": "#3"}))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert any("no header line" in s for s in m.provenance.steps)
