"""Every entry of the table of input forms is reachable from a file and reads a known impedance back.

Each form's columns are computed here from a known Z with the textbook relations (common practice, no
source): Z = |Z| e^(j phi); Z = R + jX; Z = V / I with a shunt current I = V_shunt / R_shunt; a transfer
ratio H = V_part / V_ref = Z / R_ref; series Cs-Rs: Z = Rs + 1 / (j w Cs), D = w Cs Rs, Q = 1 / D; series
Ls-Rs: Z = Rs + j w Ls, Q = w Ls / Rs; parallel Cp-Rp: Y = 1 / Rp + j w Cp, D = 1 / (w Cp Rp); parallel
Lp-Rp: Y = 1 / Rp + 1 / (j w Lp), Q = Rp / (w Lp). Values are written with 17 significant digits.
"""

import numpy as np
import pytest

from fitz_tool.outputs.wording import describe_form
from fitz_tool.readers import ReadOptions, read_measurement
from fitz_tool.readers.forms import INPUT_FORMS, SHUNT_FORM

F = np.array([1e3, 1e4, 1e5, 1e6])
W = 2 * np.pi * F
Z_CAP = 2.0 + 3e2 / np.sqrt(F) - 1j / (W * 4.7e-9)  # capacitive: X < 0
Z_IND = 0.5 + 1e-3 * np.sqrt(F) + 1j * W * 2.2e-6  # inductive: X > 0


def _series(z, reactive):
    return {"Rs (Ohm)": z.real, reactive[0]: reactive[1](z.imag)}


def _lcr_columns():
    """LCR form -> (the Z it holds, header -> column)."""
    cs, ls = -1 / (W * Z_CAP.imag), Z_IND.imag / W
    y_cap, y_ind = 1 / Z_CAP, 1 / Z_IND
    cp, rp_c = y_cap.imag / W, 1 / y_cap.real
    lp, rp_l = -1 / (W * y_ind.imag), 1 / y_ind.real
    d_cs, d_cp = W * cs * Z_CAP.real, 1 / (W * cp * rp_c)
    q_ls, q_lp = W * ls / Z_IND.real, rp_l / (W * lp)
    return {
        "lcr_cs_rs": (Z_CAP, {"Cs (F)": cs, "Rs (Ohm)": Z_CAP.real}),
        "lcr_cs_d": (Z_CAP, {"Cs (F)": cs, "D": d_cs}),
        "lcr_cs_q": (Z_CAP, {"Cs (F)": cs, "Q": 1 / d_cs}),
        "lcr_ls_rs": (Z_IND, {"Ls (H)": ls, "Rs (Ohm)": Z_IND.real}),
        "lcr_ls_q": (Z_IND, {"Ls (H)": ls, "Q": q_ls}),
        "lcr_ls_d": (Z_IND, {"Ls (H)": ls, "D": 1 / q_ls}),
        "lcr_cp_rp": (Z_CAP, {"Cp (F)": cp, "Rp (Ohm)": rp_c}),
        "lcr_cp_d": (Z_CAP, {"Cp (F)": cp, "D": d_cp}),
        "lcr_cp_q": (Z_CAP, {"Cp (F)": cp, "Q": 1 / d_cp}),
        "lcr_lp_rp": (Z_IND, {"Lp (H)": lp, "Rp (Ohm)": rp_l}),
        "lcr_lp_q": (Z_IND, {"Lp (H)": lp, "Q": q_lp}),
        "lcr_lp_d": (Z_IND, {"Lp (H)": lp, "D": 1 / q_lp}),
    }


