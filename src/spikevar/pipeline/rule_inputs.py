"""What each Snakemake rule needs from the sessions sheet and the config (used by the .smk files).

Each function returns only the fields its rule depends on, so that editing an unrelated sheet
column (for example ``group``) does not change a rule's parameters and does not rerun it.
"""

from __future__ import annotations

import math
import os

import pandas as pd


def portable_path(path: str) -> str:
    """``path`` relative to the working directory when it lies inside it, else absolute.

    Keeps job inputs independent of where the project folder sits, so a whole working folder
    (cohort + results + Snakemake's records) can be moved without rerunning anything.
    """
    relative = os.path.relpath(path)
    return path if relative.startswith("..") else relative


def ingest_inputs(sheet: pd.DataFrame, session: str) -> dict[str, str]:
    """Raw files of a session: ``spikes`` and, when given, ``events``."""
    row = sheet.loc[session]
    inputs = {"spikes": portable_path(row["spikes"])}
    if row["events"]:
        inputs["events"] = portable_path(row["events"])
    return inputs


def ingest_settings(sheet: pd.DataFrame, session: str, config: dict) -> dict:
    """How to read a session's raw tables: time unit, sampling rate and column names."""
    row = sheet.loc[session]
    rate = float(row["sampling_rate_hz"])
    return {
        "time_unit": row["time_unit"],
        "sampling_rate_hz": None if math.isnan(rate) else rate,
        "columns": dict(config["columns"]),
        "span": declared_span(sheet, session),
    }


def declared_span(sheet: pd.DataFrame, session: str) -> list[float] | None:
    """``[start_s, start_s + duration_s]`` from the sheet, or None to use the spike span."""
    duration = float(sheet.loc[session, "duration_s"])
    if math.isnan(duration):
        return None
    start = float(sheet.loc[session, "start_s"])
    start = 0.0 if math.isnan(start) else start
    return [start, start + duration]


def cohort_metadata(sheet: pd.DataFrame) -> dict:
    """Sheet metadata joined into cohort tables: column order and one dict per session."""
    from spikevar.inputs.sheet import metadata_columns

    columns = metadata_columns(sheet)
    rows = {s: {c: str(sheet.loc[s, c]) for c in columns} for s in sheet.index}
    return {"columns": columns, "rows": rows}


def sheet_records(sheet: pd.DataFrame) -> list[dict]:
    """The checked sheet as plain records (for the manifest)."""
    records = []
    for row in sheet.reset_index(drop=True).to_dict("records"):
        row = {k: (None if isinstance(v, float) and math.isnan(v) else v) for k, v in row.items()}
        for key in ("spikes", "events"):
            if row.get(key):
                row[key] = portable_path(row[key])
        records.append(row)
    return records


def primary_alignment(config: dict) -> str:
    """The alignment the report's start page summarises: the first of ``alignments``, else the
    event time column."""
    return (list(config["alignments"]) or [config["columns"]["event_time"]])[0]
