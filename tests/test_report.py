"""Terminal report, JSON record, curve table and run record of a fit."""

from __future__ import annotations

import argparse
import datetime
import hashlib
import io
import json
import math

import numpy as np
import pandas as pd
import pytest
from test_derived import synthetic_result

from fitz_tool.derived import design_values
from fitz_tool.outputs.report import (
    curve_table,
    fit_to_json,
    format_fit_report,
    format_value,
    run_record,
)
from fitz_tool.results import ModelSelection, RankedModel


def _selection(result):
    other = synthetic_result("Rs + L1", {"Rs": 0.05, "L1": 22e-6})
    return ModelSelection(
        ranking=(RankedModel(result.circuit.expression, result, result.bic, True, "chosen"),
                 RankedModel("Rs + L1", other, other.bic + 1e3, False, "misses the resonance")),
        chosen=result, reason="lowest BIC of the adequate candidates")


def test_run_record_keeps_every_option_as_text_and_hashes_inputs(tmp_path):
    bench = tmp_path / "choke.csv"
    bench.write_bytes(b"Frequency (Hz),|Z| (ohm)\n1,2\n")
    args = argparse.Namespace(command="fit", file=str(bench), model="auto", at=["100k", "1M"], shunt=None,
                              handler=print)
    when = datetime.datetime(2031, 1, 2, 3, 4, 5, tzinfo=datetime.UTC)
    record = run_record(args, [str(bench)], "9.9.9", now=when)
    assert "handler" not in record.options
    expected = {"command": "fit", "file": str(bench), "model": "auto", "at": "100k; 1M", "shunt": ""}
    assert record.options == expected
    # SHA-256 of the file bytes, computed by hashlib (Python standard library)
    assert record.inputs[0].sha256 == hashlib.sha256(bench.read_bytes()).hexdigest()
    assert record.version == "9.9.9" and record.date == "2031-01-02T03:04:05Z"


def test_terminal_report_reads_like_a_bench_notebook():
    result = synthetic_result()
    text = format_fit_report(result, _selection(result), design_values(result, [100e3]))
    assert "Model: Rs + L1 || Cp" in text
    assert "Model ranking" in text and "misses the resonance" in text
    rel_percent = 100 * result.parameters["L1"].stderr / 22e-6  # the test's own Cramer-Rao covariance
    assert f"L1    22.0000 \u00b5H \u00b1 {rel_percent:.2g} %" in text  # digits limited by its standard error
    for item in ("residual scatter", "BIC", "free parameters", "weighting", "converged"):
        assert item in text
    assert "reduced chi-square" not in text  # without stated noise it means nothing to the reader
    verbose = format_fit_report(result, _selection(result), design_values(result, [100e3]), verbose=True)
    assert "reduced chi-square" in verbose and "AIC" in verbose
    # parallel SRF of 22 uH || 15 pF: 1/(2 pi sqrt(L C)) = 8.761 MHz (common practice, no source)
    f0 = 1 / (2 * math.pi * math.sqrt(22e-6 * 15e-12))
    assert f"SRF (parallel, in the sweep): {f0 / 1e6:.3f}" in text
    assert "L_eff" in text and "ESR" in text and "Q " in text


def test_values_without_uncertainty_say_why():
    result = synthetic_result(with_covariance=False, with_uvars=False)
    text = format_fit_report(result, None, design_values(result, [100e3]))
    assert "covariance could not be computed" in text
    assert format_value(0.8734, "", None) == "0.8734"
    assert format_value(0.8734, "", 0.0021) == "0.8734 \u00b1 0.24 %"  # 0.0021 / 0.8734 = 0.24 %


