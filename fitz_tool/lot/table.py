"""The lot table: one row per file with its conditions, status, values (SI) with standard errors, verdicts.

Columns, in order: ``file``, ``part``, the condition columns, ``status`` (``ok``/``error``), ``error`` (one
line), ``model``, every parameter ``NAME`` with ``NAME_stderr`` (standard uncertainty) and ``NAME_U``
(expanded uncertainty: the budget's, or 2 x the standard error; SI), ``SRF`` (the lowest self-resonance
inside the sweep; empty when there is none), design values ``VALUE@FREQ`` for each operating frequency,
each with its ``_stderr`` and ``_U``, ``spec_NAME`` verdicts, and ``verdict`` (``pass``, ``fail``,
``marginal``, ``error``, or empty when no spec was given).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from pathlib import Path

import pandas as pd

from ..exceptions import InputError, OutputError
from .spec import COVERAGE_FACTOR, DESIGN_NAMES, Spec, combine_verdicts, split_design_name, verdict

__all__ = ["quantity", "lot_table", "write_table", "known_names"]


def _nan(value) -> float:
    return math.nan if value is None else float(value)


def _budget_key(name: str, at_hz: float | None = None, index: int | None = None,
                n_resonances: int = 1) -> str:
    """The uncertainty budget's name of a quantity (``"SRF"``/``"SRF 2"``, ``"ESR at 100 kHz"``)."""
    from ..budget.combination import frequency_text

    if name == "SRF":
        return "SRF" if n_resonances <= 1 else f"SRF {index + 1}"
    if at_hz is not None:
        return f"{name} at {frequency_text(at_hz)}"
    return name


def _expanded(record: Mapping, section: str, key: str, stderr: float) -> float:
    """Expanded uncertainty U of a quantity: the budget's, else COVERAGE_FACTOR x the standard error."""
    entry = (record.get("budget") or {}).get(section, {}).get(key)
    if entry is not None and entry.get("expanded") is not None:
        return float(entry["expanded"])
    return COVERAGE_FACTOR * stderr


def quantity(record: Mapping, name: str, at: Mapping[str, float]) -> tuple[float, float, float]:
    """(value, standard error, expanded uncertainty U) in SI of a parameter, ``SRF`` or ``VALUE@LABEL`` in
    a fit record; NaN when the record does not have it (errors NaN when the fit gave none).

    U comes from the record's uncertainty budget when it has one for this quantity, else it is
    ``COVERAGE_FACTOR`` times the standard error.
    """
    missing = (math.nan, math.nan, math.nan)
    if name in record["parameters"]:
        p = record["parameters"][name]
        value, stderr = _nan(p["value"]), _nan(p["stderr"])
        return value, stderr, _expanded(record, "parameters", name, stderr)
    derived = record["derived"]
    if name == "SRF":
        resonances = derived["resonances"]
        inside = [(i, r["frequency"]) for i, r in enumerate(resonances)
                  if r["in_sweep"] and r["frequency"]["value"]]
        if not inside:
            return missing
        index, low = min(inside, key=lambda item: item[1]["value"])
        value, stderr = _nan(low["value"]), _nan(low["stderr"])
        key = _budget_key("SRF", index=index, n_resonances=len(resonances))
        return value, stderr, _expanded(record, "design", key, stderr)
    design = split_design_name(name)
    if design is None or design[1] not in at:
        return missing
    value_name, label = design
    for point in derived["at"]:
        if point["frequency"] is not None and math.isclose(point["frequency"], at[label], rel_tol=1e-9):
            v = point["values"].get(value_name)
            if v is None:
                return missing
            value, stderr = _nan(v["value"]), _nan(v["stderr"])
            key = _budget_key(value_name, at_hz=point["frequency"])
            return value, stderr, _expanded(record, "design", key, stderr)
    return missing


def known_names(record: Mapping, at: Mapping[str, float]) -> set[str]:
    """Every quantity name a fit record can give (parameters, SRF, and each design value at each label)."""
    return {*record["parameters"], "SRF", *(f"{v}@{label}" for label in at for v in DESIGN_NAMES)}


