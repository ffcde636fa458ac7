"""Drive response: handbook relations, DC rules, extrapolation, uncertainty, shapes and records."""

import math

import numpy as np
import pytest

from fitz_tool.circuit import Circuit
from fitz_tool.drive import (
    DriveModel,
    band_limited,
    dc_resistance,
    drive_response,
    drive_waveform,
    parse_drive_spec,
    read_waveform,
    waveform_from_samples,
)
from fitz_tool.exceptions import InputError


def model(expression, values, stderr=None, band=(10.0, 1e9)):
    names = tuple(stderr) if stderr else ()
    cov = np.diag([stderr[n] ** 2 for n in names]) if stderr else None
    return DriveModel(Circuit.parse(expression), values, names, cov, band, "test")


@pytest.mark.parametrize("duty", [0.5, 0.25, 0.8])
def test_ideal_capacitor_ripple_under_a_triangle_current(duty):
    # An ideal 100 uF capacitor under a 2 A peak-to-peak triangle at 250 kHz: dV = I_pp / (8 f C), for any
    # rise/fall split (the charge of one half-cycle is T I_pp / 8) - handbook relation, common practice.
    result = drive_response(model("C1", {"C1": 100e-6}), drive_waveform(f"triangle:2App@250k,duty={duty}"))
    assert result.voltage["peak_to_peak"].value == pytest.approx(2.0 / (8 * 250e3 * 100e-6), rel=1e-6)
    assert result.power.value == pytest.approx(0.0, abs=1e-12)


def test_esr_loss_of_a_sine_current_and_its_uncertainty():
    # 1.5 A rms sine at 100 kHz through ESR 20 mohm + 47 uF: P = I_rms^2 ESR (common practice, no source).
    m = model("Rs + C1", {"Rs": 0.02, "C1": 47e-6}, {"Rs": 0.001, "C1": 1e-6})
    result = drive_response(m, drive_waveform("sine:1.5Arms@100k"))
    # the record is the piecewise-linear curve through 16384 samples a period: RMS within (pi / N)^2
    assert result.current["rms"].value == pytest.approx(1.5, rel=1e-7)
    assert result.power.value == pytest.approx(1.5**2 * 0.02, rel=1e-7)
    # P is linear in Rs and independent of C: its standard error is I_rms^2 u(Rs) (GUM 5.1.2, first order)
    assert result.power.stderr == pytest.approx(1.5**2 * 0.001, rel=1e-6)
    # |V| of the sine = I_pk |Z| (common practice)
    z = abs(0.02 + 1 / (2j * math.pi * 100e3 * 47e-6))
    assert result.voltage["peak"].value == pytest.approx(1.5 * math.sqrt(2) * z, rel=1e-6)
    assert result.harmonics[0].loss.value == pytest.approx(result.power.value, rel=1e-9)


def test_square_wave_harmonics_are_4_over_n_pi():
    # Fourier series of a +/-1 square wave: b_n = 4 / (n pi) for odd n, 0 for even n (handbook, common
    # practice). The record is N = 16384 samples a period, read piecewise linear, which leaves about
    # (2/3) (pi n / N)^2 relative at harmonic n (sampling plus the linear edges).
    result = drive_response(model("Rs", {"Rs": 1.0}), drive_waveform("square:1Apk@10k"))
    amplitudes = {h.order: h.current_amplitude.value for h in result.harmonics}
    for n in range(1, 22, 2):
        assert amplitudes[n] == pytest.approx(4 / (n * math.pi), rel=(math.pi * n / 16384) ** 2), n
    assert all(amplitudes.get(n, 0.0) < 1e-9 for n in range(2, 22, 2))


def test_choke_dc_plus_ripple_loss():
    # Rs + L under 2 A DC plus a 0.5 A peak sine: P = I_dc^2 Rs + I_pk^2 Rs / 2 (common practice, no source)
    m = model("Rs + L1", {"Rs": 0.05, "L1": 10e-6})
    result = drive_response(m, drive_waveform("sine:0.5A@100k+dc:2A"))
    assert result.power.value == pytest.approx(4 * 0.05 + 0.25 * 0.05 / 2, rel=1e-9)
    assert result.current["dc"].value == pytest.approx(2.0, rel=1e-12)
    assert result.voltage["dc"].value == pytest.approx(0.1, rel=1e-9)
    assert any("DC resistance" in n for n in result.notes)


