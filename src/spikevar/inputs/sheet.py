"""Load and check the sessions sheet: one row per session, paths relative to the sheet's folder."""

from __future__ import annotations

import math
import os
import re
from pathlib import Path

import pandas as pd

from spikevar.base.errors import SpikevarInputError
from spikevar.base.layout import SESSION_ID_PATTERN
from spikevar.inputs import time_units

SESSION_ID = re.compile(f"^{SESSION_ID_PATTERN}$")
REQUIRED = ("session", "subject", "spikes")
#: Sheet columns that change how a session is read (the others are metadata for cohort tables).
INGEST_COLUMNS = ("spikes", "events", "time_unit", "sampling_rate_hz")
KNOWN = (*REQUIRED, "events", "unit_labels", "group", "time_unit", "sampling_rate_hz", "start_s",
         "duration_s")
#: sheet columns naming files (relative paths are read from the sheet's folder)
FILE_COLUMNS = ("spikes", "events", "unit_labels")


def _read(path: Path) -> pd.DataFrame:
    if not path.exists():
        raise SpikevarInputError("The sessions sheet does not exist.", path=str(path),
                                 fix="pass the right path with --config sessions=PATH.")
    sep = "," if path.suffix.lower() == ".csv" else "\t"
    try:
        frame = pd.read_csv(path, sep=sep, dtype=str, keep_default_na=False, comment=None)
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise SpikevarInputError(f"The sessions sheet could not be read: {exc}", path=str(path),
                                 fix="save it as UTF-8 TSV (.tsv) or CSV (.csv).") from None
    frame.columns = [c.strip().lstrip("\ufeff") for c in frame.columns]
    return frame.apply(lambda col: col.str.strip())


def _number(value: str, *, row: int, column: str, path: Path, allow_zero: bool = False) -> float:
    if value == "":
        return math.nan
    try:
        number = float(value)
    except ValueError:
        number = math.nan
    if not math.isfinite(number) or number < 0 or (number == 0 and not allow_zero):
        kind = "a number >= 0" if allow_zero else "a positive number"
        raise SpikevarInputError(f"'{value}' is not {kind}.", path=str(path),
                                 where=f"row {row}, column {column}",
                                 fix=f"write {column} as {kind} or leave it empty.")
    return number


