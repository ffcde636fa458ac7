"""The part in the circuit: voltage, ripple and loss under a periodic drive, from a fitted model.

``waveform`` (records of whole periods), ``shapes`` (built-in drives from a short specification),
``model`` (the fitted part from a fit or its JSON record) and ``response`` (harmonic response, results).
"""

from __future__ import annotations

from .model import DriveModel, dc_resistance, model_from_fit, model_from_json
from .response import SAFETY_NOTE, DriveResult, Harmonic, Quantity, drive_response
from .shapes import drive_waveform, parse_drive_spec
from .waveform import Waveform, band_limited, read_waveform, waveform_from_samples

__all__ = ["DriveModel", "DriveResult", "Harmonic", "Quantity", "Waveform", "SAFETY_NOTE", "band_limited",
           "dc_resistance",
           "drive_response", "drive_waveform", "model_from_fit", "model_from_json", "parse_drive_spec",
           "read_waveform", "waveform_from_samples"]
