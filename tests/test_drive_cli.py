"""The drive command and the fit command's drive options, end to end on a bundled sample."""

import json
import math

import pytest

from fitz_tool.cli import main

SAMPLE = "sample_measurements/output_bulk_shunt_through.s2p"


@pytest.fixture(scope="module")
def fit_json(tmp_path_factory):
    path = tmp_path_factory.mktemp("drive") / "cout3.json"
    assert main(["fit", SAMPLE, "--through", "shunt", "--model", "Rs + Ls + C1", "--json", str(path)]) == 0
    return path


def test_drive_command_writes_the_issue_json_layout(fit_json, tmp_path, capsys):
    out = tmp_path / "drive.json"
    code = main(["drive", str(fit_json), "--drive", "triangle:2.4App@400k,duty=0.25", "--json", str(out),
                 "--plot-dir", str(tmp_path / "plots")])
    assert code == 0
    data = json.loads(out.read_text())
    assert set(data["voltage"]) >= {"peak_to_peak", "peak", "rms", "rms_ac"}
    assert set(data["current"]) >= {"rms", "dc"} and set(data["power"]) >= {"average_w", "stderr_w"}
    assert 0 <= data["extrapolated_share"] < 0.01 and data["harmonics"][0]["order"] == 1
    # ripple of the fitted capacitor, at least the ideal capacitor's I_pp / (8 f C) (common practice)
    c = json.loads(fit_json.read_text())["parameters"]["C1"]["value"]
    assert data["voltage"]["peak_to_peak"]["value"] > 2.4 / (8 * 400e3 * c)
    assert data["power"]["stderr_w"] > 0
    assert sorted(p.name for p in (tmp_path / "plots").iterdir())[0] == "cout3_drive_loss.png"
    text = capsys.readouterr().out
    assert "peak-to-peak" in text and "ratings" in text and "derating" in text


def test_drive_errors_are_one_line_with_exit_code_2(fit_json, tmp_path, capsys):
    assert main(["drive", str(fit_json), "--drive", "sine:1A@100k+dc:1A"]) == 2
    assert "no DC path" in capsys.readouterr().err
    assert main(["drive", str(fit_json), "--drive", "sine:1A@10"]) == 2
    assert "--allow-extrapolation" in capsys.readouterr().err
    assert main(["drive", str(tmp_path / "missing.json"), "--drive", "sine:1A@10k"]) == 2
    assert not list(tmp_path.iterdir())


def test_fit_with_drive_current_record(tmp_path, capsys):
    wave = tmp_path / "ripple.csv"
    rows = [f"{k * 2.5 / 100:.6g},{(-1.2 + 2.4 * k / 25) if k < 25 else (1.2 - 2.4 * (k - 25) / 75):.6g}"
            for k in range(100)]
    wave.write_text("Time (us),Current (A)\n" + "\n".join(rows) + "\n")
    out = tmp_path / "fit.json"
    code = main(["fit", SAMPLE, "--through", "shunt", "--model", "Rs + Ls + C1", "--drive-current", str(wave),
                 "--json", str(out)])
    assert code == 0
    data = json.loads(out.read_text())
    assert data["drive"]["drive"]["period_s"] == pytest.approx(2.5e-6)
    assert data["drive"]["current"]["rms"]["value"] == pytest.approx(2.4 / (2 * 3**0.5), rel=1e-6)
    assert "Average loss in the part" in capsys.readouterr().out


def test_json_record_and_in_process_fit_give_the_same_drive(fit_json):
    # the covariance rebuilt from FIT.json (stderr and correlations) equals the fit's own
    from fitz_tool.drive import drive_response, drive_waveform, model_from_fit, model_from_json
    from fitz_tool.fitting.least_squares import fit
    from fitz_tool.readers import ReadOptions, read_measurement

    result = fit(read_measurement(SAMPLE, ReadOptions(through="shunt")), "Rs + Ls + C1")
    wave = drive_waveform("triangle:2.4App@400k,duty=0.25")
    a = drive_response(model_from_fit(result), wave)
    b = drive_response(model_from_json(fit_json), wave)
    assert b.voltage["peak_to_peak"].value == pytest.approx(a.voltage["peak_to_peak"].value, rel=1e-9)
    assert b.power.stderr == pytest.approx(a.power.stderr, rel=1e-6)
    assert b.model.band == a.model.band == (1e3, 100e6)


def test_fit_report_carries_the_drive_section(tmp_path):
    report = tmp_path / "r.html"
    assert main(["fit", SAMPLE, "--through", "shunt", "--model", "Rs + Ls + C1", "--drive",
                 "triangle:2.4App@400k,duty=0.25", "--accuracy", "1%:0.5deg", "--report", str(report)]) == 0
    html = report.read_text()
    assert "Drive response" in html and "with stated limits" in html and "derating" in html
    assert html.count("data:image/png") >= 5


def test_voltage_record_and_a_bad_drive_is_refused_before_the_fit(fit_json, tmp_path, capsys):
    wave = tmp_path / "v.csv"
    rows = [f"{k * 1e-8:.6g},{0.01 * math.sin(2 * math.pi * k / 100):.9g}" for k in range(100)]
    wave.write_text("t (s),V(C_OUT3) (V)\n" + "\n".join(rows) + "\n")  # 10 mV peak sine at 1 MHz
    assert main(["drive", str(fit_json), "--voltage", str(wave)]) == 0
    text = capsys.readouterr().out
    assert "Drive: voltage" in text and "set by the drive" in text
    # a spec error stops `fit` before any fitting and writes nothing
    out = tmp_path / "never.json"
    assert main(["fit", SAMPLE, "--through", "shunt", "--model", "Rs + Ls + C1", "--drive", "sine:1A",
                 "--json", str(out)]) == 2
    assert "AMPLITUDE@FREQUENCY" in capsys.readouterr().err and not out.exists()
