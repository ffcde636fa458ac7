"""The measured object every stage passes along: impedance over frequency, with its noise and history.

Conventions (common practice): time dependence e^{+j w t}; Z = V / I; positive reactance is inductive.
Noise is described in the log of Z, whose real part is ln|Z| and imaginary part the phase: amplitude errors
are relative, phase errors absolute.
"""

from __future__ import annotations

import dataclasses
import hashlib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .exceptions import InputError

__all__ = ["file_sha256", "Measurement", "NoiseTerm", "Provenance"]


@dataclass(frozen=True)
class Provenance:
    """Where a measurement came from and everything done to it, in order.

    Attributes
    ----------
    source : str
        Path of the input file as given (``""`` for data built in code).
    sha256 : str
        SHA-256 of the input file's bytes (``""`` when not read from a file).
    form : str
        Input form, e.g. ``"v_i_phasors"``, ``"v_shunt"``, ``"z_polar"``, ``"z_rect"``, ``"ratio"``,
        ``"simulator_complex"`` (complex cells of a circuit-simulator export), ``"lcr_*"`` (LCR-meter
        equivalent pairs such as Cs-Rs or Ls-Q), ``"touchstone_s11"``, ``"touchstone_s21_shunt"``,
        ``"touchstone_s21_series"``, ``"synthetic"``.
    columns : dict
        Role -> header (or Touchstone field) used for it.
    units : dict
        Role -> unit as read from the file (``"kHz"``, ``"mV rms"``, ``"deg"``...).
    steps : tuple of str
        Every conversion or correction applied, in words, in order.
    warnings : tuple of str
        Everything the user should know (rows dropped, assumptions made), in words.
    ignored_columns : tuple of str
        Headers of the file's columns that no role used (text, status, timestamps, extra readings).
    description : str
        What was read, in plain words (``"voltage across the part and across a 0.1 ohm shunt"``).
    """

    source: str = ""
    sha256: str = ""
    form: str = "synthetic"
    columns: dict[str, str] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)
    steps: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    ignored_columns: tuple[str, ...] = ()
    description: str = ""

    def with_step(self, step: str, warning: str | None = None) -> Provenance:
        """Return a copy with one more step (and optionally one more warning) recorded."""
        warnings = self.warnings + ((warning,) if warning else ())
        return dataclasses.replace(self, steps=self.steps + (step,), warnings=warnings)


@dataclass(frozen=True)
class NoiseTerm:
    """One term of the per-point noise variance of ln Z that a reader knows from how the data were taken.

    The variance of each component of ln Z (ln|Z| and phase in rad) at point i is modelled as
    ``sum_k theta_k * coefficient_k[i] / (|Z_model[i]|^2 if on_model else 1)``; the theta_k are estimated
    from the data (:mod:`fitz_tool.fitting.noise`). A relative term has coefficient 1; a channel floor
    sigma on a channel whose level is ``|I| |Z|`` has coefficient ``1 / |I|^2`` and ``on_model`` True.

    Attributes
    ----------
    name : str
        Short key (``"relative"``, ``"part_floor"``, ``"sense_floor"``, ``"impedance_floor"``, ``"s_floor"``).
    coefficient : ndarray of float
        Per-point coefficient (> 0), in 1 / unit^2 (unit^2 of the level once divided by |Z_model|^2).
    on_model : bool
        True when the coefficient is divided by the model's |Z|^2 (the level of the part channel).
    unit : str
        Unit of sqrt(theta) as reported: ``"%"`` for a relative term, ``"V"``, ``"A"``, ``"ohm"`` or ``""``.
    words : str
        What sqrt(theta) is, in words: ``"of |Z|"``, ``"on the part channel (peak)"``...
    default : bool
        True for the terms of the single-shape model the fit uses when nothing better is supported.
    component : str
        Which part of ln Z the term acts on: ``"both"`` (ln|Z| and phase alike: relative parts and phasor
        floors), ``"magnitude"`` (ln|Z| only) or ``"phase"`` (the phase only).
    """

    name: str
    coefficient: np.ndarray
    on_model: bool
    unit: str
    words: str
    default: bool = False
    component: str = "both"

    def column(self, model_magnitude: np.ndarray) -> np.ndarray:
        """The term's per-point variance factor at a model's |Z| (ohm)."""
        return self.coefficient / model_magnitude**2 if self.on_model else self.coefficient


