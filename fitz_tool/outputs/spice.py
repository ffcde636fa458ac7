"""The fitted network as a two-pin SPICE subcircuit.

R, L and C become SPICE elements with their fitted values written to full precision (``%.15g``). A
resistor fitted to exactly 0 ohm becomes a 0 V source (an ideal short).

The constant phase element ``Z = 1/(Q (jw)^n)`` has no SPICE element. It is exported as a passive Foster
network that approximates it over the measured sweep: a series chain of parallel R-C cells plus one series
capacitor and one series resistor,

    Z_P(s) ~ R_inf + 1/(s C_0) + sum_k R_k / (1 + s R_k C_k),

with the cell time constants log-spaced at ``CELLS_PER_DECADE`` per decade over the sweep widened by
``MARGIN_DECADES`` on each side, and all R_k, C_k, C_0, R_inf >= 0 found by non-negative least squares
(``scipy.optimize.nnls``) on the relative complex error over the sweep. This discretizes the published
relaxation-time representation ``s^-n = sin(n pi)/pi * integral_0^inf t^-n / (s + t) dt`` (0 < n < 1). The
achieved worst relative error over the sweep is computed on a dense grid and written into the netlist
header; the export is refused (OutputError) when it exceeds ``CPE_TOLERANCE``. Outside the sweep the
approximation degrades (it tends to a resistor far above and a capacitor far below), so simulate the part
inside its measured range. n = 1 (a capacitor C = Q) and n = 0 (a resistor 1/Q) are written exactly.
"""

from __future__ import annotations

import datetime
import math
import re
from dataclasses import dataclass

import numpy as np
from scipy.optimize import nnls

from ..circuit import Element, Node, Parallel, Series
from ..exceptions import OutputError
from ..results import FitResult

__all__ = ["CpeNetwork", "cpe_network", "to_spice_subcircuit", "write_constant_phase", "CPE_TOLERANCE",
           "CELLS_PER_DECADE", "MARGIN_DECADES"]

CELLS_PER_DECADE = 8
MARGIN_DECADES = 2.0
#: Largest accepted relative error of a constant phase element's Foster network over the sweep.
CPE_TOLERANCE = 1e-8
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


@dataclass(frozen=True)
class CpeNetwork:
    """Foster approximation of one constant phase element (SI: ohm, F).

    ``cells`` are (R_k, C_k) parallel pairs in series; ``series_capacitance`` C_0 (None when not needed) and
    ``series_resistance`` R_inf (0 when not needed) complete the chain. ``max_relative_error`` is the worst
    |Z_network / Z_cpe - 1| over the sweep it was built for.
    """

    cells: tuple[tuple[float, float], ...]
    series_capacitance: float | None
    series_resistance: float
    max_relative_error: float
    f_min: float
    f_max: float

    def impedance(self, frequency: np.ndarray) -> np.ndarray:
        """Impedance (ohm) of the network at ``frequency`` (Hz)."""
        s = 2j * np.pi * np.asarray(frequency, dtype=float)
        z = np.full(s.shape, self.series_resistance, dtype=complex)
        for r, c in self.cells:
            z += r / (1 + s * r * c)
        if self.series_capacitance is not None:
            z += 1 / (s * self.series_capacitance)
        return z


