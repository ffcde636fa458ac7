"""What a reader needs to know that the file cannot say for itself (one options object for every reader)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

__all__ = ["ReadOptions"]


@dataclass(frozen=True)
class ReadOptions:
    """What the file cannot say for itself.

    Attributes
    ----------
    shunt : float or None
        Series shunt resistance in ohm, when the current channel is the voltage across a shunt.
    reference : float or None
        Reference resistance in ohm of a transfer-ratio file (Z = R_ref * V_part / V_ref).
    column_map : mapping of str to str
        Role -> header (or ``#N``, the N-th column) overriding header recognition; besides the value roles,
        ``u_z_magnitude``/``u_z_phase``/``u_z_real``/``u_z_imag`` (stated standard uncertainties) and
        ``status`` (the status column).
    through : str or None
        ``"shunt"`` or ``"series"``: how the part sits in a ``.s2p`` measurement (Touchstone only).
    dbm_reference : float or None
        Impedance in ohm that channel levels in dBm are referred to (V_rms = sqrt(R * 1 mW * 10^(dBm/10))).
    """

    shunt: float | None = None
    reference: float | None = None
    column_map: Mapping[str, str] = field(default_factory=lambda: MappingProxyType({}))
    through: str | None = None
    dbm_reference: float | None = None
