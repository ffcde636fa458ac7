"""The fitted part as a drive sees it: circuit, values, covariance and fitted band, from a fit or FIT.json.

``DriveModel`` is built in process from a ``FitResult`` (covariance from
``derived.parameter_covariance``) or from the JSON record ``fit --json`` writes, where the covariance is
rebuilt as ``C_ij = s_i s_j r_ij`` from the standard errors and the correlation matrix.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..circuit import Circuit, Element, Parallel, Series
from ..exceptions import InputError, ModelSyntaxError

__all__ = ["DriveModel", "model_from_fit", "model_from_json", "dc_resistance"]


@dataclass(frozen=True)
class DriveModel:
    """A fitted impedance model with what is known of its uncertainty.

    Attributes
    ----------
    circuit : Circuit
        The model.
    values : dict of str to float
        Every parameter in SI.
    names : tuple of str
        Parameters ``covariance`` is ordered by (the free ones with a standard error).
    covariance : ndarray or None
        SI covariance of ``names``; None with ``uncertainty_note`` saying why.
    band : tuple of float, or None
        Fitted frequency range (Hz); None when the record does not say.
    source : str
        Where the model came from.
    uncertainty_note : str
        What the propagated uncertainty leaves out, or why there is none.
    budget_covariance : ndarray or None
        Covariance of ``names`` with the stated bench limits added (uncertainty budget, GUM): the fit's
        covariance plus ``d_s d_s^T`` for each input s, ``d_s`` its signed contributions ``c_i u_i`` to the
        parameters (one systematic input moves them all together; inputs uncorrelated). None without
        stated limits.
    """

    circuit: Circuit
    values: dict[str, float]
    names: tuple[str, ...]
    covariance: np.ndarray | None
    band: tuple[float, float] | None
    source: str
    uncertainty_note: str = ""
    budget_covariance: np.ndarray | None = None

    def impedance(self, frequency: np.ndarray, values: Mapping[str, float] | None = None) -> np.ndarray:
        """Model impedance (ohm) at ``frequency`` (Hz, > 0) for ``values`` (default: the fitted ones)."""
        return self.circuit.impedance(frequency, self.values if values is None else values)


def _with_inputs(names: tuple[str, ...], covariance: np.ndarray | None,
                 signed: Mapping[str, Mapping[str, float]]) -> np.ndarray | None:
    """``covariance + sum_s d_s d_s^T`` over the inputs s with signed contributions ``signed[s][name]``."""
    if covariance is None or not signed:
        return None
    total = np.array(covariance, dtype=float)
    for contributions in signed.values():
        d = np.array([float(contributions.get(n, 0.0)) for n in names])
        total += np.outer(d, d)
    return total


def model_from_fit(result, budget=None) -> DriveModel:
    """The drive model of a ``FitResult`` (values, covariance of the free parameters, measured band).

    ``budget`` (a ``fitz_tool.budget.Budget`` with stated limits) adds ``budget_covariance``.
    """
    from ..derived import parameter_covariance

    names, covariance, note = parameter_covariance(result)
    names = tuple(names) if covariance is not None else ()
    signed: dict[str, dict[str, float]] = {}
    if budget is not None and budget.sources:
        for name, entry in budget.parameters.items():
            for c in entry.contributions:
                if c.key != "noise":
                    signed.setdefault(c.key, {})[name] = c.contribution
    f = result.measurement.frequency
    return DriveModel(result.circuit, dict(result.values), names, covariance, (float(f[0]), float(f[-1])),
                      result.measurement.provenance.source or "fit", note,
                      _with_inputs(names, covariance, signed))


def model_from_json(path: str | Path) -> DriveModel:
    """Read the model of a fit from the JSON that ``fitz-tool fit --json`` writes.

    Raises
    ------
    InputError
        Unreadable file, not a fit record, or a parameter without a value.
    """
    where = str(path)
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except OSError as exc:
        raise InputError(f"{where}: cannot read ({exc.strerror})") from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"{where}: not a JSON file ({exc}); give the file 'fitz-tool fit --json' "
                         "wrote") from None
    if not isinstance(data, dict) or "model" not in data or not isinstance(data.get("parameters"), dict):
        raise InputError(f"{where}: not a fit record (no 'model' and 'parameters'); give the file "
                         "'fitz-tool fit --json' wrote")
    try:
        circuit = Circuit.parse(str(data["model"]))
    except ModelSyntaxError as exc:
        raise InputError(f"{where}: model {data['model']!r} does not parse: {exc}") from None
    params = data["parameters"]
    values = {}
    for name in circuit.parameter_names:
        entry = params.get(name)
        value = entry.get("value") if isinstance(entry, dict) else None
        if not isinstance(value, (int, float)) or not math.isfinite(value):
            raise InputError(f"{where}: parameter {name!r} of model {circuit.expression!r} has no value")
        values[name] = float(value)
    names: tuple[str, ...] = ()
    covariance = None
    free = [n for n in circuit.parameter_names if params[n].get("vary", True)]
    correlation = data.get("correlation")
    if not free:
        note = "no uncertainty: all parameters fixed by the user"
    elif isinstance(correlation, dict) and correlation.get("names"):
        names = tuple(str(n) for n in correlation["names"])
        stderr = np.array([_number(params.get(n, {}).get("stderr")) for n in names])
        matrix = np.array([[_number(c) for c in row] for row in correlation["matrix"]], dtype=float)
        if matrix.shape != (len(names), len(names)) or not np.all(np.isfinite(stderr)) \
                or not np.all(np.isfinite(matrix)) or any(n not in values for n in names):
            raise InputError(f"{where}: correlation matrix does not match the parameters' standard errors")
        covariance = stderr[:, None] * stderr[None, :] * matrix
        missing = [n for n in free if n not in names]
        note = (f"first-order propagation with correlations; leaves out {', '.join(missing)} (no standard "
                "error from the fit)") if missing else ""
    else:
        notes = sorted({str(params[n].get("stderr_note") or "") for n in free} - {""})
        note = "no uncertainty: " + ("; ".join(notes) if notes else
                                     "the fit record has no correlation matrix")
    band = None
    sweep = data.get("band")
    if isinstance(sweep, dict) and isinstance(sweep.get("f_min"), (int, float)) \
            and isinstance(sweep.get("f_max"), (int, float)):
        band = (float(sweep["f_min"]), float(sweep["f_max"]))
    source = (data.get("provenance") or {}).get("source") or where
    return DriveModel(circuit, values, names, covariance, band, str(source), note,
                      _with_inputs(names, covariance, _budget_contributions(data.get("budget"))))


def _budget_contributions(budget) -> dict[str, dict[str, float]]:
    """Signed contributions ``c_i u_i`` per input and parameter from a JSON ``budget`` block."""
    if not isinstance(budget, dict) or budget.get("noise_only") or not budget.get("sources"):
        return {}
    u = {s.get("key"): _number(s.get("standard_uncertainty"))
         for s in budget["sources"] if isinstance(s, dict)}
    signed: dict[str, dict[str, float]] = {}
    for name, entry in (budget.get("parameters") or {}).items():
        for key, c in ((entry or {}).get("sensitivities") or {}).items():
            value = _number(c) * u.get(key, math.nan)
            if math.isfinite(value):
                signed.setdefault(key, {})[name] = value
    return signed


def _number(value) -> float:
    return float(value) if isinstance(value, (int, float)) else math.nan


def dc_resistance(circuit: Circuit, values: Mapping[str, float]) -> float:
    """Resistance (ohm) of the model at 0 Hz: ``inf`` when it has no DC path.

    R is itself, L a short, C an open; a constant phase element 1/(Q (jw)^n) is an open for n > 0 and the
    resistor 1/Q for n = 0 (common practice, no source). Series adds, parallel adds conductances.
    """
    return _dc(circuit.tree, values)


def _dc(node, values: Mapping[str, float]) -> float:
    if isinstance(node, Element):
        if node.kind == "R":
            return float(values[node.name])
        if node.kind == "L":
            return 0.0
        if node.kind == "C":
            return math.inf
        if node.kind == "P":
            n = values[node.name + "_n"]
            return 1.0 / values[node.name + "_Q"] if n == 0 else math.inf
        raise InputError(f"element {node.name!r} (kind {node.kind!r}): no DC rule known for a drive with DC")
    parts = [_dc(child, values) for child in node.children]
    if isinstance(node, Series):
        return float(sum(parts))
    if isinstance(node, Parallel):
        if any(p == 0 for p in parts):
            return 0.0
        conductance = sum(1.0 / p for p in parts)
        return math.inf if conductance == 0 else 1.0 / conductance
    raise TypeError(node)