def _check_physical(f: np.ndarray, z: np.ndarray, where: str) -> None:
    """Frequencies and |Z| inside the ranges of ``limits`` (far beyond any bench), else InputError."""
    from .limits import MAX_FREQUENCY, MAX_IMPEDANCE, MIN_FREQUENCY, MIN_IMPEDANCE

    outside = (f < MIN_FREQUENCY) | (f > MAX_FREQUENCY)
    if np.any(outside):
        k = int(np.argmax(outside))
        raise InputError(f"{where}: frequency {f[k]:g} Hz is outside {MIN_FREQUENCY:g} .. "
                         f"{MAX_FREQUENCY:g} Hz; check the frequency column and its unit")
    magnitude = np.abs(z)
    outside = (magnitude < MIN_IMPEDANCE) | (magnitude > MAX_IMPEDANCE)
    if np.any(outside):
        k = int(np.argmax(outside))
        raise InputError(f"{where}: |Z| = {magnitude[k]:g} ohm at {f[k]:g} Hz is outside "
                         f"{MIN_IMPEDANCE:g} .. {MAX_IMPEDANCE:g} ohm; check the columns, their units and "
                         f"--shunt/--reference")


@dataclass(frozen=True)
class Measurement:
    """Impedance of one part over frequency.

    Attributes
    ----------
    frequency : ndarray of float
        Frequency in Hz, strictly ascending, positive.
    impedance : ndarray of complex
        Impedance in ohm at each frequency (e^{+jwt}, Z = V/I).
    sigma_lnmag : ndarray of float or None
        Standard uncertainty of ln|Z| per point (i.e. relative |Z| uncertainty), or None when unknown.
    sigma_phase : ndarray of float or None
        Standard uncertainty of the phase of Z per point, in rad, or None when unknown.
    sigma_absolute : bool
        True when the sigmas are absolute standard uncertainties (weights trusted, covariance not rescaled);
        False when they only give the relative weight of points (noise level estimated from the residuals).
    provenance : Provenance
        File, columns, units, conversions and warnings.
    noise_terms : tuple of NoiseTerm
        The terms a noise model may be built from (channel floors, relative parts), from the reader; empty
        when the reader knows none. Used only when no absolute uncertainty is stated.
    """

    frequency: np.ndarray
    impedance: np.ndarray
    sigma_lnmag: np.ndarray | None = None
    sigma_phase: np.ndarray | None = None
    sigma_absolute: bool = False
    provenance: Provenance = field(default_factory=Provenance)
    noise_terms: tuple[NoiseTerm, ...] = ()

    def __post_init__(self) -> None:
        f = np.asarray(self.frequency, dtype=float)
        z = np.asarray(self.impedance, dtype=complex)
        where = self.provenance.source or "measurement"
        if f.ndim != 1 or f.shape != z.shape:
            raise InputError(f"{where}: frequency and impedance must be 1-D arrays of equal length")
        if f.size == 0:
            raise InputError(f"{where}: no data points")
        if not np.all(np.isfinite(f)) or not np.all(f > 0):
            raise InputError(f"{where}: frequencies must be finite and > 0 Hz")
        if f.size > 1 and not np.all(np.diff(f) > 0):
            raise InputError(f"{where}: frequencies must be strictly ascending and unique")
        if not np.all(np.isfinite(z)):
            raise InputError(f"{where}: impedance has non-finite values")
        _check_physical(f, z, where)
        object.__setattr__(self, "frequency", f)
        object.__setattr__(self, "impedance", z)
        for name in ("sigma_lnmag", "sigma_phase"):
            s = getattr(self, name)
            if s is not None:
                s = np.broadcast_to(np.asarray(s, dtype=float), f.shape).copy()
                if not np.all(np.isfinite(s)) or not np.all(s > 0):
                    raise InputError(f"{where}: {name} must be finite and > 0")
                object.__setattr__(self, name, s)
        terms = []
        for term in self.noise_terms:
            c = np.broadcast_to(np.asarray(term.coefficient, dtype=float), f.shape).copy()
            if not np.all(np.isfinite(c)) or not np.all(c > 0):
                raise InputError(f"{where}: noise term {term.name} must have finite coefficients > 0")
            c.setflags(write=False)
            terms.append(dataclasses.replace(term, coefficient=c))
        object.__setattr__(self, "noise_terms", tuple(terms))
        for arr in (self.frequency, self.impedance, self.sigma_lnmag, self.sigma_phase):
            if arr is not None:
                arr.setflags(write=False)

    @property
    def omega(self) -> np.ndarray:
        """Angular frequency in rad/s."""
        return 2 * np.pi * self.frequency

    @property
    def magnitude(self) -> np.ndarray:
        """|Z| in ohm."""
        return np.abs(self.impedance)

    @property
    def phase_deg(self) -> np.ndarray:
        """Phase of Z in degrees, in (-180, 180]."""
        return np.degrees(np.angle(self.impedance))

    @property
    def resistance(self) -> np.ndarray:
        """Re Z in ohm."""
        return self.impedance.real

    @property
    def reactance(self) -> np.ndarray:
        """Im Z in ohm (positive: inductive)."""
        return self.impedance.imag

    def __len__(self) -> int:
        return int(self.frequency.size)

    def replace(self, step: str | None = None, warning: str | None = None, **changes) -> Measurement:
        """Return a copy with fields changed and, if given, the step recorded in the provenance.

        Noise terms are kept only while the frequencies and |Z| stay those read (or when given)."""
        if step is not None:
            changes["provenance"] = changes.get("provenance", self.provenance).with_step(step, warning)
        if self.noise_terms and "noise_terms" not in changes and not self._same_points(changes):
            changes["noise_terms"] = ()  # the channel levels belong to the points as read
        return dataclasses.replace(self, **changes)

    def _same_points(self, changes: dict) -> bool:
        """True when ``changes`` keep the frequencies and |Z| (e.g. a phase-only correction)."""
        f = np.asarray(changes.get("frequency", self.frequency), dtype=float)
        z = np.asarray(changes.get("impedance", self.impedance), dtype=complex)
        return (f.shape == self.frequency.shape and np.array_equal(f, self.frequency)
                and np.allclose(np.abs(z), self.magnitude, rtol=1e-12, atol=0.0))

    def with_stated_noise(self, relative_magnitude: float, phase_rad: float) -> Measurement:
        """Return a copy whose points carry a stated standard uncertainty (absolute, trusted weights).

        Parameters
        ----------
        relative_magnitude : float
            Standard uncertainty of |Z| relative to |Z| (0.005 for 0.5 %), i.e. of ln|Z|.
        phase_rad : float
            Standard uncertainty of the phase of Z in rad.

        Where the measurement already carries per-point relative weights (e.g. from an S-parameter
        conversion), those are refused rather than silently replaced.
        """
        where = self.provenance.source or "measurement"
        if self.sigma_lnmag is not None or self.sigma_phase is not None:
            raise InputError(f"{where}: this input already carries per-point weights from its "
                             f"conversion ({self.provenance.form}); a stated noise level applies to inputs "
                             "without them")
        for name, value in (("relative |Z| noise", relative_magnitude), ("phase noise", phase_rad)):
            if not (np.isfinite(value) and value > 0):
                raise InputError(f"{where}: {name} must be a number above 0, e.g. --noise 0.5%:0.2deg")
        n = len(self)
        return self.replace(
            step=(f"stated noise: {relative_magnitude * 100:.3g} % of |Z| and {np.degrees(phase_rad):.3g} "
                  "deg of phase per point (absolute: uncertainties from this level, chi-square tests the "
                  "model)"),
            sigma_lnmag=np.full(n, relative_magnitude), sigma_phase=np.full(n, phase_rad),
            sigma_absolute=True)

    def select(self, mask: np.ndarray, step: str) -> Measurement:
        """Return the points where ``mask`` is True, recording why."""
        mask = np.asarray(mask, dtype=bool)

        def pick(a):
            return None if a is None else a[mask]

        return self.replace(
            step=step,
            frequency=self.frequency[mask],
            impedance=self.impedance[mask],
            sigma_lnmag=pick(self.sigma_lnmag),
            sigma_phase=pick(self.sigma_phase),
            noise_terms=tuple(dataclasses.replace(t, coefficient=t.coefficient[mask])
                              for t in self.noise_terms),
        )


def file_sha256(path: str | Path) -> str:
    """SHA-256 (hex) of a file's bytes; ``""`` when it cannot be read."""
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 16), b""):
                digest.update(block)
    except OSError:
        return ""
    return digest.hexdigest()
