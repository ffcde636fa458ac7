"""inspect: ranges, inductive/capacitive bands, apparent resonances, the table and the CLI outputs."""

import math

import numpy as np
import pandas as pd
import pytest

from fitz_tool.cli import main
from fitz_tool.inspection import format_summary, measurement_table, summarize
from fitz_tool.measurement import Measurement, Provenance

F = np.logspace(3, 8, 501)
W = 2 * np.pi * F


def choke(R=0.05, L=10e-6, C=20e-12):
    """(R + L) || C computed here with numpy."""
    return Measurement(F, 1 / (1 / (R + 1j * W * L) + 1j * W * C),
                       provenance=Provenance("choke.csv", form="z_rect", steps=("read choke.csv",),
                                             warnings=("dropped 1 row(s) at 0 Hz (line(s) 3)",)))


def test_parallel_resonance_of_a_lossy_choke():
    R, L, C = 1.0, 10e-6, 20e-12
    s = summarize(choke(R, L, C))
    assert s.points == F.size and s.f_min == 1e3 and s.f_max == 1e8
    # (R + jwL) || C is real where w^2 = 1/(LC) - (R/L)^2 (common practice, no source).
    f0 = math.sqrt(1 / (L * C) - (R / L) ** 2) / (2 * math.pi)
    assert len(s.resonances) == 1
    r = s.resonances[0]
    assert r.kind == "parallel" and r.extremum == "maximum"
    assert r.frequency == pytest.approx(f0, rel=1e-3)
    assert [b.kind for b in s.bands] == ["resistive", "inductive", "capacitive"]
    # Phase of R + jwL reaches 10 deg at w L = tan(10 deg) R (common practice, no source); the bands
    # switch between the two measured points around it.
    f10 = math.tan(math.radians(10)) * R / (2 * math.pi * L)
    assert s.bands[0].f_high < f10 < s.bands[1].f_low
    assert s.bands[1].f_high < f0 < s.bands[2].f_low
    assert s.f_at_z_max == pytest.approx(f0, rel=0.03)


def test_series_resonance_of_a_capacitor():
    C, esr, esl = 1e-6, 0.01, 5e-9
    m = Measurement(F, esr + 1j * W * esl + 1 / (1j * W * C))
    s = summarize(m)
    # Series RLC is real at f = 1 / (2 pi sqrt(L C)) (common practice, no source).
    assert [r.kind for r in s.resonances] == ["series"]
    assert s.resonances[0].frequency == pytest.approx(1 / (2 * math.pi * math.sqrt(esl * C)), rel=1e-3)
    assert s.resonances[0].magnitude == pytest.approx(esr, rel=0.05)
    assert s.bands[0].kind == "capacitive" and s.bands[-1].kind == "inductive"
    # |Z| = ESR at series resonance (common practice, no source)
    assert s.z_min == pytest.approx(esr, rel=0.01)


def test_phase_noise_around_zero_is_not_a_resonance():
    rng = np.random.default_rng(1)
    z = 10.0 * np.exp(1j * np.radians(2.0 * rng.standard_normal(F.size)))
    s = summarize(Measurement(F, z))
    assert s.resonances == () and [b.kind for b in s.bands] == ["resistive"]


def test_summary_text_uses_engineering_notation_and_shows_history():
    m = choke()
    text = format_summary(summarize(m), m)
    assert "1.000 kHz to 100.0 MHz" in text
    assert "parallel" in text and "MHz" in text and "k\u03a9" in text
    assert "read choke.csv" in text and "dropped 1 row(s) at 0 Hz" in text


def test_measurement_table_columns_and_values():
    m = choke()
    table = measurement_table(m)
    assert list(table.columns) == [
        "frequency_hz", "z_real_ohm", "z_imag_ohm", "z_magnitude_ohm", "z_phase_deg"]
    np.testing.assert_allclose(table["z_magnitude_ohm"], np.abs(m.impedance), rtol=1e-15)
    np.testing.assert_allclose(table["z_phase_deg"], np.degrees(np.angle(m.impedance)), rtol=1e-15)


def test_cli_inspect_writes_table_and_plot(tmp_path, capsys):
    m = choke()
    path = tmp_path / "choke.csv"
    lines = ["Frequency (Hz),R (ohm),X (ohm)"] + [f"{f:.17g},{z.real:.17g},{z.imag:.17g}"
                                                  for f, z in zip(m.frequency, m.impedance, strict=True)]
    path.write_text("\n".join(lines) + "\n")
    out_csv, out_png = tmp_path / "out" / "z.csv", tmp_path / "out" / "bode.png"
    assert main(["inspect", str(path), "--csv", str(out_csv), "--plot", str(out_png)]) == 0
    assert "apparent resonances" in capsys.readouterr().out
    table = pd.read_csv(out_csv)
    np.testing.assert_allclose(table["z_real_ohm"], m.impedance.real, rtol=1e-12)
    # PNG file signature (PNG specification, from memory)
    assert out_png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