def cpe_network(q: float, n: float, f_min: float, f_max: float) -> CpeNetwork:
    """Passive Foster network approximating ``1/(q (jw)^n)`` between ``f_min`` and ``f_max`` (Hz).

    Parameters
    ----------
    q : float
        CPE coefficient in S s^n (> 0).
    n : float
        Exponent, 0 < n < 1.
    f_min, f_max : float
        Frequency band in Hz over which the error is minimized and reported.
    """
    if not (q > 0 and 0 < n < 1 and 0 < f_min <= f_max):
        raise OutputError(f"constant phase element with Q={q:g}, n={n:g}: cannot build a SPICE network "
                          "(need Q > 0 and 0 < n < 1)")
    w_min, w_max = 2 * math.pi * f_min, 2 * math.pi * max(f_max, f_min * 1.0001)
    lo, hi = math.log10(w_min) - MARGIN_DECADES, math.log10(w_max) + MARGIN_DECADES
    poles = np.logspace(lo, hi, int(round((hi - lo) * CELLS_PER_DECADE)) + 1)
    omega = np.geomspace(w_min, w_max, int(40 * math.log10(w_max / w_min)) + 60)
    s = 1j * omega
    target = 1.0 / (q * s**n)
    for _ in range(3):
        weights = _nonnegative_fit(s, target, poles)
        # drop cells that carry almost nothing in the band: they only add extreme element values that
        # worsen the simulator's conditioning; then refit without them
        share = np.max(np.abs(weights[None, :-2] / (s[:, None] + poles[None, :]) / target[:, None]), axis=0)
        keep = share > 1e-12
        if keep.all():
            break
        poles = poles[keep]
    # w_k / (s + t_k) is a parallel R-C cell with R = w_k / t_k and C = 1 / w_k
    cells = tuple((float(w / t), float(1 / w)) for w, t in zip(weights[:-2], poles, strict=True) if w > 0)
    c0 = float(1 / weights[-2]) if weights[-2] > 0 else None
    network = CpeNetwork(cells, c0, float(weights[-1]), math.nan, f_min, f_max)
    check = np.geomspace(f_min, max(f_max, f_min * 1.0001), 4001)
    exact = 1.0 / (q * (2j * np.pi * check) ** n)
    error = float(np.max(np.abs(network.impedance(check) / exact - 1)))
    return CpeNetwork(cells, c0, network.series_resistance, error, f_min, f_max)


def _nonnegative_fit(s: np.ndarray, target: np.ndarray, poles: np.ndarray) -> np.ndarray:
    """Non-negative weights of 1/(s + t_k), 1/s and 1 matching ``target`` in relative complex error."""
    basis = np.column_stack([1 / (s[:, None] + poles[None, :]), 1 / s, np.ones_like(s)]) / target[:, None]
    a = np.vstack([basis.real, basis.imag])
    b = np.concatenate([np.ones(s.size), np.zeros(s.size)])
    scale = np.linalg.norm(a, axis=0)
    return nnls(a / scale, b, maxiter=20 * a.shape[1])[0] / scale


def _clean(text: str) -> str:
    """One line of comment text: no line breaks or control characters."""
    return re.sub(r"[\x00-\x1f\x7f]+", " ", str(text))


class _Writer:
    def __init__(self, result: FitResult):
        self.values = result.values
        self.f_min = float(result.measurement.frequency[0])
        self.f_max = float(result.measurement.frequency[-1])
        self.lines: list[str] = []
        self.notes: list[str] = []
        self.used: set[str] = set()
        self.nodes = 0

    def node(self) -> str:
        self.nodes += 1
        return f"n{self.nodes}"

    def name(self, wanted: str) -> str:
        name, k = wanted, 1
        while name.upper() in self.used:  # SPICE names are case-insensitive
            k += 1
            name = f"{wanted}_{k}"
        self.used.add(name.upper())
        return name

    def add(self, kind: str, wanted: str, a: str, b: str, value: float, what: str) -> None:
        if not math.isfinite(value) or value < 0 or (value == 0 and kind != "R"):
            raise OutputError(f"{what} = {value:g}: cannot be written as a SPICE element "
                              "(needs a positive value)")
        if kind == "R" and value == 0:
            self.lines.append(f"{self.name('V' + wanted)} {a} {b} 0")
        else:
            self.lines.append(f"{self.name(wanted)} {a} {b} {value:.15g}")

    def element(self, e: Element, a: str, b: str) -> None:
        if e.record.spice is None:
            raise OutputError(f"{e.name}: a {e.record.description} has no SPICE form; export refused")
        own = {spec.suffix: self.values[e.name + spec.suffix] for spec in e.record.parameters}
        e.record.spice(self, e.name, own, a, b)

    def emit(self, node: Node, a: str, b: str) -> None:
        if isinstance(node, Element):
            self.element(node, a, b)
        elif isinstance(node, Series):
            ends = [a] + [self.node() for _ in node.children[:-1]] + [b]
            for k, child in enumerate(node.children):
                self.emit(child, ends[k], ends[k + 1])
        elif isinstance(node, Parallel):
            for child in node.children:
                self.emit(child, a, b)