def test_dc_current_into_a_part_with_no_dc_path_is_refused():
    with pytest.raises(InputError, match="no DC path"):
        drive_response(model("Rs + C1", {"Rs": 0.01, "C1": 1e-6}), drive_waveform("sine:1A@100k+dc:0.5A"))


def test_dc_resistance_rules():
    values = {"Rs": 0.1, "L1": 1e-6, "C1": 1e-9, "Rp": 100.0}
    assert dc_resistance(Circuit.parse("(Rs + L1) || C1"), values) == pytest.approx(0.1)
    assert math.isinf(dc_resistance(Circuit.parse("Rs + C1"), values))
    assert dc_resistance(Circuit.parse("C1 || Rp"), values) == pytest.approx(100.0)
    assert dc_resistance(Circuit.parse("L1 || Rp"), values) == 0.0


def test_drive_mostly_outside_the_fitted_band_is_refused_unless_allowed():
    m = model("Rs + C1", {"Rs": 0.01, "C1": 1e-6}, band=(1e3, 10e3))
    with pytest.raises(InputError, match="outside the fitted band"):
        drive_response(m, drive_waveform("sine:1A@100k"))
    result = drive_response(m, drive_waveform("sine:1A@100k"), allow_extrapolation=True)
    assert result.extrapolated_share == pytest.approx(1.0)
    assert any("extrapolated" in n for n in result.notes)


def test_voltage_drive_gives_the_current():
    # 1 V peak sine at 1 kHz across 10 ohm || 1 uF: I = V |Y|, P = V_rms^2 / R (common practice)
    m = model("R1 || C1", {"R1": 10.0, "C1": 1e-6})
    result = drive_response(m, drive_waveform("sine:1V@1k"))
    y = abs(1 / 10.0 + 2j * math.pi * 1e3 * 1e-6)
    # the harmonic itself is exact; the time-domain peak follows the piecewise-linear record, whose slope
    # (and so C dV/dt) steps at each of the N samples: within pi / N
    assert result.harmonics[0].current_amplitude.value == pytest.approx(y, rel=1e-7)
    assert result.current["peak"].value == pytest.approx(y, rel=math.pi / 16384)
    assert result.power.value == pytest.approx(0.5 / 10.0, rel=1e-7)


def test_spec_errors_name_the_problem():
    for bad, words in [("triangle:2App", "AMPLITUDE@FREQUENCY"), ("blob:1A@1k", "unknown shape"),
                       ("sine:1A@1k+dc:1V", "mixes A and V"), ("dc:1A", "only DC"),
                       ("square:1A@1k,duty=1.5", "duty"), ("sine:1A@1k+sine:1A@1.5k", "whole multiple"),
                       ("trapezoid:1A@1k", "rise")]:
        with pytest.raises(InputError, match=words):
            drive_waveform(bad)
    terms = parse_drive_spec("triangle:0.6App@500k+dc:2A")
    assert [t.shape for t in terms] == ["triangle", "dc"] and terms[0].amplitude == 0.6


def test_trapezoid_edges_and_levels():
    w = drive_waveform("trapezoid:1Apk@100k,rise=100n")
    assert w.samples.max() == pytest.approx(1.0) and w.samples.min() == pytest.approx(-1.0)
    # edges of 100 ns in a 10 us period: 1 % of the samples on each edge
    edge = np.count_nonzero(np.abs(w.samples) < 0.999) / w.samples.size
    assert edge == pytest.approx(0.02, abs=2e-4)


def test_record_with_units_whole_periods_and_repeated_end(tmp_path):
    t = np.linspace(0, 20e-6, 401)  # two 10 us periods, last sample equal to the first
    i = 0.5 * np.sin(2 * np.pi * 100e3 * t)
    rows = "\n".join(f"{a * 1e6:.9g},{b * 1e3:.9g}" for a, b in zip(t, i, strict=True))
    path = tmp_path / "wave.csv"
    path.write_text(f"scope capture\nTime (us),I(C5) (mA)\n{rows}\n")
    w = read_waveform(path, "current")
    assert w.periods == 2 and w.period == pytest.approx(10e-6, rel=1e-9) and w.samples.size == 400
    assert any("dropped" in s for s in w.steps)
    result = drive_response(model("Rs", {"Rs": 2.0}), w)
    # I_pk^2 R / 2 for the sine; 200 samples a period read piecewise linear: within (2 pi / 200)^2 / 6
    assert result.power.value == pytest.approx(0.25 / 2 * 2.0, rel=1.1 * (2 * math.pi / 200) ** 2 / 6)


