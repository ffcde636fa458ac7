"""Benchmark of the noise model from the data: efficiency against Cramer-Rao and calibration of the errors.

Run ``python benchmarks/bench_noise.py`` (``--draws N``, default 200); not part of the test suite. Three
cases, each drawn ``N`` times, written to a file and read back by ``fitz_tool.read_measurement`` (so the
reader's noise terms are the ones a user gets), fitted with the noise model from the data (``estimate``,
the default) and with the reader's single shape (``single``, the behaviour before the noise model):

(a) pure relative noise: a capacitor ``Rs + Ls + C1`` (10 uF, 5 mohm, 1 nH) measured by a generator
    (1 V peak, 50 ohm) through a 0.1 ohm shunt, 0.1 % relative noise on each channel, no floor;
(b) the same with a 1 uV floor on each channel: at the series resonance (|Z| = 5 mohm, about 100 uV on the
    part) the part channel's floor dominates;
(c) a shunt-through S21 measurement (Touchstone .s2p, 50 ohm) of a milliohm part ``Rs + Ls`` (2 mohm,
    0.5 nH), 0.5 % relative noise on S21 (trace noise), no floor;
(d) an impedance file (|Z| and phase) of the capacitor with 0.1 % noise on |Z| and 0.5 deg on the phase
    (an analyzer whose phase is noisier than its magnitude).

The data (``tests/noise_cases.py``) are made from closed-form impedances with circularly symmetric noise
added to each channel's phasor.
Printed per case and parameter: RMS error / Cramer-Rao bound (the bound from the Fisher information with the
true per-point variance of ln Z, target <= 1.15), and the calibration, RMS of error / reported standard
error (target 0.85-1.2); the tail, p90 and max of |error| / Cramer-Rao (a Gaussian estimator at the bound
gives about 1.64 and 3 over 200 draws); also how often the estimate chose a noise model beyond the single
shape.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import fitz_tool as ft  # noqa: E402
from tests.noise_cases import case_draws  # noqa: E402


def score(model, truth, bound, measurements, shape):
    errors = {n: [] for n in truth}
    pulls = {n: [] for n in truth}
    chosen = 0
    for m in measurements:
        result = ft.fit(m, model, noise_shape=shape, intervals="none")
        chosen += bool(result.noise_model) and "from the data" in result.noise_model
        for n in truth:
            p = result.parameters[n]
            errors[n].append(p.value - truth[n])
            pulls[n].append((p.value - truth[n]) / p.stderr if p.stderr else np.inf)
    rms = {n: float(np.sqrt(np.mean(np.square(errors[n])))) for n in truth}
    calibration = {n: float(np.sqrt(np.mean(np.square(pulls[n])))) for n in truth}
    size = {n: np.abs(errors[n]) / bound[n] for n in truth}
    tail = {n: (float(np.percentile(size[n], 90)), float(np.max(size[n]))) for n in truth}
    return {n: rms[n] / bound[n] for n in truth}, calibration, chosen, tail


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--draws", type=int, default=200)
    parser.add_argument("--cases", default="abcd", help="which cases to run, e.g. b")
    args = parser.parse_args()
    rng = np.random.default_rng(2026)
    started = time.perf_counter()
    print(f"{args.draws} draws per case; RMS error / Cramer-Rao (target <= 1.15), calibration RMS(error / "
          "stderr) (target 0.85-1.2)")
    with tempfile.TemporaryDirectory() as tmp:
        for case in args.cases:
            model, truth, bound, measurements = case_draws(case, args.draws, Path(tmp), rng)
            for shape in ("estimate", "single"):
                ratio, calibration, chosen, tail = score(model, truth, bound, measurements, shape)
                cells = ", ".join(f"{n} {ratio[n]:.3g} / {calibration[n]:.3g}" for n in truth)
                extra = f"; noise model beyond the single shape chosen in {chosen}/{len(measurements)}" \
                    if shape == "estimate" else ""
                print(f"({case}) {shape:8s} {cells}{extra}")
                print("    |error| / Cramer-Rao p90, max: "
                      + ", ".join(f"{n} {tail[n][0]:.2f}, {tail[n][1]:.2f}" for n in truth))
    print(f"total {time.perf_counter() - started:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