def write_constant_phase(writer: _Writer, name: str, q: float, n: float, a: str, b: str) -> None:
    """Write a constant phase element ``Z = 1/(Q (jw)^n)`` between nodes ``a`` and ``b``: exactly for n = 1
    (a capacitor) and n = 0 (a resistor), else as the Foster network described in the module docstring."""
    if n == 1.0:
        writer.add("C", f"C_{name}", a, b, q, f"{name}_Q")
        writer.notes.append(f"{name}: n = 1, written exactly as a capacitor C = Q")
        return
    if n == 0.0:
        writer.add("R", f"R_{name}", a, b, 1 / q, f"1/{name}_Q")
        writer.notes.append(f"{name}: n = 0, written exactly as a resistor R = 1/Q")
        return
    net = cpe_network(q, n, writer.f_min, writer.f_max)
    if not net.max_relative_error <= CPE_TOLERANCE:
        raise OutputError(f"constant phase element {name}: its SPICE network reaches only "
                          f"{net.max_relative_error:.1e} relative error; export refused")
    writer.notes.append(
        f"{name}: constant phase element (Q={q:.6g} S s^n, n={n:.6g}) approximated by a passive Foster "
        f"network of {len(net.cells)} R-C cells; worst relative error {net.max_relative_error:.1e} from "
        f"{writer.f_min:.6g} Hz to {writer.f_max:.6g} Hz (degrades outside this range)")
    parts = [("cell", r, c) for r, c in net.cells]
    if net.series_capacitance is not None:
        parts.append(("C", 0.0, net.series_capacitance))
    if net.series_resistance > 0:
        parts.append(("R", net.series_resistance, 0.0))
    ends = [a] + [writer.node() for _ in parts[:-1]] + [b]
    for k, (kind, r, c) in enumerate(parts):
        x, y = ends[k], ends[k + 1]
        if kind == "cell":
            writer.add("R", f"R_{name}_{k + 1}", x, y, r, name)
            writer.add("C", f"C_{name}_{k + 1}", x, y, c, name)
        elif kind == "C":
            writer.add("C", f"C_{name}_0", x, y, c, name)
        else:
            writer.add("R", f"R_{name}_inf", x, y, r, name)


def to_spice_subcircuit(result: FitResult, name: str = "FITTED_PART",
                        now: datetime.datetime | None = None) -> str:
    """A two-pin ``.subckt NAME 1 2`` of the fitted network, with a header comment summarizing the fit.

    Parameters
    ----------
    result : FitResult
        The fit; values in SI.
    name : str
        Subcircuit name (letters, digits, underscore; not starting with a digit).
    now : datetime, optional
        Date written in the header (default: now, UTC).

    Raises
    ------
    OutputError
        For a bad name, a value SPICE cannot take (negative or non-finite, zero L or C), or a constant
        phase element whose network misses ``CPE_TOLERANCE``.
    """
    if not _NAME.match(name):
        raise OutputError(f"subcircuit name {name!r}: use letters, digits and underscores, not starting "
                          "with a digit")
    writer = _Writer(result)
    writer.used.add(name.upper())
    writer.emit(result.circuit.tree, "1", "2")
    from .. import __version__

    when = (now or datetime.datetime.now(datetime.UTC)).astimezone(datetime.UTC)
    prov = result.measurement.provenance
    header = [
        f"* {name}: fitted equivalent circuit, written by fitz_tool {__version__}",
        f"* date (UTC): {when.isoformat(timespec='seconds').replace('+00:00', 'Z')}",
        f"* model: {_clean(result.circuit.expression)}",
        f"* measured part: {_clean(prov.source) or '(data built in code)'}"
        + (f"  sha256 {prov.sha256}" if prov.sha256 else ""),
        f"* sweep: {writer.f_min:.6g} Hz to {writer.f_max:.6g} Hz, {result.n_points} points",
        f"* fit: {'converged' if result.success else 'NOT converged'} ({_clean(result.message)}); "
        f"chi-square {result.chi_square:.6g}, reduced chi-square {result.reduced_chi_square:.4g}, "
        f"BIC {result.bic:.6g}, {result.n_free} free parameters",
        "* parameters (SI; standard error):",
    ]
    for p in result.parameters.values():
        err = f"{p.stderr:.3g}" if p.stderr is not None else _clean(p.stderr_note or "no uncertainty")
        header.append(f"*   {p.name} = {p.value:.15g} {p.unit}  ({err}{'' if p.vary else ', fixed'})")
    header += [f"* flag: {_clean(f)}" for f in result.flags]
    header += [f"* note: {_clean(n)}" for n in writer.notes]
    header.append("* pins: 1 and 2 (the two terminals of the part)")
    return "\n".join(header + [f".subckt {name} 1 2", *writer.lines, f".ends {name}"]) + "\n"