def lot_table(items: Sequence[Mapping], payloads: Mapping[str, Mapping], models: Mapping[str, str],
              specs: Sequence[Spec], at: Mapping[str, float]) -> pd.DataFrame:
    """Build the table.

    Parameters
    ----------
    items : sequence of mapping
        The lot's files in order: ``file``, ``part``, ``conditions`` (dict) and ``key``.
    payloads : mapping
        Key -> the job's result record (see :func:`fitz_tool.lot.job.run_part`); a missing key gives an
        ``error`` row ("no result").
    models : mapping
        Key -> the candidate expression whose fit goes into the row.
    specs : sequence of Spec
        Limits to judge.
    at : mapping
        Frequency label (as written, e.g. ``"100k"``) -> frequency in Hz.
    """
    conditions = list(dict.fromkeys(c for item in items for c in item["conditions"]))
    rows: list[dict] = []
    parameters: dict[str, None] = {}
    design: dict[str, None] = {"SRF": None}
    for item in items:
        row: dict = {"file": item["file"], "part": item["part"]}
        row.update({c: item["conditions"].get(c, "") for c in conditions})
        payload = payloads.get(item["key"])
        record = None
        if payload is None:
            row.update(status="error", error=f"{item['file']}: no result (the run stopped before this part)")
        elif payload["status"] != "ok":
            row.update(status="error", error=payload["error"])
        else:
            model = models[item["key"]]
            record = payload["candidates"].get(model)
            if record is None:
                row.update(status="error", error=f"{item['file']}: the lot's model {model!r} could not be "
                                                 "fitted to this file")
        if record is None:
            row["model"] = ""
            rows.append(row)
            continue
        row.update(status="ok", error="", model=record["model"])
        values: dict[str, tuple[float, float, float]] = {}
        for name in record["parameters"]:
            parameters[name] = None
            values[name] = quantity(record, name, at)
        names = ["SRF", *(f"{v}@{label}" for label in at for v in DESIGN_NAMES)]
        for name in names:
            value = quantity(record, name, at)
            if not math.isnan(value[0]):
                design[name] = None
                values[name] = value
        for spec in specs:
            values.setdefault(spec.name, quantity(record, spec.name, at))
        row["_values"] = values
        rows.append(row)
    spec_names = {s.name for s in specs}
    columns = ["file", "part", *conditions, "status", "error", "model"]
    for name in [*parameters, *design, *(s for s in spec_names if s not in parameters and s not in design)]:
        columns += [name, f"{name}_stderr", f"{name}_U"]
    columns += [s.column for s in specs] + ["verdict"]
    out = []
    for row in rows:
        values = row.pop("_values", {})
        flat = {c: row.get(c, "") for c in ("file", "part", *conditions, "status", "error", "model")}
        for name, (value, stderr, expanded) in values.items():
            flat[name], flat[f"{name}_stderr"], flat[f"{name}_U"] = value, stderr, expanded
        if row["status"] != "ok":
            flat["verdict"] = "error"
            flat.update({s.column: "" for s in specs})
        elif specs:
            judged = [verdict(s, values[s.name][0], values[s.name][2]) for s in specs]
            flat.update({s.column: v for s, v in zip(specs, judged, strict=True)})
            flat["verdict"] = combine_verdicts(judged)
        else:
            flat["verdict"] = ""
        out.append(flat)
    table = pd.DataFrame(out, columns=columns)
    return table


def parquet_available() -> bool:
    """True when pyarrow (the Parquet writer pandas uses) can be imported."""
    import importlib.util

    return importlib.util.find_spec("pyarrow") is not None


def check_table_path(path: str | Path) -> str:
    """The table format for ``path`` (``"csv"`` or ``"parquet"``), checked before any part is fitted.

    Raises
    ------
    InputError
        A suffix other than .csv/.txt/.parquet.
    OutputError
        Parquet asked for without pyarrow installed.
    """
    suffix = Path(path).suffix.lower()
    if suffix == ".parquet":
        if not parquet_available():
            raise OutputError(f"{path}: writing Parquet needs pyarrow (pip install pyarrow); "
                              "or give a .csv table")
        return "parquet"
    if suffix not in (".csv", ".txt", ""):
        raise InputError(f"--table {path}: give a .csv (or .parquet) file")
    return "csv"


def write_table(table: pd.DataFrame, path: str | Path) -> bytes:
    """The table as bytes for ``path``: CSV, or Parquet for a ``.parquet`` suffix (see
    :func:`check_table_path`)."""
    if check_table_path(path) == "parquet":
        import io

        buffer = io.BytesIO()
        table.to_parquet(buffer, index=False)
        return buffer.getvalue()
    return table.to_csv(index=False, float_format="%.10g").encode("utf-8")
