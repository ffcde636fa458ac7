"""Write the text bench samples of sample_measurements/ from known circuits plus realistic noise.

Invented scenario: the power-stage bench of a 48 V -> 12 V, 400 kHz buck converter ("project Kestrel").
Each file is one part measured one way. Noise is relative in each channel's amplitude and absolute in its
phase (how bench instruments err), from a fixed seed, so running this script again writes identical bytes::

    python sample_measurements/generate_samples.py

The true circuit values are listed in sample_measurements/README.md and in ``SAMPLES`` below. Only numpy is
used, so the samples do not depend on fitz_tool's own circuit code.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 20240517


def sweep(f_start: float, f_stop: float, per_decade: int) -> np.ndarray:
    """Log-spaced frequencies in Hz, ``per_decade`` points per decade, both ends included."""
    decades = np.log10(f_stop / f_start)
    return np.logspace(np.log10(f_start), np.log10(f_stop), int(round(decades * per_decade)) + 1)


def z_choke(f, L, Rs, Cp, Rp):
    """(Rs + L) in parallel with the winding capacitance Cp and the core-loss resistance Rp (ohm)."""
    w = 2 * np.pi * f
    return 1 / (1 / (Rs + 1j * w * L) + 1j * w * Cp + 1 / Rp)


def z_capacitor(f, C, esr, esl):
    """C, ESR and ESL in series (ohm)."""
    w = 2 * np.pi * f
    return esr + 1j * w * esl + 1 / (1j * w * C)


def z_bead(f, Rdc, L, Rac, C):
    """Rdc in series with L || Rac || C (ohm)."""
    w = 2 * np.pi * f
    return Rdc + 1 / (1 / (1j * w * L) + 1 / Rac + 1j * w * C)


def noisy(phasor, rng, rel_amplitude, phase_deg):
    """Phasor with relative amplitude noise and absolute phase noise (deg), as one channel measures it."""
    amplitude = np.abs(phasor) * (1 + rel_amplitude * rng.standard_normal(phasor.shape))
    phase = np.angle(phasor) + np.radians(phase_deg * rng.standard_normal(phasor.shape))
    return amplitude * np.exp(1j * phase)


def wrap_deg(phase_deg):
    """Degrees wrapped into (-180, 180]."""
    return 180.0 - np.mod(180.0 - phase_deg, 360.0)


def fmt(x: float, decimal: str = ".") -> str:
    text = f"{x:.7g}"
    return text.replace(".", ",") if decimal == "," else text


def write(name: str, lines: list[str], encoding: str = "utf-8") -> None:
    (HERE / name).write_bytes(("\n".join(lines) + "\n").encode(encoding))


def output_choke_scope(rng) -> None:
    """Scope across the part (Ch1) and across a 0.1 ohm series shunt (Ch2), mV peak-to-peak and degrees."""
    f = sweep(1e3, 30e6, 25)
    z = z_choke(f, **SAMPLES["output_choke_scope.csv"])
    shunt, source, drive = 0.1, 50.0, 5.0  # ohm, ohm, V peak
    current = drive / (source + shunt + z)
    trigger = np.exp(-1j * 2 * np.pi * f * 35e-9)  # common delay between trigger and both channels
    v_part = noisy(current * z * trigger, rng, 0.004, 0.2)
    v_shunt = noisy(current * shunt * trigger, rng, 0.004, 0.2)
    lines = ["Bench scope export, project Kestrel power stage (48 V -> 12 V buck)",
             "Part: L3 output choke, sample 1",
             "Setup: generator 50 ohm, 10 V pp; Ch1 differential probe across the part; "
             "Ch2 across 0.1 ohm shunt",
             "Phases relative to the generator trigger",
             "",
             "Frequency (Hz),Ch1 V(DUT) (mV pp),Ch1 Phase (deg),Ch2 V(shunt) (mV pp),Ch2 Phase (deg)"]
    for k in range(f.size):
        lines.append(",".join([fmt(f[k]), fmt(2e3 * abs(v_part[k])),
                               fmt(wrap_deg(np.degrees(np.angle(v_part[k])))),
                               fmt(2e3 * abs(v_shunt[k])),
                               fmt(wrap_deg(np.degrees(np.angle(v_shunt[k]))))]))
    write("output_choke_scope.csv", lines)


def bulk_capacitor_analyzer(rng) -> None:
    """Impedance analyzer: |Z| and phase, semicolons and decimal commas."""
    f = sweep(20.0, 5e6, 20)
    z = noisy(z_capacitor(f, **SAMPLES["bulk_capacitor_analyzer.csv"]), rng, 0.001, 0.05)
    lines = ["Impedance analyzer export;;", "Part;C12 bulk capacitor, 48 V input rail;",
             "Fixture;4-terminal, short/open compensated;", "Level;500 mV;", "",
             "Freq [Hz];|Z| [Ohm];Theta [deg]"]
    for k in range(f.size):
        lines.append(";".join([fmt(f[k], ","), fmt(abs(z[k]), ","), fmt(np.degrees(np.angle(z[k])), ",")]))
    write("bulk_capacitor_analyzer.csv", lines)


def ferrite_bead_rx(rng) -> None:
    """Impedance as R and X in kohm, tab-delimited, no preamble."""
    f = sweep(1e6, 1e9, 30)
    z = noisy(z_bead(f, **SAMPLES["ferrite_bead_rx.txt"]), rng, 0.005, 0.2)
    lines = ["Frequency (MHz)\tR (kOhm)\tX (kOhm)"]
    for k in range(f.size):
        lines.append("\t".join([fmt(f[k] / 1e6), fmt(z[k].real / 1e3), fmt(z[k].imag / 1e3)]))
    write("ferrite_bead_rx.txt", lines)


def input_capacitor_gain_phase(rng) -> None:
    """Gain/phase analyzer: V(part) / V(1 ohm reference resistor in series) in dB and degrees."""
    f = sweep(100.0, 10e6, 20)
    r_ref = 1.0
    z = z_capacitor(f, **SAMPLES["input_capacitor_gain_phase.csv"])
    h = noisy(z / r_ref, rng, 0.0025, 0.1)
    lines = ["# gain/phase analyzer, channel B (across part) over channel A (across 1 ohm reference)",
             "# part: C7 input film capacitor, project Kestrel",
             "Frequency (Hz),Gain (dB),Phase (deg)"]
    for k in range(f.size):
        lines.append(",".join([fmt(f[k]), fmt(20 * np.log10(abs(h[k]))), fmt(np.degrees(np.angle(h[k])))]))
    write("input_capacitor_gain_phase.csv", lines)


def bootstrap_capacitor_vi(rng) -> None:
    """V and I phasors, V in mV rms and I in µA peak (mixed conventions), Latin-1, sweep downwards."""
    f = sweep(10e3, 50e6, 20)[::-1]
    z = z_capacitor(f, **SAMPLES["bootstrap_capacitor_vi_latin1.csv"])
    current = 0.5 / (50.0 + z)  # 0.5 V peak from a 50 ohm generator
    reference = np.exp(-1j * np.pi / 2)  # phases against a sine reference
    v = noisy(current * z * reference, rng, 0.002, 0.1)
    i = noisy(current * reference, rng, 0.002, 0.1)
    lines = ["Frequency (kHz),Voltage amplitude (mV rms),Voltage phase (°),"
             "Current amplitude (µA peak),Current phase (°)"]
    for k in range(f.size):
        lines.append(",".join([fmt(f[k] / 1e3), fmt(1e3 * abs(v[k]) / np.sqrt(2)),
                               fmt(np.degrees(np.angle(v[k]))), fmt(1e6 * abs(i[k])),
                               fmt(np.degrees(np.angle(i[k])))]))
    write("bootstrap_capacitor_vi_latin1.csv", lines, encoding="latin-1")


#: True circuit values (SI) of each sample.
SAMPLES: dict[str, dict[str, float]] = {
    "output_choke_scope.csv": {"L": 22e-6, "Rs": 18e-3, "Cp": 12e-12, "Rp": 15e3},
    "bulk_capacitor_analyzer.csv": {"C": 470e-6, "esr": 22e-3, "esl": 14e-9},
    "ferrite_bead_rx.txt": {"Rdc": 0.04, "L": 1.0e-6, "Rac": 520.0, "C": 1.6e-12},
    "input_capacitor_gain_phase.csv": {"C": 4.7e-6, "esr": 5e-3, "esl": 6e-9},
    "bootstrap_capacitor_vi_latin1.csv": {"C": 100e-9, "esr": 30e-3, "esl": 1.1e-9},
}


def main() -> None:
    rng = np.random.default_rng(SEED)
    output_choke_scope(rng)
    bulk_capacitor_analyzer(rng)
    ferrite_bead_rx(rng)
    input_capacitor_gain_phase(rng)
    bootstrap_capacitor_vi(rng)


if __name__ == "__main__":
    main()
