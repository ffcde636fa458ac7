"""The noise model from the data (fitting/noise.py): the likelihood estimate of the variance terms, the
choice against the single shape, and the efficiency it buys on simulated bench files.

Check values: the variances the data were drawn with, and the Cramer-Rao bound from the Fisher information
with the true per-point variance (the lower limit of any unbiased estimator's variance; textbook statistics,
common practice, no source). The files are written and read back, so the reader's noise terms are tested.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import fitz_tool as ft
from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.fitting.noise import BIC_MARGIN, choose_terms, likelihood_thetas
from fitz_tool.measurement import Measurement, NoiseTerm
from tests.noise_cases import F_CAP, capacitor, case_draws, shunt_channels, write_shunt_file


def test_likelihood_recovers_known_variance_components():
    """Residuals drawn with v_i = theta0 + theta1 c_i (each component of ln Z): the ML thetas come back
    within 5 % for 20,000 points (the sampling error of a variance from 40,000 entries is about 1 %)."""
    rng = np.random.default_rng(11)
    n = 20_000
    c = np.logspace(-2, 3, n)
    theta = np.array([1e-6, 4e-8])
    v = theta[0] + theta[1] * c
    e = np.sqrt(np.concatenate([v, v])) * rng.standard_normal(2 * n)  # ln|Z| entries, then phase entries
    columns = np.column_stack([np.ones(2 * n), np.concatenate([c, c])])
    found, _ = likelihood_thetas(e**2, columns)
    assert found == pytest.approx(theta, rel=0.05)


def test_likelihood_recovers_different_magnitude_and_phase_noise():
    """0.1 % in ln|Z| and 0.5 deg in phase: the relative term (both) plus a phase-only term come back as
    (1e-3)^2 and (8.73e-3)^2 - (1e-3)^2 within 5 %."""
    rng = np.random.default_rng(13)
    n = 20_000
    sm, sp = 1e-3, np.radians(0.5)
    e = np.concatenate([sm * rng.standard_normal(n), sp * rng.standard_normal(n)])
    columns = np.column_stack([np.ones(2 * n), np.concatenate([np.zeros(n), np.ones(n)])])
    found, _ = likelihood_thetas(e**2, columns)
    assert found == pytest.approx([sm**2, sp**2 - sm**2], rel=0.05)


def test_bic_keeps_the_single_shape_for_pure_relative_noise_and_leaves_it_for_a_floor():
    rng = np.random.default_rng(12)
    n = 400
    level = np.logspace(-4, 0, n)  # a channel level over 4 decades
    terms = (NoiseTerm("relative", np.ones(n), False, "%", "of |Z|", default=True),
             NoiseTerm("part_floor", 1 / level**2, False, "V", "on the part channel (peak)"))
    z = np.ones(n, dtype=complex)
    pure = 1e-3 * rng.standard_normal(2 * n)
    chosen, scores = choose_terms(terms, pure**2, z)
    assert chosen == (0,)
    floored = pure + 1e-5 / np.concatenate([level, level]) * rng.standard_normal(2 * n)
    chosen, scores = choose_terms(terms, floored**2, z)
    assert chosen == (0, 1) and scores[(0,)] - scores[(0, 1)] > 100 * BIC_MARGIN


def _rms_ratio(results, truth, bound, name):
    errors = np.array([r.parameters[name].value - truth[name] for r in results])
    pulls = np.array([(r.parameters[name].value - truth[name]) / r.parameters[name].stderr for r in results])
    return float(np.sqrt(np.mean(errors**2)) / bound[name]), float(np.sqrt(np.mean(pulls**2)))


def test_a_channel_floor_at_the_series_resonance_is_found_and_the_errors_reach_cramer_rao(tmp_path):
    """Capacitor through a 0.1 ohm shunt, 0.1 % relative noise per channel plus a 1 uV floor that dominates
    where |Z| = ESR: with the noise model, the RMS error is near the Cramer-Rao bound and the reported
    errors are calibrated; the single shape is well above the bound and its ESR error is under-reported."""
    model, truth, bound, measurements = case_draws("b", 40, tmp_path, np.random.default_rng(21))
    estimated = [ft.fit(m, model, intervals="none") for m in measurements]
    single = [ft.fit(m, model, intervals="none", noise_shape="single") for m in measurements]
    assert all("floor" in r.noise_model and "part channel" in r.noise_model for r in estimated)
    for name in truth:
        ratio, calibration = _rms_ratio(estimated, truth, bound, name)
        assert ratio < 1.3 and 0.75 < calibration < 1.35, (name, ratio, calibration)
    best, _ = _rms_ratio(estimated, truth, bound, "Rs")
    ratio, calibration = _rms_ratio(single, truth, bound, "Rs")
    assert ratio > 1.15 and ratio > best + 0.15 and calibration > 1.8


def test_the_estimated_floor_and_per_point_noise_match_the_simulated_ones(tmp_path):
    """One file of 2001 points: the part channel's floor comes back as 1 uV and the per-point sigma of ln Z
    the fit used follows the true one, sqrt(2 x 0.1 %^2 + (1 uV / |V_part|)^2 + (1 uV / |V_shunt|)^2), within
    the sampling error (the relative part and the shunt channel's floor may trade places: the shunt
    channel's level is nearly constant, so the data cannot tell them apart)."""
    truth = {"Rs": 5e-3, "Ls": 1e-9, "C1": 10e-6}
    f = np.logspace(3, np.log10(3e7), 2001)
    z, _ = capacitor(f, truth)
    v_part, v_shunt, variance = shunt_channels(z, 1e-3, 1e-6)
    rng = np.random.default_rng(5)

    def noisy(v):
        return v * (1 + 1e-3 * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))) + 1e-6 * (
            rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))

    path = tmp_path / "cap.csv"
    write_shunt_file(path, f, noisy(v_part), noisy(v_shunt))
    result = ft.fit(ft.read_measurement(path, ft.ReadOptions(shunt=0.1)), "Rs + Ls + C1", intervals="none")
    words = result.noise_model
    floor = words.split("a floor of ")[1].split(" on the part channel")[0]
    value, unit = floor.split()
    assert float(value) * {"nV": 1e-9, "uV": 1e-6}[unit] == pytest.approx(1e-6, rel=0.15)
    assert "from the data; BIC" in words
    ratio = result.measurement.sigma_lnmag / np.sqrt(variance)
    assert np.median(ratio) == pytest.approx(1.0, abs=0.1) and 0.7 < ratio.min() and ratio.max() < 1.3
    assert any(step.startswith("noise model from the data") for step in result.measurement.provenance.steps)


