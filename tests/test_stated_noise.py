"""A stated noise level makes the weights absolute: chi-square then tests the model."""

import json

import numpy as np
import pandas as pd
import pytest

from fitz_tool.circuit import Circuit
from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.measurement import Measurement

# An invented 4.7 uF film capacitor with 8 mohm ESR and 12 nH ESL, measured with 0.3 % |Z| and 0.15 deg noise.
TRUE = {"Rs": 8e-3, "Ls": 12e-9, "C1": 4.7e-6}
REL, PHASE_DEG = 3e-3, 0.15


def _bench_file(tmp_path, seed):
    f = np.geomspace(100, 20e6, 151)
    z = Circuit.parse("Rs + Ls + C1").impedance(f, TRUE)
    rng = np.random.default_rng(seed)
    z = z * np.exp(rng.normal(0, REL, f.size) + 1j * np.radians(rng.normal(0, PHASE_DEG, f.size)))
    path = tmp_path / f"film_cap_{seed}.csv"
    pd.DataFrame({"Frequency (Hz)": f, "|Z| (ohm)": np.abs(z), "Phase (deg)": np.degrees(np.angle(z))}
                 ).to_csv(path, index=False)
    return path


def test_a_right_model_with_the_true_noise_level_gives_chi_square_near_its_degrees_of_freedom(tmp_path):
    # With absolute weights chi-square follows a chi-square law with dof = 2N - k: mean dof, standard
    # deviation sqrt(2 dof) (common practice, no source).
    # Five benches: every one within 4 standard deviations.
    for seed in range(5):
        out = tmp_path / f"fit_{seed}.json"
        assert main(["fit", str(_bench_file(tmp_path, seed)), "--model", "capacitor-esr-esl",
                     "--noise", f"{REL * 100}%:{PHASE_DEG}deg", "--json", str(out)]) == 0
        fit = json.loads(out.read_text())["fit"]
        dof = fit["degrees_of_freedom"]
        assert dof == 2 * 151 - 3
        assert abs(fit["chi_square"] - dof) < 4 * np.sqrt(2 * dof)


def test_a_wrong_model_under_stated_noise_shows_a_large_reduced_chi_square(tmp_path, capsys):
    out = tmp_path / "fitting.json"
    assert main(["fit", str(_bench_file(tmp_path, 9)), "--model", "Rs + C1",
                 "--noise", "0.3%:0.15deg", "--json", str(out)]) == 0
    assert json.loads(out.read_text())["fit"]["reduced_chi_square"] > 100


def test_stated_noise_is_recorded_and_refused_where_weights_exist():
    m = Measurement(np.array([1e3, 1e4]), np.array([1 + 1j, 1 + 2j]))
    noisy = m.with_stated_noise(0.01, np.radians(0.5))
    assert noisy.sigma_absolute and noisy.sigma_lnmag[0] == 0.01
    assert noisy.sigma_phase[1] == pytest.approx(np.radians(0.5))
    assert "stated noise" in noisy.provenance.steps[-1]
    with pytest.raises(InputError, match="already carries per-point weights"):
        noisy.with_stated_noise(0.01, 0.01)
    with pytest.raises(InputError, match="above 0"):
        m.with_stated_noise(0.0, 0.01)


@pytest.mark.parametrize("text", ["0.5", "abc:1deg", "1%:xdeg"])
def test_a_bad_noise_option_is_a_one_line_error(tmp_path, capsys, text):
    assert main(["fit", str(_bench_file(tmp_path, 1)), "--model", "R1", "--noise", text]) == 2
    err = capsys.readouterr().err
    assert err.startswith("fitz-tool: error:") and err.count("\n") == 1
