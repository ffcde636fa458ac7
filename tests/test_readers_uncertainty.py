"""Stated standard-uncertainty columns beside |Z|/phase or R/X become absolute per-point sigmas of ln Z.

Check values: an impedance computed here with numpy (a 1 ohm + 10 uH part with 50 pF across it); the
propagation to ln Z is checked against the first-order formula of the GUM (JCGM 100:2008, 5.1.2) evaluated
with the `uncertainties` package.
"""

import math

import numpy as np
import pytest
from uncertainties import ufloat, umath

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

F = np.array([1e3, 1e4, 1e5, 1e6, 1e7])
W = 2 * np.pi * F
Z = 1 / (1 / (1.0 + 1j * W * 10e-6) + 1j * W * 50e-12)
U_REL = np.array([0.001, 0.002, 0.003, 0.004, 0.005])
U_DEG = np.array([0.05, 0.1, 0.15, 0.2, 0.25])


def write(tmp_path, header, columns, name="u.csv"):
    lines = [",".join(header)] + [",".join(f"{x:.17g}" for x in row) for row in np.column_stack(columns)]
    path = tmp_path / name
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.mark.parametrize(("u_mag_header", "u_mag"), [
    ("u(|Z|) (%)", U_REL * 100), ("|Z| sigma (Ohm)", U_REL * abs(Z)),
    ("sigma |Z| (mOhm)", U_REL * abs(Z) * 1e3),
])
def test_polar_uncertainties_become_absolute_sigmas(tmp_path, u_mag_header, u_mag):
    path = write(tmp_path, ["Frequency (Hz)", "|Z| (Ohm)", u_mag_header, "Phase (deg)", "Phase std (deg)"],
                 [F, abs(Z), u_mag, np.degrees(np.angle(Z)), U_DEG])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    np.testing.assert_allclose(m.sigma_lnmag, U_REL, rtol=1e-12)  # u(ln|Z|) = u(|Z|) / |Z| (GUM 5.1.2)
    np.testing.assert_allclose(m.sigma_phase, np.radians(U_DEG), rtol=1e-12)
    assert m.sigma_absolute
    assert m.provenance.columns["u_z_phase"] == "Phase std (deg)"
    assert any("stated standard uncertainties (k = 1)" in s for s in m.provenance.steps)
    assert "stated standard uncertainty" in m.provenance.description


def test_rectangular_uncertainties_propagate_to_ln_z(tmp_path):
    u_r, u_x = 0.002 * np.ones(F.size), 0.01 * abs(Z.imag)
    path = write(tmp_path, ["Frequency (Hz)", "R (Ohm)", "u(R) (Ohm)", "X (Ohm)", "u(X) (Ohm)"],
                 [F, Z.real, u_r, Z.imag, u_x])
    m = read_measurement(path)
    for k in range(F.size):
        # first-order propagation with `uncertainties` (GUM, JCGM 100:2008, 5.1.2)
        r, x = ufloat(Z.real[k], u_r[k]), ufloat(Z.imag[k], u_x[k])
        ln_mag = 0.5 * umath.log(r ** 2 + x ** 2)
        phase = umath.atan2(x, r)
        assert m.sigma_lnmag[k] == pytest.approx(ln_mag.std_dev, rel=1e-9)
        assert m.sigma_phase[k] == pytest.approx(phase.std_dev, rel=1e-9)


def test_uncertainty_roles_by_map(tmp_path):
    path = write(tmp_path, ["a", "b", "c", "d", "e"],
                 [F, abs(Z), np.degrees(np.angle(Z)), U_REL * 100, np.radians(U_DEG)])
    column_map = {"frequency": "a", "z_magnitude": "b", "z_phase": "c", "u_z_magnitude": "d",
                  "u_z_phase": "e"}
    m = read_measurement(path, ReadOptions(column_map=column_map))  # no unit: ohm and deg, recorded
    np.testing.assert_allclose(m.sigma_lnmag, U_REL * 100 / abs(Z), rtol=1e-12)
    np.testing.assert_allclose(m.sigma_phase, np.radians(np.radians(U_DEG)), rtol=1e-12)
    assert m.provenance.units["u_z_magnitude"] == "ohm (assumed)"
    path = write(tmp_path, ["a", "b", "c", "d (%)", "e (rad)"],
                 [F, abs(Z), np.degrees(np.angle(Z)), U_REL * 100, np.radians(U_DEG)], "v.csv")
    column_map.update(u_z_magnitude="d (%)", u_z_phase="e (rad)")
    m = read_measurement(path, ReadOptions(column_map=column_map))
    np.testing.assert_allclose(m.sigma_lnmag, U_REL, rtol=1e-12)
    np.testing.assert_allclose(m.sigma_phase, np.radians(U_DEG), rtol=1e-12)


def test_one_of_a_pair_alone_and_bad_values_are_refused(tmp_path):
    path = write(tmp_path, ["Frequency (Hz)", "|Z| (Ohm)", "u(|Z|) (%)", "Phase (deg)"],
                 [F, abs(Z), U_REL * 100, np.degrees(np.angle(Z))])
    with pytest.raises(InputError, match="one part only"):
        read_measurement(path)
    path = write(tmp_path, ["Frequency (Hz)", "|Z| (Ohm)", "u(|Z|) (%)", "Phase (deg)", "u(Phase) (deg)"],
                 [F, abs(Z), U_REL * 100, np.degrees(np.angle(Z)), [0.1, 0.1, 0.0, 0.1, 0.1]], "z.csv")
    with pytest.raises(InputError, match=r"line 4, column 'u\(Phase\) \(deg\)'.*above 0"):
        read_measurement(path)
    path = write(tmp_path, ["Frequency (Hz)", "R (Ohm)", "X (Ohm)", "spread"], [F, Z.real, Z.imag, U_REL],
                 "r.csv")
    with pytest.raises(InputError, match="u_z_real / u_z_imag"):
        read_measurement(path, ReadOptions(column_map={"u_z_magnitude": "spread"}))


def test_rows_stay_aligned_with_their_sigmas_when_sorted_and_dropped(tmp_path):
    order = [4, 2, 0, 3, 1]
    mag, ph = abs(Z), np.degrees(np.angle(Z))
    path = write(tmp_path, ["Frequency (Hz)", "|Z| (Ohm)", "u(|Z|) (%)", "Phase (deg)", "u(Phase) (deg)"],
                 [F[order], mag[order], (U_REL * 100)[order], ph[order], U_DEG[order]])
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.sigma_lnmag, U_REL, rtol=1e-12)


def test_description_in_words_and_in_the_inspect_output(tmp_path, capsys):
    shunt = 0.1
    i = 0.02 * np.ones(F.size)
    v = Z * i
    path = write(tmp_path, ["Freq (Hz)", "V part (V)", "Phase V (deg)", "V shunt (V)", "Phase shunt (deg)"],
                 [F, abs(v), np.degrees(np.angle(v)), i * shunt, np.zeros(F.size)])
    m = read_measurement(path, ReadOptions(shunt=shunt))
    assert m.provenance.description == "voltage across the part and across a 0.1 ohm shunt"
    assert main(["inspect", str(path), "--shunt", "0.1"]) == 0
    assert "read as   voltage across the part and across a 0.1 " in capsys.readouterr().out
    assert not math.isnan(m.impedance[0].real)
