"""End to end: `fitz-tool fit` on a bench CSV writes every output, or none when the run fails."""

from __future__ import annotations

import hashlib
import json
import math

import numpy as np
import pandas as pd
import pytest

from fitz_tool.circuit import Circuit
from fitz_tool.cli import main

# An invented 47 uH power inductor: 0.12 ohm winding, 9 pF winding capacitance (resonance ~7.7 MHz)
TRUE = {"Rs": 0.12, "L1": 47e-6, "Cp": 9e-12}
MODEL = "Rs + L1 || Cp"


def _bench_csv(tmp_path, name="inductor_47u.csv", rel_noise=2e-3, phase_noise_deg=0.1):
    f = np.geomspace(1e3, 30e6, 101)
    z = Circuit.parse(MODEL).impedance(f, TRUE)
    rng = np.random.default_rng(11)
    mag = np.abs(z) * (1 + rng.normal(0, rel_noise, f.size))
    phase = np.degrees(np.angle(z)) + rng.normal(0, phase_noise_deg, f.size)
    path = tmp_path / name
    pd.DataFrame({"Frequency (Hz)": f, "|Z| (ohm)": mag, "Phase (deg)": phase}).to_csv(path, index=False)
    return path


def _outputs(tmp_path):
    out = tmp_path / "out"
    return out, ["--json", str(out / "fitting.json"), "--report", str(out / "report.html"), "--spice",
                 str(out / "part.cir"), "--curve", str(out / "curve.csv"), "--plot-dir", str(out / "plots"),
                 "--at", "100k"]


def test_fit_writes_every_output_with_the_right_values(tmp_path, capsys):
    csv = _bench_csv(tmp_path)
    out, options = _outputs(tmp_path)
    assert main(["fit", str(csv), "--model", MODEL, *options]) == 0
    printed = capsys.readouterr().out
    assert "Model: Rs + L1 || Cp" in printed and "Design values" in printed

    data = json.loads((out / "fitting.json").read_text())
    assert data["model"] == MODEL and data["fit"]["success"]
    for name, truth in TRUE.items():
        p = data["parameters"][name]
        assert p["stderr"] is not None and abs(p["value"] - truth) < 5 * p["stderr"], name
    # handbook relations on the fitted result (common practice, no source):
    # parallel resonance of L || C at 1/(2 pi sqrt(L C)); below it L_eff = L / (1 - w^2 L C), ESR = Rs
    f0 = 1 / (2 * math.pi * math.sqrt(TRUE["L1"] * TRUE["Cp"]))
    (res,) = data["derived"]["resonances"]
    assert res["in_sweep"] and abs(res["frequency"]["value"] - f0) < 5 * res["frequency"]["stderr"]
    w = 2 * math.pi * 100e3
    at = data["derived"]["at"][0]["values"]
    l_eff = TRUE["L1"] / (1 - w**2 * TRUE["L1"] * TRUE["Cp"])
    assert abs(at["L_eff"]["value"] - l_eff) < 5 * at["L_eff"]["stderr"]
    assert at["Q"]["value"] == pytest.approx(w * at["L_eff"]["value"] / at["ESR"]["value"], rel=1e-9)
    assert data["run"]["inputs"][0]["path"] == str(csv)
    # SHA-256 of the input bytes by hashlib (Python standard library)
    assert data["run"]["inputs"][0]["sha256"] == hashlib.sha256(csv.read_bytes()).hexdigest()

    curve = pd.read_csv(out / "curve.csv")
    assert len(curve) == 101 and curve["residual_abs_rel"].abs().max() < 0.02
    netlist = (out / "part.cir").read_text()
    assert ".subckt FITTED_PART 1 2" in netlist and "* model: Rs + L1 || Cp" in netlist
    html = (out / "report.html").read_text()
    # an inductor far below its resonance draws a vertical line in the impedance plane: that view is left
    # out, R and X over frequency shown instead; the one-page summary goes to the plot folder only
    assert html.count('src="data:image/png;base64,') == 3 and "<script" not in html
    for key in ("bode", "q", "resistance_reactance", "summary"):
        for fmt in ("png", "svg"):
            path = out / "plots" / f"inductor_47u_{key}.{fmt}"
            assert path.stat().st_size > 10_000, path


def test_a_bad_model_leaves_no_output(tmp_path, capsys):
    csv = _bench_csv(tmp_path)
    out, options = _outputs(tmp_path)
    code = main(["fit", str(csv), "--model", "Rs + + L1", *options])
    assert code == 3  # ModelSyntaxError
    err = capsys.readouterr().err
    assert err.startswith("fitz-tool: error:") and "column" in err and "Traceback" not in err
    assert not out.exists()


def test_an_output_over_the_input_is_refused_and_nothing_is_written(tmp_path, capsys):
    csv = _bench_csv(tmp_path)
    original = csv.read_bytes()
    out, options = _outputs(tmp_path)
    # the curve output named as the input (given once: a repeated option is an error of its own)
    code = main(["fit", str(csv), "--model", MODEL, *options[:6], *options[8:-2], "--curve", str(csv), "--at",
                 "100k"])
    assert code == 5  # OutputError
    assert "overwrite an input" in capsys.readouterr().err
    assert csv.read_bytes() == original
    assert not (out / "fitting.json").exists() and not (out / "report.html").exists()
    assert not (out / "plots").exists() or not any((out / "plots").iterdir())


def test_intervals_option_reaches_the_fit(tmp_path, capsys):
    csv = _bench_csv(tmp_path)
    assert main(["fit", str(csv), "--model", MODEL, "--intervals", "all"]) == 0
    assert "68 % profile interval" in capsys.readouterr().out
    assert main(["fit", str(csv), "--model", MODEL, "--intervals", "none"]) == 0
    assert "profile interval" not in capsys.readouterr().out
