"""Reading bench files into a Measurement.

``read_measurement`` picks the reader by file suffix: ``.s1p``/``.s2p`` (any case) go to the Touchstone
reader, everything else to the delimited-text reader (``text.py``; layout in ``delimited.py``, header
recognition in ``headers.py`` and ``columns.py``, the five input forms in ``forms.py``).
"""

from __future__ import annotations

from pathlib import Path

from ..measurement import Measurement
from .options import ReadOptions

__all__ = ["ReadOptions", "read_measurement"]

_TOUCHSTONE_SUFFIXES = (".s1p", ".s2p")


def read_measurement(path: str | Path, options: ReadOptions | None = None) -> Measurement:
    """Read a bench file (delimited text or Touchstone) into a Measurement; the file is never modified.

    Parameters
    ----------
    path : str or Path
        The bench file.
    options : ReadOptions, optional
        Shunt (ohm), reference (ohm), column map and Touchstone connection.

    Returns
    -------
    Measurement
        Frequency in Hz, impedance in ohm, provenance of every step.

    Raises
    ------
    InputError
        The file cannot be read or used as given; the message names file, line and column.
    """
    options = options if options is not None else ReadOptions()
    if Path(path).suffix.lower() in _TOUCHSTONE_SUFFIXES:
        from .touchstone import read_touchstone

        return read_touchstone(path, options)
    from .text import read_delimited

    return read_delimited(path, options)