def test_pure_relative_noise_keeps_the_single_shape_and_the_same_numbers(tmp_path):
    model, truth, bound, measurements = case_draws("a", 20, tmp_path, np.random.default_rng(31))
    kept = 0
    for m in measurements:
        estimated = ft.fit(m, model, intervals="none")
        single = ft.fit(m, model, intervals="none", noise_shape="single")
        if "single-shape model" in estimated.noise_model:
            kept += 1
            for name in truth:
                assert estimated.parameters[name].value == single.parameters[name].value
    assert kept >= 19


def test_shunt_through_s21_with_relative_noise_finds_the_relative_s_model(tmp_path):
    """Shunt-through S21 of a 2 mohm part with 0.5 % relative S noise (trace noise): the single shape
    (additive in S) gives errors far above the bound; the model from the data reaches it."""
    model, truth, bound, measurements = case_draws("c", 20, tmp_path, np.random.default_rng(41))
    estimated = [ft.fit(m, model, intervals="none") for m in measurements]
    single = [ft.fit(m, model, intervals="none", noise_shape="single") for m in measurements]
    assert all("% of |S21|" in r.noise_model for r in estimated)
    ratio, calibration = _rms_ratio(estimated, truth, bound, "Rs")
    assert ratio < 1.3 and 0.7 < calibration < 1.4
    assert _rms_ratio(single, truth, bound, "Rs")[0] > 10


def test_stated_uncertainty_disables_the_estimate_and_bad_shapes_are_refused(tmp_path):
    model, _, _, measurements = case_draws("b", 1, tmp_path, np.random.default_rng(1))
    stated = measurements[0].with_stated_noise(0.002, 0.002)
    assert ft.fit(stated, model, intervals="none").noise_model == ""
    with pytest.raises(InputError, match="noise shape"):
        ft.fit(measurements[0], model, noise_shape="guess")