SHUNT, REFERENCE = 0.1, 50.0
V = 0.3 * np.exp(1j * np.radians([10.0, -40.0, 75.0, 170.0]))  # part voltage phasors, V peak
CASES = {  # table form -> (recorded form, the Z it holds, header -> column, options)
    "z_polar": ("z_polar", Z_CAP, {"|Z| (Ohm)": np.abs(Z_CAP), "Phase (deg)": np.degrees(np.angle(Z_CAP))},
                {}),
    "z_rect": ("z_rect", Z_IND, {"R (Ohm)": Z_IND.real, "X (Ohm)": Z_IND.imag}, {}),
    "v_i": ("v_i_phasors", Z_CAP, {"V (V)": np.abs(V), "V phase (deg)": np.degrees(np.angle(V)),
                                   "I (A)": np.abs(V / Z_CAP),
                                   "I phase (deg)": np.degrees(np.angle(V / Z_CAP))},
            {}),
    "v_i_difference": ("v_i_phasors", Z_IND, {"V (V)": np.abs(V), "I (A)": np.abs(V / Z_IND),
                                              "Phase(Z) (deg)": np.degrees(np.angle(Z_IND))}, {}),
    "ratio": ("ratio", Z_CAP, {"Gain": np.abs(Z_CAP / REFERENCE),
                               "Gain phase (deg)": np.degrees(np.angle(Z_CAP))}, {"reference": REFERENCE}),
    **{form: (form, z, columns, {}) for form, (z, columns) in _lcr_columns().items()},
}


def _write(tmp_path, columns, name="forms.csv"):
    headers = ["Frequency (Hz)", *columns]
    rows = [",".join(repr(float(x)) for x in row) for row in zip(F, *columns.values(), strict=True)]
    path = tmp_path / name
    path.write_text(",".join(headers) + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_every_form_of_the_table_has_a_case():
    assert set(CASES) == set(INPUT_FORMS)


@pytest.mark.parametrize("form", list(INPUT_FORMS))
def test_each_form_is_reached_by_its_headers_and_reads_the_known_impedance(tmp_path, form):
    recorded, z, columns, options = CASES[form]
    m = read_measurement(_write(tmp_path, columns), ReadOptions(**options))
    assert m.provenance.form == recorded
    assert set(m.provenance.columns) == set(INPUT_FORMS[form].roles)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-12)
    np.testing.assert_allclose(m.impedance, z, rtol=1e-9)
    words = describe_form(m)
    assert words == m.provenance.description and "_" not in words


@pytest.mark.parametrize("form", ["v_i", "v_i_difference"])
def test_v_i_forms_with_a_shunt_voltage_are_recorded_as_shunt_measurements(tmp_path, form):
    _, z, columns, _ = CASES[form]
    shunted = {("Shunt (V)" if h == "I (A)" else "Shunt phase (deg)" if h == "I phase (deg)" else h):
               (c * SHUNT if h == "I (A)" else c) for h, c in columns.items()}
    m = read_measurement(_write(tmp_path, shunted), ReadOptions(shunt=SHUNT))
    assert m.provenance.form == SHUNT_FORM
    np.testing.assert_allclose(m.impedance, z, rtol=1e-9)
    assert m.provenance.description == "voltage across the part and across a 0.1 ohm shunt"


def test_each_form_is_reached_by_map_with_neutral_headers(tmp_path):
    for form, (recorded, z, columns, options) in CASES.items():
        roles = INPUT_FORMS[form].roles[1:]
        units = [h[h.index("("):] if "(" in h else "" for h in columns]
        pairs = zip(units, columns.values(), strict=True)
        neutral = {f"col{k} {u}".strip(): c for k, (u, c) in enumerate(pairs)}
        path = _write(tmp_path, neutral, f"{form}.csv")
        column_map = {"frequency": "#1", **{role: f"#{k + 2}" for k, role in enumerate(roles)}}
        m = read_measurement(path, ReadOptions(column_map=column_map, **options))
        assert m.provenance.form == recorded, form
        np.testing.assert_allclose(m.impedance, z, rtol=1e-9, err_msg=form)


def test_ignored_options_are_named_in_words_not_form_codes(tmp_path):
    _, _, columns, _ = CASES["z_polar"]
    m = read_measurement(_write(tmp_path, columns), ReadOptions(shunt=SHUNT, reference=REFERENCE))
    text = " ".join(m.provenance.warnings)
    assert "--shunt 0.1 ignored" in text and "--reference 50 ignored" in text
    assert "impedance magnitude and phase" in text and "z_polar" not in text