def test_json_follows_the_machine_interface_and_is_strict():
    result = synthetic_result()
    design = design_values(result, [100e3])
    record = run_record({"model": "Rs + L1 || Cp"}, [], "0.1.0")
    data = fit_to_json(result, _selection(result), design, record)
    text = json.dumps(data, allow_nan=False)  # raises on NaN or infinity
    back = json.loads(text)
    assert back["model"] == "Rs + L1 || Cp"
    assert back["parameters"]["L1"]["value"] == 22e-6 and back["parameters"]["L1"]["unit"] == "H"
    assert back["parameters"]["L1"]["stderr"] == pytest.approx(result.parameters["L1"].stderr)
    for key in ("success", "message", "chi_square", "reduced_chi_square", "aic", "bic", "n_points", "n_free"):
        assert key in back["fit"]
    assert back["correlation"]["names"] == ["Rs", "L1", "Cp"]
    assert back["ranking"][0]["chosen"] and not back["ranking"][1]["chosen"]
    (res,) = back["derived"]["resonances"]
    assert res["frequency"]["unit"] == "Hz" and res["kind"] == "parallel"
    at = back["derived"]["at"][0]
    # Rs + L || C below resonance: L_eff = L / (1 - w^2 L C) (common practice, no source)
    w = 2 * math.pi * 100e3
    l_eff = 22e-6 / (1 - w**2 * 22e-6 * 15e-12)
    assert at["frequency"] == 100e3 and at["values"]["L_eff"]["value"] == pytest.approx(l_eff, rel=1e-9)
    assert back["provenance"]["source"] == "bench/output_choke.csv" and back["run"]["version"] == "0.1.0"


def test_json_turns_nan_and_infinity_into_null():
    lossless = synthetic_result("L1 || C1", {"L1": 1e-6, "C1": 1e-9}, np.geomspace(1e5, 1e8, 31),
                                with_covariance=False, with_uvars=False)
    object.__setattr__(lossless, "reduced_chi_square", math.nan)
    data = fit_to_json(lossless, None, design_values(lossless, [1e6]), None)
    json.dumps(data, allow_nan=False)
    assert data["fit"]["reduced_chi_square"] is None
    assert data["derived"]["at"][0]["values"]["Q"]["value"] is None  # infinite Q of a lossless model
    assert data["parameters"]["L1"]["stderr"] is None
    assert data["correlation"] is None and data["ranking"] is None


def test_curve_table_holds_measured_model_and_residuals():
    result = synthetic_result(rel_noise=1e-3, phase_noise=1e-3)
    table = curve_table(result)
    assert len(table) == result.n_points
    m = result.measurement
    np.testing.assert_allclose(table["frequency_Hz"], m.frequency)
    np.testing.assert_allclose(table["measured_re_ohm"] + 1j * table["measured_im_ohm"], m.impedance)
    model = result.model_impedance()
    np.testing.assert_allclose(table["model_abs_ohm"], np.abs(model))
    # residuals recomputed from the columns themselves (common practice, no source)
    rel = table["measured_abs_ohm"] / table["model_abs_ohm"] - 1
    np.testing.assert_allclose(table["residual_abs_rel"], rel, rtol=1e-9, atol=1e-15)
    dphi = (table["measured_phase_deg"] - table["model_phase_deg"] + 180) % 360 - 180
    np.testing.assert_allclose(table["residual_phase_deg"], dphi, atol=1e-9)
    assert np.std(table["residual_abs_rel"]) == pytest.approx(1e-3, rel=0.25)  # the noise we put in
    again = pd.read_csv(io.StringIO(table.to_csv(index=False)))
    assert list(again.columns) == list(table.columns)


def test_profile_interval_travels_to_the_json_and_the_table():
    import dataclasses

    result = synthetic_result()
    name = next(iter(result.parameters))
    p = dataclasses.replace(result.parameters[name], interval=(0.0, float("inf")), stderr=None,
                            stderr_note="not determined: consistent with 0", interval_note="profile")
    result = dataclasses.replace(result, parameters={**result.parameters, name: p})
    doc = fit_to_json(result, None, design_values(result, []), None)
    assert doc["parameters"][name]["interval"] == [0.0, None]  # infinity is not JSON: null
    assert doc["parameters"][name]["stderr"] is None
    text = format_fit_report(result, None, design_values(result, []))
    assert "not determined: consistent with 0" in text


def test_terminal_report_ends_with_the_safety_reminder():
    result = synthetic_result()
    text = format_fit_report(result, None, design_values(result, []))
    assert text.rstrip().splitlines()[-1].startswith("Safety: discharge capacitors")
