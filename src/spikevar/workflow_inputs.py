"""What each Snakemake rule needs from the sessions sheet and the config (used by the .smk files).

Each function returns only the fields its rule depends on, so that editing an unrelated sheet
column (for example ``group``) does not change a rule's parameters and does not rerun it.
"""

from __future__ import annotations

import math

import pandas as pd


def ingest_inputs(sheet: pd.DataFrame, session: str) -> dict[str, str]:
    """Raw files of a session: ``spikes`` and, when given, ``events``."""
    row = sheet.loc[session]
    inputs = {"spikes": row["spikes"]}
    if row["events"]:
        inputs["events"] = row["events"]
    return inputs


def ingest_settings(sheet: pd.DataFrame, session: str, config: dict) -> dict:
    """How to read a session's raw tables: time unit, sampling rate and column names."""
    row = sheet.loc[session]
    rate = float(row["sampling_rate_hz"])
    return {
        "time_unit": row["time_unit"],
        "sampling_rate_hz": None if math.isnan(rate) else rate,
        "columns": dict(config["columns"]),
    }


def recording_duration(sheet: pd.DataFrame, session: str) -> float | None:
    """Declared recording length in seconds, or None to use the spike span."""
    value = float(sheet.loc[session, "duration_s"])
    return None if math.isnan(value) else value


def cohort_metadata(sheet: pd.DataFrame) -> dict:
    """Sheet metadata joined into cohort tables: column order and one dict per session."""
    from spikevar.sheet import metadata_columns

    columns = metadata_columns(sheet)
    rows = {s: {c: str(sheet.loc[s, c]) for c in columns} for s in sheet.index}
    return {"columns": columns, "rows": rows}


def sheet_records(sheet: pd.DataFrame) -> list[dict]:
    """The checked sheet as plain records (for the manifest)."""
    return [{k: (None if isinstance(v, float) and math.isnan(v) else v)
             for k, v in row.items()} for row in sheet.reset_index(drop=True).to_dict("records")]
