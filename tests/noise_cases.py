"""Simulated bench files for the noise-model checks: a capacitor through a shunt and a shunt-through S21.

Closed-form impedances (Z = R + j w L + 1 / (j w C); shunt-through S21 = 2Z / (2Z + Z0), S11 = S21 - 1:
common practice, no source), circularly symmetric noise added to each channel's phasor, files written and
read back by ``fitz_tool.read_measurement``. The Cramer-Rao bound is from the Fisher information of ln Z with
the true per-point variance. Used by tests/test_noise_model.py and benchmarks/bench_noise.py.
"""

from __future__ import annotations

import numpy as np

import fitz_tool as ft

LN10 = float(np.log(10.0))
F_CAP = np.logspace(3, np.log10(3e7), 201)
F_RF = np.logspace(5, 9, 201)
SHUNT, SOURCE, DRIVE, Z0 = 0.1, 50.0, 1.0, 50.0


def capacitor(f, p):
    """Z (ohm) of Rs + Ls + C1 and d Z / d p per parameter (closed form)."""
    w = 2 * np.pi * f
    z = p["Rs"] + 1j * w * p["Ls"] + 1 / (1j * w * p["C1"])
    return z, {"Rs": np.ones_like(w) + 0j, "Ls": 1j * w, "C1": -1 / (1j * w * p["C1"] ** 2)}


def inductor(f, p):
    """Z (ohm) of Rs + Ls and d Z / d p."""
    w = 2 * np.pi * f
    return p["Rs"] + 1j * w * p["Ls"], {"Rs": np.ones_like(w) + 0j, "Ls": 1j * w}


def circular(rng, n):
    """Complex noise with standard deviation 1 in each component."""
    return rng.standard_normal(n) + 1j * rng.standard_normal(n)


def shunt_channels(z, relative, floor):
    """True channel phasors (V peak) and the per-point variance of each component of ln Z."""
    current = DRIVE / (SOURCE + SHUNT + z)
    v_part, v_shunt = current * z, current * SHUNT
    variance = 2 * relative**2 + floor**2 / np.abs(v_part) ** 2 + floor**2 / np.abs(v_shunt) ** 2
    return v_part, v_shunt, variance


def write_shunt_file(path, f, v_part, v_shunt):
    rows = ["Frequency (Hz),Ch1 V(DUT) (V pk),Ch1 Phase (deg),Ch2 V(shunt) (V pk),Ch2 Phase (deg)"]
    for k in range(f.size):
        rows.append(f"{f[k]:.10g},{abs(v_part[k]):.10g},{np.degrees(np.angle(v_part[k])):.10g},"
                    f"{abs(v_shunt[k]):.10g},{np.degrees(np.angle(v_shunt[k])):.10g}")
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")


def write_s2p(path, f, s21):
    import skrf

    s11 = s21 - 1  # shunt element: S11 = -Z0 / (2Z + Z0) = S21 - 1
    s = np.empty((f.size, 2, 2), dtype=complex)
    s[:, 0, 0] = s[:, 1, 1] = s11
    s[:, 1, 0] = s[:, 0, 1] = s21
    skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s, z0=Z0).write_touchstone(
        str(path.with_suffix("")), form="ri")


def cramer_rao(z, grads, truth, variance, phase_variance=None):
    """Cramer-Rao standard deviation (SI) of each parameter from the Fisher information of ln Z
    (``variance`` of ln|Z| per point, and of the phase when ``phase_variance`` is None)."""
    names = list(truth)
    g = np.column_stack([grads[n] / z * LN10 * truth[n] for n in names])  # d ln Z / d log10 p
    w = 1 / variance
    w_phase = w if phase_variance is None else 1 / phase_variance
    fisher = (g.real.T * w) @ g.real + (g.imag.T * w_phase) @ g.imag
    return {n: LN10 * truth[n] * float(np.sqrt(np.linalg.inv(fisher)[i, i])) for i, n in enumerate(names)}


def case_draws(case, draws, folder, rng):
    """Measurements of one case (read back from files) and the Cramer-Rao bounds."""
    if case == "c":
        truth = {"Rs": 2e-3, "Ls": 0.5e-9}
        z, grads = inductor(F_RF, truth)
        s21 = 2 * z / (2 * z + Z0)
        variance = 0.005**2 / np.abs(1 - s21) ** 2  # d ln Z / d S = 1 / (S (1 - S)), S noise relative
        bound = cramer_rao(z, grads, truth, variance)
        out = []
        for k in range(draws):
            noisy = s21 * (1 + 0.005 * circular(rng, F_RF.size))
            path = folder / f"c{k}.s2p"
            write_s2p(path, F_RF, noisy)
            out.append(ft.read_measurement(path, ft.ReadOptions(through="shunt")))
        return "Rs + Ls", truth, bound, out
    truth = {"Rs": 5e-3, "Ls": 1e-9, "C1": 10e-6}
    z, grads = capacitor(F_CAP, truth)
    if case == "d":  # an impedance file with 0.1 % noise on |Z| and 0.5 deg on the phase
        sm, sp = 1e-3, np.radians(0.5)
        bound = cramer_rao(z, grads, truth, np.full(F_CAP.size, sm**2), np.full(F_CAP.size, sp**2))
        out = []
        for k in range(draws):
            n = F_CAP.size
            noisy = z * np.exp(sm * rng.standard_normal(n) + 1j * sp * rng.standard_normal(n))
            rows = [f"{f:.10g},{abs(x):.10g},{np.degrees(np.angle(x)):.10g}\n"
                    for f, x in zip(F_CAP, noisy, strict=True)]
            path = folder / f"d{k}.csv"
            path.write_text("Frequency (Hz),|Z| (Ohm),Phase (deg)\n" + "".join(rows), encoding="utf-8")
            out.append(ft.read_measurement(path))
        return "Rs + Ls + C1", truth, bound, out
    floor = 1e-6 if case == "b" else 0.0
    v_part, v_shunt, variance = shunt_channels(z, 1e-3, floor)
    bound = cramer_rao(z, grads, truth, variance)
    out = []
    for k in range(draws):
        n = F_CAP.size
        noisy_part = v_part * (1 + 1e-3 * circular(rng, n)) + floor * circular(rng, n)
        noisy_shunt = v_shunt * (1 + 1e-3 * circular(rng, n)) + floor * circular(rng, n)
        path = folder / f"{case}{k}.csv"
        write_shunt_file(path, F_CAP, noisy_part, noisy_shunt)
        out.append(ft.read_measurement(path, ft.ReadOptions(shunt=SHUNT)))
    return "Rs + Ls + C1", truth, bound, out
