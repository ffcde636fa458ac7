"""Benchmark of the fitter: speed, convergence from no starting values, and efficiency against Cramer-Rao.

Run ``python benchmarks/bench_fit.py`` (``--quick`` for a short run); not part of the test suite. Prints:

1. median time of ``fitz_tool.fit`` (seeding included) on a 201-point, 4-parameter part, divided by
   the median time of a bare ``scipy.optimize.least_squares`` fit of the same residuals and exact Jacobian
   started at the true values (target <= 3);
2. convergence over random parts (log-uniform values, resonance inside and up to a decade outside the
   sweep, 1 % noise in ln|Z| and phase) fitted with no guesses: a part counts as recovered when every
   parameter's truth lies inside its reported uncertainty widened to 5 sigma (target >= 99.5 %), in SI
   values and in the fitted coordinates (log10 of the value). The rule, per parameter, with estimate v:
   when the fit reports a 68 % profile-likelihood interval [lo, hi] (``ParameterEstimate.interval``, given
   where the first-order error is not trusted; lo may be 0 and hi infinite), the truth must lie inside
   [v - 5 (v - lo), v + 5 (hi - v)], each side widened to 5 of its own sigma-equivalents (in log10 values
   for the second count); otherwise it must lie within 5 standard errors of v; a parameter with neither
   counts as a miss. Misses are compared with a fit started at the truth, to tell a search failure (worse
   chi-square) from a parameter the sweep does not determine;
3. for 3 reference parts, RMS error of each estimate over 300 noise draws divided by the Cramer-Rao bound
   ``sqrt(diag((J^T J)^-1)) * sigma`` from the Fisher information at the truth (target <= 1.1).
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
import warnings
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from fitz_tool.circuit import Circuit  # noqa: E402
from fitz_tool.fitting.least_squares import fit  # noqa: E402
from fitz_tool.fitting.problem import problem_for  # noqa: E402
from fitz_tool.measurement import Measurement  # noqa: E402

SIGMA = 0.01  # noise in ln|Z| and in phase (rad)


def noisy(circuit: Circuit, f: np.ndarray, values: dict, rng: np.random.Generator) -> Measurement:
    z = circuit.impedance(f, values)
    noise = SIGMA * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
    return Measurement(f, z * np.exp(noise))


def internal(circuit: Circuit, values: dict) -> np.ndarray:
    return np.array([values[n] if circuit.parameter_is_exponent(n) else np.log10(values[n])
                     for n in circuit.parameter_names])


def timing(repeats: int) -> tuple[float, float]:
    circuit = Circuit.parse("(Rs + L1 || Rcore) || Cp")
    truth = {"Rs": 0.08, "L1": 47e-6, "Rcore": 30e3, "Cp": 6e-12}
    f = np.logspace(3, 8, 201)
    rng = np.random.default_rng(1)
    t_fit, t_bare = [], []
    for _ in range(repeats):
        m = noisy(circuit, f, truth, rng)
        problem = problem_for(circuit, m, circuit.parameter_names, {})
        x_true = internal(circuit, truth)
        t0 = time.perf_counter()
        least_squares(problem.residual, x_true, jac=problem.jacobian)
        t1 = time.perf_counter()
        fit(m, circuit)
        t2 = time.perf_counter()
        t_bare.append(t1 - t0)
        t_fit.append(t2 - t1)
    return statistics.median(t_fit), statistics.median(t_bare)


def log_uniform(rng: np.random.Generator, low: float, high: float) -> float:
    return float(10 ** rng.uniform(np.log10(low), np.log10(high)))


def random_part(rng: np.random.Generator) -> tuple[str, dict, np.ndarray]:
    """A random part and its 201-point sweep of 4 decades; resonance from -1 to 5 decades above fmin."""
    kind = rng.integers(4)
    while True:
        position = rng.uniform(-1.0, 5.0)
        f0 = log_uniform(rng, 1e3, 1e9)
        w0 = 2 * np.pi * f0
        if kind == 0:  # inductor with winding capacitance and core loss
            expr = "(Rs + L1 || Rcore) || Cp"
            L = log_uniform(rng, 10e-9, 10e-3)
            v = {"Rs": w0 * L / log_uniform(rng, 10, 1000), "L1": L,
                 "Rcore": w0 * L * log_uniform(rng, 3, 300), "Cp": 1 / (w0**2 * L)}
            ok = 0.1e-12 <= v["Cp"] <= 10e-9
        elif kind == 1:  # capacitor with ESR, ESL and leakage
            expr = "Rs + Ls + C1 || Rleak"
            C = log_uniform(rng, 1e-12, 1e-3)
            Ls = 1 / (w0**2 * C)
            fc = f0 / 10 ** position * log_uniform(rng, 1 / 3, 30)  # leakage corner near the low end
            v = {"Rs": w0 * Ls / log_uniform(rng, 1, 100), "Ls": Ls, "C1": C,
                 "Rleak": 1 / (2 * np.pi * fc * C)}
            ok = 0.05e-9 <= Ls <= 100e-9
        elif kind == 2:  # ferrite bead
            expr = "Rdc + Lb || Rb || Cb"
            L = log_uniform(rng, 100e-9, 10e-6)
            v = {"Rdc": log_uniform(rng, 5e-3, 1), "Lb": L, "Rb": w0 * L * log_uniform(rng, 0.5, 5),
                 "Cb": 1 / (w0**2 * L)}
            ok = 0.05e-12 <= v["Cb"] <= 100e-12
        else:  # capacitor whose dielectric follows a power law
            expr = "Rs + Ls + P1"
            n = rng.uniform(0.6, 0.98)
            Q = log_uniform(rng, 1e-9, 1e-2)
            Ls = np.sin(np.pi * n / 2) / (Q * w0 ** (n + 1))  # X = w Ls - sin(n pi/2) / (Q w^n) = 0 at w0
            v = {"Rs": log_uniform(rng, 1e-3, 1), "Ls": Ls, "P1_Q": Q, "P1_n": n}
            ok = 0.05e-9 <= Ls <= 100e-9
        fmin = f0 / 10**position
        if ok and 1.0 <= fmin and fmin * 1e4 <= 3e9:
            return expr, v, np.logspace(np.log10(fmin), np.log10(fmin) + 4, 201)


def _log10(v: float) -> float:
    return float(np.log10(v)) if v > 0 else -np.inf


def _within(p, true: float, exponent: bool, log_space: bool) -> bool:
    """Truth inside the reported uncertainty widened to 5 sigma (rule in the module docstring)."""
    to = _log10 if log_space and not exponent else float  # fitted coordinate: log10 of the value
    if p.interval is not None:
        v, lo, hi, t = to(p.value), to(p.interval[0]), to(p.interval[1]), to(true)
        with np.errstate(invalid="ignore"):
            return v - 5 * (v - lo) <= t <= v + 5 * (hi - v)
    if p.stderr is None:
        return False
    if log_space and not exponent:  # stderr of log10 of the value: stderr / (ln 10 value)
        return abs(np.log10(p.value / true)) <= 5 * p.stderr / (np.log(10) * p.value)
    return abs(p.value - true) <= 5 * p.stderr


def _interval_text(p) -> str:
    return "" if p.interval is None else f", 68 % interval {p.interval[0]:.3g} - {p.interval[1]:.3g}"


def convergence(parts: int) -> dict:
    """Counts over random parts: recovered (SI and fitted coordinates) and global optimum reached."""
    rng = np.random.default_rng(7)
    counts = {"si": 0, "log": 0, "optimum": 0, "parts": parts, "seconds": 0.0, "misses": [], "profiled": 0}
    for _ in range(parts):
        expr, truth, f = random_part(rng)
        circuit = Circuit.parse(expr)
        m = noisy(circuit, f, truth, rng)
        t0 = time.perf_counter()
        result = fit(m, circuit)
        counts["seconds"] += time.perf_counter() - t0
        counts["profiled"] += any(p.interval is not None for p in result.parameters.values())
        si, log = ({n: _within(p, truth[n], circuit.parameter_is_exponent(n), space)
                    for n, p in result.parameters.items()} for space in (False, True))
        counts["si"] += all(si.values())
        counts["log"] += all(log.values())
        if all(si.values()):
            counts["optimum"] += 1
            continue
        # Not recovered: did the fit still reach the optimum? Compare with a fit started at the truth.
        reference = fit(m, circuit, guesses=truth).chi_square
        counts["optimum"] += result.chi_square <= reference * (1 + 1e-6)
        detail = ", ".join(f"{n}={p.value:.3g} (true {truth[n]:.3g}, se "
                           f"{'none' if p.stderr is None else f'{p.stderr:.2g}'}{_interval_text(p)})"
                           for n, p in result.parameters.items() if not si[n])
        counts["misses"].append(f"{expr} over {f[0]:.3g}-{f[-1]:.3g} Hz: {detail}; "
                                f"chi2 {result.chi_square:.6g} vs {reference:.6g} from the truth; "
                                f"flags: {len(result.flags)}")
    return counts


REFERENCE_PARTS = (
    ("22 uH choke", "(Rs + L1 || Rcore) || Cp", {"Rs": 0.05, "L1": 22e-6, "Rcore": 20e3, "Cp": 8e-12},
     np.logspace(3, 8, 201)),
    ("1 uF ceramic capacitor", "Rs + Ls + C1", {"Rs": 0.01, "Ls": 0.8e-9, "C1": 1e-6},
     np.logspace(3, 8, 201)),
    ("bead", "Rdc + Lb || Rb || Cb", {"Rdc": 0.05, "Lb": 1e-6, "Rb": 300, "Cb": 1e-12},
     np.logspace(5, 9.5, 201)),
)


def cramer_rao(draws: int) -> list[tuple[str, str, float]]:
    rows = []
    rng = np.random.default_rng(11)
    for label, expr, truth, f in REFERENCE_PARTS:
        circuit = Circuit.parse(expr)
        names = circuit.parameter_names
        z, grads = circuit.impedance_gradient(f, truth)
        # Fisher information of the log-impedance model with noise SIGMA in ln|Z| and phase (Gaussian):
        # F = J^T J / sigma^2 with J = d[ln|Z|, arg Z]/dp (Cramer-Rao bound: cov >= F^-1).
        g = np.column_stack([grads[n] / z for n in names])
        jac = np.vstack([g.real, g.imag])
        bound = np.sqrt(np.diag(np.linalg.inv(jac.T @ jac))) * SIGMA
        estimates = np.array([[fit(noisy(circuit, f, truth, rng), circuit).values[n] for n in names]
                              for _ in range(draws)])
        rms = np.sqrt(np.mean((estimates - np.array([truth[n] for n in names])) ** 2, axis=0))
        rows += [(label, n, float(r / b)) for n, r, b in zip(names, rms, bound, strict=True)]
    return rows


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer repetitions (about a minute)")
    args = parser.parse_args()
    warnings.simplefilter("ignore", RuntimeWarning)  # lmfit's sqrt of a negative variance, reported as None
    repeats, parts, draws = (15, 100, 60) if args.quick else (51, 600, 300)
    start = time.perf_counter()

    t_fit, t_bare = timing(repeats)
    print(f"(1) fit time, 201 points, 4 parameters: median {t_fit * 1e3:.2f} ms; bare least_squares from the "
          f"truth {t_bare * 1e3:.2f} ms; ratio {t_fit / t_bare:.2f} (target <= 3)")

    c = convergence(parts)
    n = c["parts"]
    print(f"(2) convergence from no guesses over {n} random parts "
          f"(mean fit time {c['seconds'] / n * 1e3:.1f} ms):")
    print(f"    recovered within 5 sigma of the reported uncertainty (SI values): {c['si']}/{n} = "
          f"{100 * c['si'] / n:.1f} % (target >= 99.5 %)")
    print(f"    recovered within 5 sigma of the reported uncertainty in the fitted coordinates "
          f"(log10 values): {c['log']}/{n} = {100 * c['log'] / n:.1f} %")
    print(f"    parts with a profile-likelihood interval for some parameter: {c['profiled']}/{n}")
    print(f"    reached a chi-square no worse than a fit started at the truth: {c['optimum']}/{n} = "
          f"{100 * c['optimum'] / n:.1f} %")
    for line in c["misses"][:10]:
        print(f"    not recovered: {line}")

    rows = cramer_rao(draws)
    print(f"(3) RMS error over {draws} noise draws / Cramer-Rao bound (target <= 1.1):")
    for label, name, ratio in rows:
        print(f"    {label:24s} {name:6s} {ratio:.3f}")
    print(f"    worst {max(r for *_, r in rows):.3f}")
    print(f"total {time.perf_counter() - start:.0f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
