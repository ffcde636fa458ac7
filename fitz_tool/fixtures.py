"""Two-port fixture de-embedding on the full matrices: open in Y, then short in Z (scikit-rf's classes).

When it applies. A part measured as a 2-port between two pads (on-wafer, or a PCB fixture with pad dummies)
comes with an *open* dummy (the pads alone) and a *short* dummy (the pads shorted to ground). Neither
dummy passes signal from port 1 to port 2, so their S21 is small; this is how the files say what they are.
Such standards cannot be turned into one series (or shunt) impedance each and fed to the one-port
formula: the short dummy's through-impedance is huge (its ports are decoupled), and the formula blows up.
Rule (our choice): two-port de-embedding when the part and every standard given are ``.s2p`` files and
every standard's median |S21| is below ``DECOUPLED_S21``; otherwise (standards of a through fixture: the
part removed, or replaced by a through or by a short to ground in a line, so one of them passes signal)
each file is converted to the part's through-impedance and the one-port formula of ``corrections.py``
applies. Which one ran is recorded in the provenance.

Method (Koolen, Geelen, Versleijen, IEEE BCTM 1991, as implemented by scikit-rf's
``skrf.calibration.deembedding.OpenShort``): the pads are a shunt admittance Y_pad at each port, the
leads a series impedance Z_lead between the pads and the part, so

    Y_m = Y_pad + (Z_lead + Z_part)^-1,   Y_open = Y_pad,   Y_short = Y_pad + Z_lead^-1
    Z_part = (Y_m - Y_open)^-1 - (Y_short - Y_open)^-1

(with only an open: Y_m - Y_open, scikit-rf ``Open``; only a short: Z_m - Z_short, ``Short``). The part's
impedance then comes from the de-embedded 2-port as ``--through`` says (common practice, no source): a
series part has Y = [[1, -1], [-1, 1]] / Z, so Z = -1 / Y21; a shunt part has Z = [[Z, Z], [Z, Z]], so
Z = Z21. Standards on another frequency grid are interpolated onto the part's (scikit-rf
``Network.interpolate``, linear in real and imaginary parts of S); they must cover its range.

Standards checked first (``standards.py``): a short that admits less than the open, ||Y_short|| < ||Y_open||
(largest singular value) at most points, means the two were swapped. Then |Z_short| < |Z_part| < |Z_open|
along the part's own path, with the pads removed (Y' = Y - Y_open, Z' = Y'^-1): for a series part
|Z_part| = |1/Y'21|, the short's is its leads' loop |Z'11 + Z'22 - Z'12 - Z'21| and the open's its
feed-through |1/Y_open,21|; for a shunt part |Z_part| = |Z'21|, the short's is its Z'21 (common ground)
and the open's the pad impedance |1/Y_open,11|.

Noise. As for the Touchstone reader: equal, independent complex noise of unknown size in each of the four
measured S-parameters of the part (the standards' noise neglected). ln Z of the part gets
sigma = sqrt(sum_ij |d ln Z / dS_ij|^2) per unit noise, as relative weights (``sigma_absolute=False``);
the derivatives are central differences (step ``_STEP``) through the same scikit-rf de-embedding (the
chain is analytic in each S_ij: truncation about step^2, rounding about eps / step times the
conditioning of the matrix inversions).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import skrf
from skrf.calibration.deembedding import Open, OpenShort, Short

from .exceptions import InputError
from .measurement import Measurement, Provenance
from .readers.touchstone import MAX_SENSITIVITY, NetworkFile, read_network
from .standards import check_between, check_swapped

__all__ = ["DECOUPLED_S21", "two_port_method", "compensation_choice", "deembed_network", "part_impedance",
           "deembed_two_port"]

#: A 2-port standard whose median |S21| is below this passes no signal: a pad dummy (open or short to ground).
DECOUPLED_S21 = 0.5

_STEP = 1e-4


def _median_s21(read: NetworkFile) -> float:
    return float(np.median(np.abs(read.network.s[:, 1, 0])))


def two_port_method(part: str | Path, standards: dict[str, str | Path | None]) -> str | None:
    """Which compensation the files call for: ``"two-port"``, ``"one-port"`` or None (no standard given)."""
    return compensation_choice(part, standards)[0]


def compensation_choice(part: str | Path, standards: dict[str, str | Path | None]) -> tuple[str | None, str]:
    """Which compensation the files call for, and why: (``"two-port"``, ``"one-port"`` or None, reason).

    Parameters
    ----------
    part : str or Path
        The part's bench file.
    standards : dict
        Role (``"open"``, ``"short"``, ``"load"``) -> file or None.

    Raises
    ------
    InputError
        The part and its standards were not measured the same way (a ``.s2p`` part with a ``.s1p`` standard
        or the reverse).
    """
    given = {role: Path(p) for role, p in standards.items() if p}
    if not given:
        return None, ""
    is_s2p = Path(part).suffix.lower() == ".s2p"
    for role, path in given.items():
        if (path.suffix.lower() == ".s2p") != is_s2p:
            raise InputError(f"{path}: the {role} standard is a {path.suffix} file but the part {part} is a "
                             f"{Path(part).suffix} file; measure the standards the same way as the part")
    if not is_s2p:
        return "one-port", "the part and its standards are one-port files"
    if "load" in given:
        return "one-port", "a load standard is given (a one-port open/short/load on the through impedance)"
    medians = {role: _median_s21(read_network(p)) for role, p in given.items()}
    text = ", ".join(f"{role} {m:.2g}" for role, m in medians.items())
    if all(m < DECOUPLED_S21 for m in medians.values()):
        return "two-port", f"the standards pass no signal (median |S21|: {text}): pad dummies"
    return "one-port", (f"a standard passes signal (median |S21|: {text}): through-fixture standards, each "
                        f"converted to the through impedance")


def _norm(matrices: np.ndarray) -> np.ndarray:
    """Largest singular value of each 2 x 2 matrix in a stack (points, 2, 2)."""
    return np.linalg.norm(matrices, 2, axis=(1, 2))


def _on_grid(read: NetworkFile, frequency: skrf.Frequency, role: str) -> skrf.Network:
    network = read.network
    f = network.frequency.f
    if f.shape == frequency.f.shape and np.allclose(f, frequency.f, rtol=1e-9, atol=0.0):
        return network
    if frequency.f[0] < f[0] * (1 - 1e-9) or frequency.f[-1] > f[-1] * (1 + 1e-9):
        raise InputError(f"{read.path}: the {role} standard covers {frequency_text(f[0])} to "
                         f"{frequency_text(f[-1])} but the part spans {frequency_text(frequency.f[0])} to "
                         f"{frequency_text(frequency.f[-1])}; measure the standard over the whole range")
    return network.interpolate(frequency)


def frequency_text(value: float) -> str:
    from .units import format_quantity

    return format_quantity(value, "Hz")


def deembed_network(part: skrf.Network, open: skrf.Network | None = None,
                    short: skrf.Network | None = None) -> skrf.Network:
    """The part's 2-port with pads (open) and leads (short) removed, by scikit-rf (all on one grid)."""
    if open is not None and short is not None:
        return OpenShort(open, short).deembed(part)
    if open is not None:
        return Open(open).deembed(part)
    if short is not None:
        return Short(short).deembed(part)
    raise InputError("two-port de-embedding needs an open and/or a short standard")


