"""Drive response against ngspice transient runs (independent time-domain simulation).

Each bench: a part simulated in an ngspice AC analysis, fitted with no starting values; then its exported
SPICE subcircuit, and the true circuit, are driven in an ngspice transient analysis by the same periodic
current (a PWL source through the drive's corners) until steady state, and the last period is compared
with fitz_tool's harmonic response: peak-to-peak and RMS within 0.2 %, average power within 1 %.
"""

import subprocess
import tempfile
from pathlib import Path

import numpy as np
import pytest
from spice_sim import ac_analysis, require_ngspice

from fitz_tool.circuit import Circuit
from fitz_tool.drive import DriveModel, drive_response, drive_waveform, model_from_fit, read_waveform
from fitz_tool.fitting.least_squares import fit
from fitz_tool.measurement import Measurement
from fitz_tool.outputs.spice import to_spice_subcircuit

SIGMA = 0.002

# output capacitor of a 48 V -> 12 V buck at 400 kHz: ripple current a triangle rising for 25 % of the period
CAPACITOR = ("Rs + Ls + C1", "Rs a b 6m\nLs b c 1.8n\nC1 c 0 330u", (1e3, 1e8),
             [(0.0, -1.2), (0.25, 1.2)], 400e3, 0.0, "triangle:2.4App@400k,duty=0.25")
# output choke: 2 A DC plus 0.6 A peak-to-peak symmetric ripple at 500 kHz
CHOKE = ("(Rs + L1) || Cp || Rp", "Rs a b 18m\nL1 b 0 22u\nCp a 0 12p\nRp a 0 15k", (1e3, 3e7),
         [(0.0, -0.3), (0.5, 0.3)], 500e3, 2.0, "triangle:0.6App@500k+dc:2A")


def simulated_fit(expression: str, netlist: str, band: tuple[float, float]):
    f, v = ac_analysis(f"I1 0 a AC 1\n{netlist}", ["v(a)"], *band, points_per_decade=20)  # ngspice AC
    rng = np.random.default_rng(7)
    z = v["v(a)"] * np.exp(SIGMA * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size)))
    return fit(Measurement(f, z, sigma_lnmag=SIGMA, sigma_phase=SIGMA, sigma_absolute=True), expression)


def transient(part: str, corners, frequency: float, dc: float, periods: int = 6, last: int = 1):
    """ngspice transient of ``part`` (between node a and ground) under a periodic PWL current.

    ``corners`` are (fraction of the period, current) pairs of one period; returns time, voltage and current
    of the ``last`` periods. ``uic`` starts from rest (a DC operating point is undefined for a capacitor fed
    by a current source); both parts settle within a period (the choke's slow mode is L / (Rs + Rp), ns).
    """
    exe = require_ngspice()
    period = 1 / frequency
    points = [(k * period + u * period, dc + i) for k in range(periods) for u, i in corners]
    points.append((periods * period, dc + corners[0][1]))
    pwl = " ".join(f"{t:.15g} {i:.15g}" for t, i in points)
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "tran.txt"
        deck = (f"* drive check\nI1 0 s PWL({pwl})\nVsense s a 0\n{part}\n.control\noption numdgt=15\n"
                f"option reltol=1e-7\ntran {period / 2000:.15g} {periods * period:.15g} 0 "
                f"{period / 2000:.15g} uic\n"
                f"wrdata {out} v(a) i(Vsense)\nquit\n.endc\n.end\n")
        (Path(tmp) / "deck.cir").write_text(deck)
        run = subprocess.run([exe, "-b", str(Path(tmp) / "deck.cir")], capture_output=True, text=True,
                             timeout=120)
        if not out.exists():
            raise RuntimeError(f"ngspice failed:\n{run.stdout}\n{run.stderr}")
        data = np.loadtxt(out)
    keep = data[:, 0] >= (periods - last) * period * (1 - 1e-12)
    return data[keep, 0], data[keep, 1], data[keep, 3]


def period_figures(t, v, i):
    span = t[-1] - t[0]
    mean = np.trapezoid(v, t) / span
    square = np.trapezoid(v * v, t) / span
    return {"peak_to_peak": v.max() - v.min(), "rms": np.sqrt(square), "rms_ac": np.sqrt(square - mean**2),
            "power": np.trapezoid(v * i, t) / span}


@pytest.mark.parametrize("bench", [CAPACITOR, CHOKE], ids=["output_capacitor", "output_choke"])
def test_drive_response_matches_ngspice_transient(bench):
    expression, netlist, band, corners, frequency, dc, spec = bench
    result = simulated_fit(expression, netlist, band)
    assert result.success
    drive = drive_response(model_from_fit(result), drive_waveform(spec))
    subckt = to_spice_subcircuit(result, name="PART")
    for label, part in (("exported subcircuit", f"{subckt}X1 a 0 PART"), ("true circuit", netlist)):
        spice = period_figures(*transient(part, corners, frequency, dc))  # source: ngspice transient
        # no DC path (capacitor): its DC voltage is its history, so the AC RMS is compared; else total RMS
        rms_key = "rms_ac" if dc == 0 else "rms"
        assert drive.voltage["peak_to_peak"].value == pytest.approx(spice["peak_to_peak"], rel=2e-3), label
        assert drive.voltage[rms_key].value == pytest.approx(spice[rms_key], rel=2e-3), label
        assert drive.power.value == pytest.approx(spice["power"], rel=1e-2), label
        print(label, {k: drive_value(drive, k) / spice[k] - 1 for k in spice})


def drive_value(drive, key):
    return drive.power.value if key == "power" else drive.voltage[key].value


def test_simulator_record_of_the_current_gives_the_simulated_voltage(tmp_path):
    # The ngspice transient's own current (adaptive, non-uniform time steps, several periods, SI with no
    # units in the header) read as a record with --period: the response must match ngspice's voltage.
    expression, netlist, band, corners, frequency, dc, _ = CAPACITOR
    values = {"Rs": 6e-3, "Ls": 1.8e-9, "C1": 330e-6}
    model = DriveModel(Circuit.parse(expression), values, (), None, band, "true circuit")
    t, v, i = transient(netlist, corners, frequency, dc, periods=3, last=2)
    record = tmp_path / "tran.csv"
    record.write_text("time,i(vsense)\n" + "\n".join(f"{a:.15g},{b:.15g}" for a, b in zip(t, i, strict=True)))
    waveform = read_waveform(record, "current", period=1 / frequency)
    assert waveform.periods == 2 and any("no unit" in s for s in waveform.steps)
    drive = drive_response(model, waveform)
    spice = period_figures(*transient(netlist, corners, frequency, dc))  # source: ngspice transient
    assert drive.voltage["peak_to_peak"].value == pytest.approx(spice["peak_to_peak"], rel=2e-3)
    assert drive.voltage["rms_ac"].value == pytest.approx(spice["rms_ac"], rel=2e-3)
    assert drive.power.value == pytest.approx(spice["power"], rel=1e-2)