def test_noise_terms_follow_selection_and_are_dropped_when_the_points_change(tmp_path):
    _, _, _, measurements = case_draws("b", 1, tmp_path, np.random.default_rng(2))
    m = measurements[0]
    assert [t.name for t in m.noise_terms] == ["relative", "magnitude", "phase", "jitter",
                                              "part_floor", "sense_floor"]
    part = m.select(m.frequency < 1e6, "band")
    assert all(t.coefficient.size == len(part) for t in part.noise_terms) and len(part.noise_terms) == 6
    np.testing.assert_array_equal(part.noise_terms[4].coefficient, m.noise_terms[4].coefficient[:len(part)])
    assert m.replace(impedance=m.impedance * 1.01).noise_terms == ()
    assert len(m.replace(impedance=m.impedance * 1j).noise_terms) == 6  # phase only: levels unchanged
    assert Measurement(m.frequency, m.impedance).noise_terms == ()


def test_cli_reports_the_noise_model_and_single_turns_it_off(tmp_path, capsys):
    _, _, _, measurements = case_draws("b", 1, tmp_path, np.random.default_rng(3))
    path = tmp_path / "b0.csv"
    out = tmp_path / "fit.json"
    assert main(["fit", str(path), "--shunt", "0.1", "--model", "Rs + Ls + C1", "--json", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "noise      " in printed and "on the part channel (peak)" in printed
    record = json.loads(out.read_text())
    assert "on the part channel" in record["fit"]["noise_model"]
    assert main(["fit", str(path), "--shunt", "0.1", "--model", "Rs + Ls + C1", "--noise-shape", "single",
                 "--json", str(out)]) == 0
    assert json.loads(out.read_text())["fit"]["noise_model"] == ""
    assert "noise      " not in capsys.readouterr().out


def test_reader_noise_terms_per_form(tmp_path):
    """V/I with a current column: the current floor is in A; |Z|/phase: a floor in ohm; Touchstone: relative
    and floor in S, the floor the default (the additive-in-S single shape)."""
    f = F_CAP[:5]
    path = tmp_path / "vi.csv"
    path.write_text("Frequency (Hz),V (V),V phase (deg),I (A),I phase (deg)\n" + "".join(
        f"{x:g},1,0,0.5,-10\n" for x in f), encoding="utf-8")
    m = ft.read_measurement(path)
    assert [(t.name, t.unit, t.component) for t in m.noise_terms] == [
        ("relative", "%", "both"), ("magnitude", "%", "magnitude"), ("phase", "%", "phase"),
        ("jitter", "s", "phase"), ("part_floor", "V", "both"), ("sense_floor", "A", "both")]
    np.testing.assert_allclose(m.noise_terms[5].coefficient, 4.0)  # 1 / |I|^2
    np.testing.assert_allclose(m.noise_terms[3].coefficient, (2 * np.pi * m.frequency) ** 2)  # jitter
    path = tmp_path / "z.csv"
    path.write_text("Frequency (Hz),|Z| (Ohm),Phase (deg)\n" + "".join(f"{x:g},2,10\n" for x in f),
                    encoding="utf-8")
    assert [t.name for t in ft.read_measurement(path).noise_terms] == ["relative", "magnitude", "phase",
                                                                      "impedance_floor"]
    _, _, _, rf = case_draws("c", 1, tmp_path, np.random.default_rng(4))
    assert [(t.name, t.default) for t in rf[0].noise_terms] == [("s_relative", False), ("s_floor", True)]
    np.testing.assert_allclose(rf[0].noise_terms[1].coefficient, rf[0].sigma_lnmag**2)


def test_auto_ranks_with_the_single_shape_then_refits_the_chosen_model_with_its_noise_model(tmp_path):
    _, truth, bound, measurements = case_draws("b", 1, tmp_path, np.random.default_rng(6))
    selection = ft.fit_auto(measurements[0], ["Rs + Ls + C1", "Rs + C1", "Rs + Ls + C1 || Rleak"],
                            intervals="none")
    chosen = selection.chosen
    assert chosen.circuit.expression == "Rs + Ls + C1"
    assert "from the data" in chosen.noise_model and "fitted again with the noise model" in selection.reason
    for name in truth:  # within 4 Cramer-Rao sigmas of the truth
        assert abs(chosen.parameters[name].value - truth[name]) < 4 * bound[name]


def test_fixture_compensation_carries_the_noise_terms_through_its_derivative(tmp_path):
    """Short compensation Z = Zm - Zs (a 2 mohm + 0.3 nH fixture, common practice): each term's coefficient
    is multiplied by |d ln Zdut / d ln Zm|^2 = |Zm / (Zm - Zs)|^2 at the measured level; the relative term
    then equals the reader's relative sigma squared, and the floor is still found after compensation."""
    from fitz_tool.corrections import Corrections, apply_corrections

    _, truth, bound, measurements = case_draws("b", 1, tmp_path, np.random.default_rng(8))
    m = measurements[0]
    zs = 2e-3 + 2j * np.pi * m.frequency * 0.3e-9
    short = Measurement(m.frequency, zs)
    shifted = m.replace(impedance=m.impedance + zs, noise_terms=m.noise_terms)  # the part on the fixture
    out = apply_corrections(shifted, Corrections(short=short))
    np.testing.assert_allclose(out.impedance, m.impedance, rtol=1e-12)
    gain = np.abs(shifted.impedance / m.impedance) ** 2
    np.testing.assert_allclose(out.noise_terms[0].coefficient, gain, rtol=1e-12)
    np.testing.assert_allclose(out.noise_terms[0].coefficient, out.sigma_lnmag**2, rtol=1e-12)
    level = np.abs(shifted.impedance) ** 2
    np.testing.assert_allclose(out.noise_terms[4].coefficient, gain * m.noise_terms[4].coefficient / level,
                               rtol=1e-12)
    assert not any(t.on_model for t in out.noise_terms)
    result = ft.fit(out, "Rs + Ls + C1", intervals="none")
    assert "on the part channel" in result.noise_model and "from the data" in result.noise_model
    assert abs(result.parameters["Rs"].value - truth["Rs"]) < 4 * bound["Rs"]


def test_phase_noisier_than_magnitude_is_modelled_and_the_errors_reach_cramer_rao(tmp_path):
    """|Z| and phase file with 0.1 % on |Z| and 0.5 deg on the phase: the model from the data gives both in
    words, errors near the bound and calibrated; the single shape (equal weights) is far above the bound
    and over-states its errors."""
    model, truth, bound, measurements = case_draws("d", 30, tmp_path, np.random.default_rng(51))
    estimated = [ft.fit(m, model, intervals="none") for m in measurements]
    single = [ft.fit(m, model, intervals="none", noise_shape="single") for m in measurements]
    words = estimated[0].noise_model
    magnitude = float(words.split(" % of |Z| and ")[0])
    phase = float(words.split(" and ")[1].split(" deg")[0])
    assert magnitude == pytest.approx(0.1, rel=0.15) and phase == pytest.approx(0.5, rel=0.15)
    for name in truth:
        ratio, calibration = _rms_ratio(estimated, truth, bound, name)
        assert ratio < 1.3 and 0.7 < calibration < 1.35, (name, ratio, calibration)
    ratio, calibration = _rms_ratio(single, truth, bound, "C1")
    assert ratio > 1.6 and calibration < 0.6


def test_timing_jitter_between_the_channels_is_found_and_stated(tmp_path):
    """A V/I shunt file whose current channel has 50 ps RMS of timing jitter (a phase error 2 pi f dt with
    dt ~ N(0, 50 ps)) on top of 0.1 % per channel: the model from the data names the jitter within 15 %
    and the errors stay calibrated."""
    truth = {"Rs": 5e-3, "Ls": 1e-9, "C1": 10e-6}
    f = F_CAP
    z, grads = capacitor(f, truth)
    v_part, v_shunt, _ = shunt_channels(z, 1e-3, 0.0)
    rng = np.random.default_rng(61)
    results = []
    for k in range(20):
        def noisy(v):
            return v * (1 + 1e-3 * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size)))

        shunt = noisy(v_shunt) * np.exp(1j * 2 * np.pi * f * 50e-12 * rng.standard_normal(f.size))
        path = tmp_path / f"j{k}.csv"
        write_shunt_file(path, f, noisy(v_part), shunt)
        results.append(ft.fit(ft.read_measurement(path, ft.ReadOptions(shunt=0.1)), "Rs + Ls + C1",
                              intervals="none"))
    words = results[0].noise_model
    jitter = words.split(" of timing jitter")[0].split()[-2:]
    assert jitter[1] == "ps" and float(jitter[0]) == pytest.approx(50, rel=0.15), words
    for name in truth:
        pulls = [(r.parameters[name].value - truth[name]) / r.parameters[name].stderr for r in results]
        assert 0.6 < float(np.sqrt(np.mean(np.square(pulls)))) < 1.45, name
