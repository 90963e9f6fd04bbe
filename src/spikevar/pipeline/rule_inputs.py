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


def ingest_inputs(sheet: pd.DataFrame, session: str, config: dict) -> dict[str, str]:
    """Raw files of a session: ``spikes`` and, when given, ``events``. For a folder of spike
    arrays, ``spikes`` is its times file and ``spike_units`` its unit ids file (files, so
    that rewriting one of them inside the folder reruns the session); when one is missing,
    the folder itself, so that ingestion names the missing file."""
    row = sheet.loc[session]
    files = [os.path.join(row["spikes"], config["spike_arrays"][k]) for k in ("times", "units")]
    if os.path.isdir(row["spikes"]) and all(os.path.isfile(f) for f in files):
        inputs = {"spikes": portable_path(files[0]), "spike_units": portable_path(files[1])}
    else:
        inputs = {"spikes": portable_path(row["spikes"])}
    if row["events"]:
        inputs["events"] = portable_path(row["events"])
    return inputs


def has_unit_labels(sheet: pd.DataFrame, session: str) -> bool:
    return bool(sheet.loc[session, "unit_labels"]) if "unit_labels" in sheet.columns else False


def unit_labels_input(sheet: pd.DataFrame, session: str) -> str:
    """The raw unit label table of a session (rule ingest_unit_labels)."""
    return portable_path(sheet.loc[session, "unit_labels"])


def selection_inputs(sheet: pd.DataFrame, session: str, layout) -> dict[str, str]:
    """The session's normalised unit labels, when the sheet names a label table."""
    if not has_unit_labels(sheet, session):
        return {}
    return {"labels": layout.session_table(session, "unit_labels")}


def ingest_settings(sheet: pd.DataFrame, session: str, config: dict) -> dict:
    """How to read a session's raw tables: time unit, sampling rate and column names."""
    row = sheet.loc[session]
    rate = float(row["sampling_rate_hz"])
    settings = {
        "time_unit": row["time_unit"],
        "sampling_rate_hz": None if math.isnan(rate) else rate,
        "columns": dict(config["columns"]),
        "span": declared_span(sheet, session),
    }
    if os.path.isdir(row["spikes"]):  # only folder sessions rerun when the file names change
        settings["spike_arrays"] = dict(config["spike_arrays"])
    return settings


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
        for key in ("spikes", "events", "unit_labels"):
            if row.get(key):
                row[key] = portable_path(row[key])
        records.append(row)
    return records


def condition_factors(config: dict) -> list[str]:
    """The factor columns of a multi-factor condition (config columns.event_condition as a
    list); empty for a single condition column."""
    value = config["columns"]["event_condition"]
    return [] if isinstance(value, str) else list(value)


def primary_alignment(config: dict) -> str:
    """The alignment the report's start page summarises: the first of ``alignments``, else the
    event time column."""
    return (list(config["alignments"]) or [config["columns"]["event_time"]])[0]


#: raw spike inputs at least this large (MB; every raw format takes about 8 bytes or more per
#: spike) are fitted over two worker processes (``recovery.table.PARALLEL_MIN_SPIKES``: one
#: million spikes)
RECOVERY_PARALLEL_MB = 8.0


#: the fewest cores on which a per-stage recovery job of a large session takes two threads
RECOVERY_PAIR_MIN_CORES = 4


def recovery_threads(spikes_mb: float, cores: int | None = None) -> int:
    """Threads of the job that fits a session's units: 2 for a session large enough to share
    its units over two workers, else 1 (a 2-thread job holds both cores of a laptop: 200
    small sessions fitted on 2 threads each ran one at a time).

    ``cores``: the workflow's ``--cores``, for rule session_recovery (None: not known, as for
    a cluster, or one job runs every stage of the session). Below ``RECOVERY_PAIR_MIN_CORES``
    the fits take one thread, so that the session's other stages (metrics, selection, shared
    variability) use the other core meanwhile: on 2 cores, 400 units x 1 h through the whole
    workflow took 38.1 s with two fitting workers and 30.7 s with one.
    """
    if spikes_mb < RECOVERY_PARALLEL_MB:
        return 1
    return 1 if cores is not None and cores < RECOVERY_PAIR_MIN_CORES else 2


def workflow_cores(workflow) -> int | None:
    """``--cores`` of the running Snakemake workflow, None when not given (cluster runs)."""
    from snakemake.exceptions import WorkflowError

    try:
        return int(workflow.cores)
    except (WorkflowError, TypeError, ValueError):
        return None


def raw_spikes_mb(sheet: pd.DataFrame, session: str, config: dict) -> float:
    """Size in MB of a session's raw spike input (its files; 0 when missing). Known before any
    job runs, so the job's threads are a plain number when the workflow is planned (a cluster
    job group needs that)."""
    inputs = ingest_inputs(sheet, session, config)
    paths = [inputs[k] for k in ("spikes", "spike_units") if k in inputs]
    return sum(os.path.getsize(p) for p in paths if os.path.isfile(p)) / 1e6


def report_categories(config: dict) -> list[str]:
    """The report's categories for the start page: every one in ``base.layout``, less "Recovery
    fits by session" when config ``figures.session_recovery`` turns those figures off."""
    from spikevar.base.layout import RECOVERY_FIGURE_CATEGORY, REPORT_CATEGORIES

    drawn = config["figures"].get("session_recovery", True)
    return [name for name, _ in REPORT_CATEGORIES
            if drawn or name != RECOVERY_FIGURE_CATEGORY]


def handoff_normalised_inputs(sheet: pd.DataFrame, layout, kinds) -> list[str]:
    """The normalised raw tables the hand-off lists in its manifest: every ``kinds`` table of
    every session, plus the normalised unit labels of sessions whose sheet row names a label
    table."""
    tables = [layout.session_table(s, kind) for s in sheet.index for kind in kinds]
    labelled = [s for s in sheet.index if has_unit_labels(sheet, s)]
    return tables + [layout.session_table(s, "unit_labels") for s in labelled]


def cohort_statistics_params(config: dict, *modules: str, bootstrap: bool = True) -> dict:
    """Parameters shared by the cohort statistics rules: the condition factors, the seed, the
    bootstrap settings (unless ``bootstrap`` is False) and the fingerprint of ``modules``."""
    from spikevar.pipeline.fingerprints import code_fingerprint

    params = {"factors": condition_factors(config), "seed": config["seed"]}
    if bootstrap:
        params["bootstrap"] = config["bootstrap"]
    params["code"] = code_fingerprint(*modules)
    return params