def part_impedance(network: skrf.Network, through: str) -> np.ndarray:
    """Impedance in ohm of the part in a 2-port: -1 / Y21 for ``"series"``, Z21 for ``"shunt"``."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if through == "series":
            return -1 / network.y[:, 1, 0]
        if through == "shunt":
            return network.z[:, 1, 0]
    raise InputError(f"--through {through!r}: expected shunt or series")


def _check(f: np.ndarray, part: skrf.Network, open: skrf.Network | None, short: skrf.Network | None,
           through: str, names: tuple[str, str], where: str) -> str | None:
    """Swapped standards refused; points where the part is not between its standards counted (module doc)."""
    y_open = open.y if open is not None else np.zeros_like(part.s)
    none = np.zeros(f.shape, bool)
    with np.errstate(divide="ignore", invalid="ignore"):
        if open is not None and short is not None:
            check_swapped(f, 1 / _norm(short.y), 1 / _norm(open.y), names, "1/||Y||")
        z_part = np.linalg.inv(part.y - y_open) if open is not None else part.z
        if through == "series":  # the series path: -1/Y21, and the leads' loop Z11 + Z22 - Z12 - Z21
            size = np.abs(1 / (part.y - y_open)[:, 1, 0])
            open_size = np.abs(1 / y_open[:, 1, 0]) if open is not None else None
            def lead(z: np.ndarray) -> np.ndarray:
                return np.abs(z[:, 0, 0] + z[:, 1, 1] - z[:, 0, 1] - z[:, 1, 0])
        else:  # the path to ground: Z21, the pads' shunt impedance 1/Y11 and the short's common Z21
            size = np.abs(z_part[:, 1, 0])
            open_size = np.abs(1 / y_open[:, 0, 0]) if open is not None else None
            def lead(z: np.ndarray) -> np.ndarray:
                return np.abs(z[:, 1, 0])
        below_short = none
        if short is not None:
            z_short = np.linalg.inv(short.y - y_open) if open is not None else short.z
            below_short = size < lead(z_short)
        above_open = size > open_size if open_size is not None else none
    return check_between(f, below_short, above_open, where, "the part's " + through + " impedance")


def deembed_two_port(part: str | Path, through: str | None, open: str | Path | None = None,
                     short: str | Path | None = None) -> Measurement:
    """Read a 2-port part and its pad standards, de-embed on the full matrices, return the part's impedance.

    Parameters
    ----------
    part : str or Path
        ``.s2p`` file of the part between its pads.
    through : str
        ``"series"`` (part between port 1 and port 2) or ``"shunt"`` (part from the line to ground).
    open, short : str, Path or None
        ``.s2p`` files of the open (pads alone) and short (pads shorted to ground) dummies; at least one.

    Returns
    -------
    Measurement
        Frequency in Hz, impedance in ohm, relative sigmas from noise in S (module docstring), every step
        in the provenance.

    Raises
    ------
    InputError
        Unreadable files, no ``through``, standards off the part's range, swapped standards, or a part not
        between its standards (see ``standards.py``).
    """
    if through not in ("shunt", "series"):
        raise InputError(f"{part}: a .s2p file needs to know how the part was connected: pass --through "
                         f"series (part between the ports) or --through shunt (part to ground)")
    if open is None and short is None:
        raise InputError("two-port de-embedding needs --open and/or --short")
    read = read_network(part)
    dut = read.network
    reads = {role: read_network(p) for role, p in (("open", open), ("short", short)) if p is not None}
    dummies = {role: _on_grid(r, dut.frequency, role) for role, r in reads.items()}
    f = np.asarray(dut.f, dtype=float)
    names = (repr(str(open)), repr(str(short)))
    outside = _check(f, dut, dummies.get("open"), dummies.get("short"), through, names, str(part))

    def impedance(s: np.ndarray) -> np.ndarray:
        network = dut.copy()
        network.s = s
        return part_impedance(deembed_network(network, dummies.get("open"), dummies.get("short")), through)

    z = impedance(dut.s)
    derivative_sq = np.zeros(f.shape)
    for i in range(2):
        for j in range(2):
            step = np.zeros_like(dut.s)
            step[:, i, j] = _STEP
            derivative_sq += np.abs((impedance(dut.s + step) - impedance(dut.s - step)) / (2 * _STEP)) ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        sensitivity = np.sqrt(derivative_sq) / np.abs(z)
    positive = f > 0
    usable = (positive & np.isfinite(z) & (z != 0) & np.isfinite(sensitivity)
              & (sensitivity <= MAX_SENSITIVITY))
    if not np.any(usable):
        raise InputError(f"{part}: no usable point after de-embedding (check --through and the standards)")

    which = " and ".join(f"{role} {str(p)!r}" for role, p in (("open", open), ("short", short)) if p)
    medians = ", ".join(f"{role} {_median_s21(r):.2g}" for role, r in reads.items())
    method = {("open", "short"): "OpenShort: Y - Y_open, then Z - Z_short' with Z_short' = "
                                  "(Y_short - Y_open)^-1",
              ("open",): "Open: Y - Y_open", ("short",): "Short: Z - Z_short"}
    steps = [f"read {len(f)} points from Touchstone {read.version} with scikit-rf, "
             f"reference {read.reference}",
             *read.steps,
             f"two-port de-embedding on the full matrices with {which} (scikit-rf {method[tuple(reads)]}); "
             f"chosen because the standards pass no signal (median |S21|: {medians}): pad dummies",
             "part impedance from the de-embedded 2-port: "
             + ("Z = -1/Y21 (series)" if through == "series" else "Z = Z21 (shunt)"),
             "standards checked: " + ("short admits more than the open, " if len(reads) == 2 else "")
             + ("part between them at every point" if outside is None else "see warnings"),
             "sigma of ln|Z| and phase = sqrt(sum |d ln Z/dS_ij|^2) per point (equal additive noise in the "
             "four S-parameters of the part, unknown scale; standards' noise neglected)"]
    interpolated = [role for role, r in reads.items() if dummies[role] is not r.network]
    if interpolated:
        steps.append(f"{' and '.join(interpolated)} interpolated onto the part's {len(f)} points")
    warnings_ = [*read.notes, *(n for r in reads.values() for n in r.notes)]
    if outside:
        warnings_.append(outside)
    if not np.all(usable):
        steps.append(f"kept {int(usable.sum())} of {len(f)} points")
        warnings_.append(f"dropped {int(np.sum(~usable))} point(s) where the de-embedded part is singular")
    provenance = Provenance(
        source=str(part), sha256=read.sha256, form=f"touchstone_2port_{through}",
        columns={"frequency": "frequency", "S": "S11 S21 S12 S22", "reference": read.reference,
                 **{role: str(p) for role, p in (("open", open), ("short", short)) if p}},
        units={"frequency": read.frequency_unit, "S": read.data_format},
        steps=tuple(steps), warnings=tuple(warnings_))
    return Measurement(f[usable], z[usable], sigma_lnmag=sensitivity[usable], sigma_phase=sensitivity[usable],
                       sigma_absolute=False, provenance=provenance)