def load_sheet(path: str | os.PathLike, *, default_time_unit: str = "s",
               default_sampling_rate_hz: float | None = None) -> pd.DataFrame:
    """Read the sessions sheet and check it before any job runs.

    Returns a DataFrame with one row per session, ``spikes``/``events``/``unit_labels`` as
    absolute paths (the last two empty when not given),
    ``group`` defaulting to ``"all"``, ``time_unit`` and ``sampling_rate_hz`` filled from the
    defaults, and every other column kept as metadata (text).

    Raises
    ------
    SpikevarInputError
        Missing required columns, empty or unsafe or duplicate session ids, missing subjects,
        missing files (all listed at once), a spike file shared by two sessions, a time unit in
        samples without a sampling rate.

    Notes
    -----
    Row numbers in messages count data rows from 1 (the header is line 1 of the file, so data
    row ``n`` is on line ``n + 1``).
    """
    path = Path(path).resolve()
    frame = _read(path)
    missing = [c for c in REQUIRED if c not in frame.columns]
    if missing:
        raise SpikevarInputError(
            f"The sessions sheet lacks required column(s) {', '.join(missing)} "
            f"(found: {', '.join(frame.columns) or 'none'}).", path=str(path),
            fix="add the columns; see config/README.md for the sheet format.")
    if frame.empty:
        raise SpikevarInputError("The sessions sheet has no rows.", path=str(path),
                                 fix="add one row per session.")
    base = path.parent
    for column in ("events", "unit_labels", "group", "time_unit", "sampling_rate_hz", "start_s",
                   "duration_s"):
        if column not in frame.columns:
            frame[column] = ""
    problems_missing = []
    for i, row in enumerate(frame.itertuples(index=False), start=1):
        sid = row.session
        where = f"row {i} (line {i + 1})"
        if not SESSION_ID.match(sid):
            raise SpikevarInputError(
                f"Session id '{sid}' is not allowed (it becomes a folder name).", path=str(path),
                where=f"{where}, column session",
                fix="use letters, digits, '_', '-' and '.', starting with a letter or digit "
                "(no spaces, no '/', no '..').")
        if row.subject == "":
            raise SpikevarInputError(f"Session '{sid}' has no subject.", path=str(path),
                                     where=f"{where}, column subject",
                                     fix="write the animal/participant id in 'subject'.")
        for column in FILE_COLUMNS:
            value = getattr(row, column)
            if column == "spikes" and value == "":
                raise SpikevarInputError(f"Session '{sid}' has no spike file.", path=str(path),
                                         where=f"{where}, column spikes",
                                         fix="give the path of the session's spike table.")
            if value and not (base / value).exists():
                problems_missing.append(f"{where} session '{sid}' column {column}: "
                                        f"{base / value}")
    duplicated = frame["session"][frame["session"].duplicated(keep=False)]
    if len(duplicated):
        rows = ", ".join(str(i + 1) for i in duplicated.index)
        raise SpikevarInputError(
            f"Session id(s) {', '.join(sorted(set(duplicated)))} appear more than once "
            f"(rows {rows}).", path=str(path), where="column session",
            fix="give each session a unique id.")
    if problems_missing:
        raise SpikevarInputError(
            "Input file(s) not found: " + "; ".join(problems_missing) + ".", path=str(path),
            fix="correct the paths (relative paths are read from the sheet's folder).")
    frame["spikes"] = [str((base / v).resolve()) for v in frame["spikes"]]
    for column in ("events", "unit_labels"):
        frame[column] = [str((base / v).resolve()) if v else "" for v in frame[column]]
    shared = frame["spikes"][frame["spikes"].duplicated(keep=False)]
    if len(shared):
        first = shared.iloc[0]
        sessions = frame.loc[frame["spikes"] == first, "session"].tolist()
        raise SpikevarInputError(
            f"Sessions {', '.join(sessions)} share the same spike file {first}.",
            path=str(path), where="column spikes",
            fix="each session needs its own spike file; remove the duplicate row or fix the path.")
    frame["group"] = frame["group"].replace("", "all")
    frame["time_unit"] = frame["time_unit"].replace("", default_time_unit)
    rates = []
    for i, row in enumerate(frame.itertuples(index=False), start=1):
        if row.time_unit not in time_units.TIME_UNITS:
            raise SpikevarInputError(
                f"Unknown time unit '{row.time_unit}'.", path=str(path),
                where=f"row {i}, column time_unit",
                fix=f"use one of {', '.join(time_units.TIME_UNITS)}.")
        rate = _number(row.sampling_rate_hz, row=i, column="sampling_rate_hz", path=path)
        if math.isnan(rate) and default_sampling_rate_hz is not None:
            rate = float(default_sampling_rate_hz)
        if row.time_unit == "samples" and math.isnan(rate):
            raise SpikevarInputError(
                f"Session '{row.session}' gives times in samples but no sampling rate.",
                path=str(path), where=f"row {i}, column sampling_rate_hz",
                fix="fill in sampling_rate_hz (Hz) for this row, or set it in the config.")
        _number(row.duration_s, row=i, column="duration_s", path=path)
        _number(row.start_s, row=i, column="start_s", path=path, allow_zero=True)
        if row.start_s != "" and row.duration_s == "":
            raise SpikevarInputError(
                f"Session '{row.session}' gives start_s but no duration_s.", path=str(path),
                where=f"row {i}, column duration_s",
                fix="give the recording length in duration_s (the span is start_s to start_s "
                    "+ duration_s), or leave start_s empty to use the spikes' own span.")
        rates.append(rate)
    frame["sampling_rate_hz"] = rates
    frame["duration_s"] = [float(v) if v else math.nan for v in frame["duration_s"]]
    frame["start_s"] = [float(v) if v else (0.0 if d else math.nan)
                        for v, d in zip(frame["start_s"], frame["duration_s"].notna(),
                                        strict=True)]
    return frame.set_index("session", drop=False)


def metadata_columns(frame: pd.DataFrame) -> list[str]:
    """Sheet columns carried into cohort tables: session, subject, group and any extra column."""
    extra = [c for c in frame.columns if c not in KNOWN]
    return ["session", "subject", "group", *extra]
