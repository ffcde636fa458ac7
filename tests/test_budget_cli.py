"""The budget from the command line: options, terminal table, JSON block, HTML section and refusals."""

import json
import math

import numpy as np
import pandas as pd
import pytest

from fitz_tool.circuit import Circuit
from fitz_tool.cli import main

# An invented 22 uH choke on a scope: part voltage and shunt voltage phasors, 0.1 ohm shunt.
TRUTH = {"Rs": 0.05, "L1": 22e-6, "Cp": 15e-12}


@pytest.fixture
def choke_file(tmp_path):
    f = np.geomspace(1e3, 20e6, 40)
    z = Circuit.parse("(Rs + L1) || Cp").impedance(f, TRUTH)
    rng = np.random.default_rng(11)
    z = z * np.exp(rng.normal(0, 2e-3, f.size) + 1j * np.radians(rng.normal(0, 0.1, f.size)))
    i = 0.05 * np.ones(f.size)  # 50 mA peak through the part
    v = z * i
    path = tmp_path / "choke_scope.csv"
    pd.DataFrame({"Frequency (Hz)": f, "V (V)": np.abs(v), "Phase V (deg)": np.degrees(np.angle(v)),
                  "V_shunt (V)": 0.1 * i, "Phase V_shunt (deg)": 0.0}).to_csv(path, index=False)
    return path


def _run(choke_file, tmp_path, *extra):
    out = tmp_path / "fit.json"
    code = main(["fit", str(choke_file), "--model", "(Rs + L1) || Cp", "--shunt", "0.1", "--at", "100k",
                 "--json", str(out), *extra])
    return code, (json.loads(out.read_text()) if out.exists() else None)


def test_json_budget_block_has_the_stated_schema_and_si_values(choke_file, tmp_path, capsys):
    code, record = _run(choke_file, tmp_path, "--accuracy", "0.5%:0.1deg", "--shunt-tolerance", "1%",
                        "--skew-uncertainty", "1n")
    assert code == 0
    budget = record["budget"]
    assert budget["coverage_factor"] == 2.0 and budget["noise_only"] is False
    assert [s["key"] for s in budget["sources"]] == ["magnitude_accuracy", "phase_accuracy", "shunt", "skew"]
    l1 = budget["parameters"]["L1"]
    assert set(l1) >= {"u_noise", "u_combined", "expanded", "contributions", "coverage_factor", "nu_eff"}
    assert l1["u_noise"] == pytest.approx(record["parameters"]["L1"]["stderr"], rel=1e-12)
    # u_c^2 is the sum of the squared components (GUM 5.1.2, uncorrelated inputs)
    assert l1["u_combined"] == pytest.approx(math.sqrt(sum(v**2 for v in l1["contributions"].values())))
    assert l1["expanded"] == pytest.approx(l1["coverage_factor"] * l1["u_combined"])
    # gain and shunt each scale L1 by their fraction: contribution L1 a / sqrt(3) (GUM 4.3.7)
    value = record["parameters"]["L1"]["value"]
    assert l1["contributions"]["shunt"] == pytest.approx(value * 0.01 / math.sqrt(3), rel=1e-6)
    assert l1["contributions"]["magnitude_accuracy"] == pytest.approx(value * 0.005 / math.sqrt(3), rel=1e-6)
    assert {"ESR at 100 kHz", "SRF", "Q at SRF"} <= set(budget["design"])
    text = capsys.readouterr().out
    assert "Uncertainty budget (GUM" in text and "share of u_c^2" in text
    assert "1 % shunt tolerance" in text and "lab's own uncertainty procedures" in text


def test_without_accuracy_inputs_the_report_says_noise_only(choke_file, tmp_path, capsys):
    code, record = _run(choke_file, tmp_path)
    assert code == 0 and record["budget"]["noise_only"] is True
    assert record["budget"]["parameters"]["L1"]["contributions"] == {
        "noise": record["parameters"]["L1"]["stderr"]}
    assert "Uncertainties are from noise only (type A)" in capsys.readouterr().out


def test_monte_carlo_option(choke_file, tmp_path, capsys):
    code, record = _run(choke_file, tmp_path, "--accuracy", "0.5%:0.1deg", "--budget-mc", "25")
    assert code == 0
    mc = record["budget"]["parameters"]["L1"]["monte_carlo"]
    assert mc["draws"] == 25 and mc["low"] < record["parameters"]["L1"]["value"] < mc["high"]
    assert "Monte Carlo (25 draws)" in capsys.readouterr().out


def test_html_report_has_the_budget_section(choke_file):
    import fitz_tool as ft
    from fitz_tool.budget import BudgetInputs

    m = ft.read_measurement(str(choke_file), ft.ReadOptions(shunt=0.1))
    result = ft.fit(m, "(Rs + L1) || Cp")
    design = ft.design_values(result, [100e3])
    budget = ft.uncertainty_budget(result, BudgetInputs(shunt_tolerance=0.01), [100e3])
    html = ft.render_html_report(result, None, design, None, {}, budget=budget)
    assert "<h2>Uncertainty budget</h2>" in html and "1 % shunt tolerance" in html
    assert "lab's own uncertainty procedures" in html
    noise_only = ft.render_html_report(result, None, design, None, {}, budget=ft.uncertainty_budget(result))
    assert "Uncertainties are from noise only" in noise_only


def test_accuracy_table_from_a_file(choke_file, tmp_path):
    table = tmp_path / "scope_accuracy.csv"
    table.write_text("frequency (Hz),|Z| %,phase deg\n1k,0.5,0.1\n100M,2,1\n")
    code, record = _run(choke_file, tmp_path, "--accuracy-table", str(table))
    assert code == 0
    assert record["budget"]["sources"][0]["label"].startswith("|Z| accuracy table (0.5 to")
    assert str(table) in [i["path"] for i in record["run"]["inputs"]]


@pytest.mark.parametrize("extra,words", [
    (["--reference-tolerance", "1%"], "--reference-tolerance needs --reference"),
    (["--load-tolerance", "1%"], "--load-tolerance needs --load-value"),
    (["--accuracy", "0.5%"], "--accuracy '0.5%': expected MAG%:PHASEdeg"),
    (["--accuracy", "0.5%:0.1deg", "--accuracy-table", "x.csv"], "give one of them"),
    (["--budget-mc", "5"], "at least 20"),
    (["--accuracy-table", "missing.csv"], "accuracy table missing.csv: cannot read it"),
])
def test_bad_budget_options_are_refused_in_one_line(choke_file, tmp_path, capsys, extra, words):
    code, record = _run(choke_file, tmp_path, *extra)
    err = capsys.readouterr().err
    assert code == 2 and record is None
    assert words in err and len(err.strip().splitlines()) == 1


def test_shunt_tolerance_without_a_shunt_is_refused(tmp_path, capsys):
    path = tmp_path / "z.csv"
    path.write_text("f,|Z|,phase\n1000,1,10\n2000,1.1,20\n3000,1.2,30\n")
    assert main(["fit", str(path), "--model", "Rs + L1", "--shunt-tolerance", "1%"]) == 2
    assert "--shunt-tolerance needs --shunt" in capsys.readouterr().err
