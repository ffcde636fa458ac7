"""The public API resolves every name it promises, and the CLI's small commands behave."""

import numpy as np
import pytest

import fitz_tool
from fitz_tool.cli import main


@pytest.mark.parametrize("name", fitz_tool.__all__)
def test_every_public_name_resolves(name):
    assert getattr(fitz_tool, name) is not None


def test_unknown_attribute_is_an_attribute_error():
    with pytest.raises(AttributeError):
        fitz_tool.no_such_thing  # noqa: B018


def test_models_command_lists_every_preset_with_its_expression(capsys):
    assert main(["models"]) == 0
    out = capsys.readouterr().out
    for name, preset in fitz_tool.PRESETS.items():
        assert name in out and preset.expression in out


def test_notebook_flow_reads_fits_and_derives(tmp_path):
    # A 10 ohm + 1 mH part written as |Z| and phase; |Z| = sqrt(R^2 + (w L)^2), phase = atan(w L / R)
    # (common practice, no source).
    f = np.logspace(2, 6, 41)
    z = 10 + 2j * np.pi * f * 1e-3
    path = tmp_path / "part.csv"
    rows = "\n".join(f"{a:.10g},{abs(b):.10g},{np.degrees(np.angle(b)):.10g}"
                     for a, b in zip(f, z, strict=True))
    path.write_text("Frequency (Hz),|Z| (ohm),Phase (deg)\n" + rows + "\n")
    m = fitz_tool.read_measurement(path)
    result = fitz_tool.fit(m, "R1 + L1")
    assert result.parameters["R1"].value == pytest.approx(10, rel=1e-6)
    assert result.parameters["L1"].value == pytest.approx(1e-3, rel=1e-6)
    design = fitz_tool.design_values(result, [1e4])
    assert "L1" in fitz_tool.format_fit_report(result, None, design)