def test_non_uniform_record_is_resampled_and_period_option_keeps_whole_periods():
    rng = np.random.default_rng(3)
    t = np.sort(np.concatenate([[0.0, 25e-6], rng.uniform(0, 25e-6, 3000)]))
    i = np.cos(2 * np.pi * 100e3 * t)
    w = waveform_from_samples(t, i, "current", "sim", period=10e-6)
    assert w.periods == 2 and any("resampled" in s for s in w.steps)
    result = drive_response(model("Rs", {"Rs": 1.0}), w)
    assert result.current["rms"].value == pytest.approx(1 / math.sqrt(2), rel=1e-4)
    with pytest.raises(InputError, match="less than one period"):
        waveform_from_samples(t, i, "current", "sim", period=30e-6)


def test_record_errors(tmp_path):
    path = tmp_path / "w.csv"
    path.write_text("Time (us),I (mA),V (V)\n0,1,2\n1,2,3\n")
    with pytest.raises(InputError, match="at least 8"):
        read_waveform(path, "current")
    path.write_text("Time (us),I1 (mA),I2 (mA)\n" + "\n".join(f"{k},{k},{k}" for k in range(10)))
    with pytest.raises(InputError, match="--column"):
        read_waveform(path, "current")
    path.write_text("Time (us),I (mV)\n" + "\n".join(f"{k},{k}" for k in range(10)))
    with pytest.raises(InputError, match="expected A"):
        read_waveform(path, "current")


def test_stated_limits_add_to_the_uncertainty_of_the_loss():
    # P = I_rms^2 Rs is linear in Rs, so u(P) = I_rms^2 u(Rs) for each covariance (GUM 5.1.2, first order)
    m = model("Rs + C1", {"Rs": 0.02, "C1": 47e-6}, {"Rs": 0.001, "C1": 1e-6})
    budget = np.diag([0.001**2 + 0.002**2, 1e-12 + 4e-12])
    m = DriveModel(m.circuit, m.values, m.names, m.covariance, m.band, "test", "", budget)
    result = drive_response(m, drive_waveform("sine:1.5Arms@100k"))
    assert result.power.u_combined == pytest.approx(1.5**2 * math.sqrt(0.001**2 + 0.002**2), rel=1e-6)
    assert result.current["rms"].u_combined == 0.0


def test_bandwidth_limit_removes_probe_noise_but_keeps_the_ripple():
    rng = np.random.default_rng(1)
    clean = drive_waveform("sine:1A@100k", samples_per_period=4096)
    noisy = waveform_from_samples(np.arange(4096) * 10e-6 / 4096, clean.samples
                                  + 0.01 * rng.standard_normal(4096), "current", "probe")
    limited = band_limited(noisy, 2e6)
    # white noise of 10 mA rms over a 204.8 MHz Nyquist band; a Gaussian |H| = exp(-ln2/2 (f/B)^2) passes a
    # noise bandwidth of integral |H|^2 df = B sqrt(pi / (4 ln 2)) (common practice, no source)
    residual = limited.samples - band_limited(clean, 2e6).samples
    passed = 2e6 * math.sqrt(math.pi / (4 * math.log(2))) / 204.8e6
    assert np.sqrt(np.mean(residual**2)) == pytest.approx(0.01 * math.sqrt(passed), rel=0.2)
    # the 100 kHz sine itself passes with exp(-ln2/2 (0.05)^2) = 0.99913
    assert drive_response(model("Rs", {"Rs": 1.0}), limited).harmonics[0].current_amplitude.value == \
        pytest.approx(math.exp(-math.log(2) / 2 * 0.05**2), rel=2e-3)
    assert any("removed" in s for s in limited.steps)
    with pytest.raises(InputError, match="positive"):
        band_limited(noisy, 0.0)
