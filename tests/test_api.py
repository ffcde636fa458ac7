"""The public API resolves every name it promises, and the CLI's small commands behave."""

import importlib
import importlib.metadata
import math

import numpy as np
import pytest

import fitz_tool
from fitz_tool.cli import main


@pytest.mark.parametrize("name", [n for n in fitz_tool.__all__ if n != "__version__"])
def test_every_public_name_is_the_object_its_module_defines(name):
    obj = getattr(fitz_tool, name)
    defining = importlib.import_module(f"fitz_tool.{fitz_tool._EXPORTS[name]}")
    assert obj is getattr(defining, name)
    assert name in dir(fitz_tool)


def test_version_is_the_installed_distribution_version():
    # importlib.metadata (Python standard library) reads the installed package's metadata
    assert fitz_tool.__version__ == importlib.metadata.version("fitz_tool")


def test_unknown_attribute_is_an_attribute_error():
    with pytest.raises(AttributeError):
        fitz_tool.no_such_thing  # noqa: B018


def test_models_command_lists_every_preset_with_its_expression(capsys):
    assert main(["models"]) == 0
    out = capsys.readouterr().out
    for name, preset in fitz_tool.PRESETS.items():
        assert name in out and preset.expression in out


def test_a_10_ohm_1_mh_part_is_read_fitted_and_derived_through_the_api(tmp_path):
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
    values = design.points[0].values
    # series R + L at 10 kHz: ESR = R, L_eff = L, Q = w L / R (common practice, no source)
    assert values["ESR"].value == pytest.approx(10, rel=1e-6)
    assert values["L_eff"].value == pytest.approx(1e-3, rel=1e-6)
    assert values["Q"].value == pytest.approx(2 * math.pi * 1e4 * 1e-3 / 10, rel=1e-6)
    assert design.resonances == ()
    assert "L1" in fitz_tool.format_fit_report(result, None, design)
