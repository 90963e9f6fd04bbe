"""Turn one session's raw spike and event tables into the normalised Parquet contract.

Output ``spikes.parquet``: ``unit`` (string), ``time_s`` (float64 seconds), sorted by unit then
time (units by integer value when every id is an integer, else as text). Output
``events.parquet``: ``time_s``, ``condition`` (string), plus the raw table's other
columns. Both carry key-value metadata: source path, sha256, declared time unit, row counts.
"""

from __future__ import annotations

import logging
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from spikevar.base import conditions
from spikevar.base.errors import SpikevarInputError
from spikevar.base.parquet_io import SPIKE_TABLE_OPTIONS, sha256_of_file, write_parquet_atomic
from spikevar.base.unit_order import unit_sort_order
from spikevar.inputs import ordered_scan, readers, time_units
from spikevar.inputs.settings import ColumnNames, SpikeArrayFiles

log = logging.getLogger(__name__)

#: In memory the unit column is dictionary-encoded (cheap to write); in the file it is a plain
#: Parquet string column, read back as ``string``.
SPIKES_SCHEMA = pa.schema([("unit", pa.dictionary(pa.int32(), pa.string())),
                           ("time_s", pa.float64())])
EVENTS_SCHEMA = pa.schema([("time_s", pa.float64()), ("condition", pa.string())])


@dataclass
class IngestReport:
    """What ingestion did to a table, for the log and the Parquet metadata."""

    rows_read: int = 0
    rows_written: int = 0
    duplicates_dropped: int = 0
    was_sorted: bool = True
    n_units: int = 0
    first_s: float = float("nan")
    last_s: float = float("nan")
    warnings: list[str] = field(default_factory=list)


def _row_list(mask: np.ndarray, *, text: bool, limit: int = 5) -> str:
    """Human row numbers (1-based data rows; file line = row + 1 for text with a header)."""
    idx = np.flatnonzero(mask)[:limit]
    parts = [f"{i + 1} (line {i + 2})" if text else f"{i + 1}" for i in idx]
    more = int(mask.sum()) - len(idx)
    return ", ".join(parts) + (f" and {more} more" if more > 0 else "")


def _require_columns(table: pa.Table, needed: list[str], *, config_key: str) -> None:
    missing = [c for c in needed if c not in table.column_names]
    if missing:
        found = ", ".join(repr(c) for c in table.column_names) or "none"
        fix = (f"rename the column(s) in the file, or map them in the config under "
               f"'columns' ({config_key}).")
        for sep, name in ((";", "semicolons"), ("|", "vertical bars"), (" ", "spaces")):
            if len(table.column_names) == 1 and sep in table.column_names[0]:
                fix = (f"the file seems to be separated by {name}; save it with commas (.csv) "
                       "or tabs (.tsv).")
        raise SpikevarInputError(
            f"Missing column(s) {', '.join(repr(m) for m in missing)}; the file has: {found}.",
            fix=fix, where=f"column {missing[0]!r}")


def _numeric_times(column: pa.ChunkedArray, *, name: str, text: bool) -> np.ndarray:
    """Float64 times from a raw column, refusing non-numeric, NaN, infinite and negative values."""
    if pa.types.is_integer(column.type) or pa.types.is_floating(column.type):
        values = column.to_numpy(zero_copy_only=False).astype(np.float64, copy=False)
        bad_text = np.zeros(len(values), dtype=bool)
    elif pa.types.is_null(column.type) and len(column) == 0:
        values = np.zeros(0)
        bad_text = np.zeros(0, dtype=bool)
    elif not (pa.types.is_string(column.type) or pa.types.is_large_string(column.type)
              or pa.types.is_null(column.type) or pa.types.is_dictionary(column.type)):
        raise SpikevarInputError(
            f"The time column has type {column.type}, not numbers.",
            fix="store times as plain numbers in the declared time unit (s, ms, us or samples).",
            where=f"column {name!r}")
    else:
        as_text = pd.Series(column.to_pandas(), dtype="object")
        values = pd.to_numeric(as_text, errors="coerce").to_numpy(dtype=np.float64)
        stripped = as_text.astype(str).str.strip().str.lower()
        nan_words = stripped.isin(["nan", "inf", "+inf", "-inf", "infinity", "-infinity"])
        bad_text = np.isnan(values) & ~nan_words.to_numpy()
        if as_text.isna().any():
            bad_text |= as_text.isna().to_numpy()
    where = f"column {name!r}"
    if not bad_text.any() and np.isfinite(values).all() and not (values < 0).any():
        return values
    if bad_text.any():
        raise SpikevarInputError(
            f"Non-numeric time value(s) at row(s) {_row_list(bad_text, text=text)}.",
            fix="remove or correct those rows; times must be plain numbers.", where=where)
    nan = np.isnan(values)
    if nan.any():
        raise SpikevarInputError(
            f"Missing (NaN/empty) time value(s) at row(s) {_row_list(nan, text=text)}.",
            fix="remove those rows or fill in the times.", where=where)
    inf = np.isinf(values)
    if inf.any():
        raise SpikevarInputError(
            f"Infinite time value(s) at row(s) {_row_list(inf, text=text)}.",
            fix="remove or correct those rows.", where=where)
    neg = values < 0
    if neg.any():
        raise SpikevarInputError(
            f"Negative time value(s) at row(s) {_row_list(neg, text=text)}.",
            fix="times must count from the start of the recording (>= 0); shift or remove them.",
            where=where)
    return values


def normalise_spikes(
    table: pa.Table,
    *,
    columns: ColumnNames,
    time_unit: str,
    sampling_rate_hz: float | None,
    text_source: bool = True,
) -> tuple[pa.Table, IngestReport]:
    """Validate a raw spike table and return it as ``unit``/``time_s`` sorted by unit then time.

    Notes
    -----
    A table already in order (grouped by unit, times increasing) is checked batch by
    batch by :mod:`spikevar.inputs.ordered_scan` and passed on without a sort or a copy of the
    times. Anything else takes the full path below: unsorted rows are sorted (reported), exact
    duplicates (same unit and same time) are dropped and counted, and bad values are refused with
    row numbers. A header-only table is refused: a session needs spikes. Unit ids become strings
    (``3`` and ``"3"`` are the same unit); the unit column comes back dictionary-encoded.
    """
    report = IngestReport(rows_read=table.num_rows)
    _require_columns(table, [columns.unit, columns.time], config_key="unit, time")
    if table.num_rows == 0:
        raise SpikevarInputError(
            "The spike table has a header but no rows.",
            fix="check the export; a session needs at least one spike.")
    unit_col = table.column(columns.unit)
    if unit_col.null_count:
        mask = unit_col.is_null().to_numpy(zero_copy_only=False)
        raise SpikevarInputError(
            f"Empty unit id at row(s) {_row_list(mask, text=text_source)}.",
            fix="give every spike a unit id.", where=f"column {columns.unit!r}")
    in_order = _scan(table, columns=columns, time_unit=time_unit,
                     sampling_rate_hz=sampling_rate_hz)
    if in_order is not None:
        time_units.check_plausible_unit(span_s=in_order.last_s,
                                        median_isi_s=in_order.median_isi_s, time_unit=time_unit)
        out = pa.table({"unit": in_order.units, "time_s": in_order.times_s},
                       schema=SPIKES_SCHEMA)
        report.rows_written, report.n_units = out.num_rows, in_order.n_units
        report.first_s, report.last_s = in_order.first_s, in_order.last_s
        return out, report
    units = readers.as_text_column(unit_col, name=columns.unit)
    raw = _numeric_times(table.column(columns.time), name=columns.time, text=text_source)
    seconds = time_units.to_seconds(raw, time_unit=time_unit, sampling_rate_hz=sampling_rate_hz)

    encoded = pc.dictionary_encode(units.combine_chunks())
    labels = encoded.dictionary.to_numpy(zero_copy_only=False).astype(str)
    label_order = unit_sort_order(labels)
    sorted_labels = labels[label_order]
    rank = np.empty(len(labels), dtype=np.int64)
    rank[label_order] = np.arange(len(labels))
    unit_rank = rank[encoded.indices.to_numpy(zero_copy_only=False)]

    d_unit, d_time = np.diff(unit_rank), np.diff(seconds)
    if np.any(d_unit < 0) or np.any((d_unit == 0) & (d_time < 0)):
        # tables are usually grouped by unit with times in order, only the units in another
        # order: a stable sort by unit is then enough (and fast on such runs); otherwise sort
        # by unit and time.
        # with fewer than 32,768 units a 16-bit key makes NumPy's stable sort a radix sort
        key = unit_rank.astype(np.int16) if len(labels) <= np.iinfo(np.int16).max else unit_rank
        order = np.argsort(key, kind="stable")
        unit_rank, seconds = unit_rank[order], seconds[order]
        d_unit, d_time = np.diff(unit_rank), np.diff(seconds)
        if np.any((d_unit == 0) & (d_time < 0)):
            order = np.lexsort((seconds, unit_rank))
            unit_rank, seconds = unit_rank[order], seconds[order]
            d_unit, d_time = np.diff(unit_rank), np.diff(seconds)
        report.was_sorted = False
    dup = (d_unit == 0) & (d_time == 0)
    if dup.any():
        report.duplicates_dropped = int(dup.sum())
        keep = np.flatnonzero(~np.concatenate([[False], dup]))
        unit_rank, seconds = unit_rank[keep], seconds[keep]
        d_unit, d_time = np.diff(unit_rank), np.diff(seconds)

    time_units.check_plausible_unit(
        span_s=float(seconds.max()),
        median_isi_s=time_units.median_isi_from_diffs(d_unit, d_time),
        time_unit=time_unit)

    unit_out = ordered_scan.unit_dictionary(unit_rank, sorted_labels)
    out = pa.table({"unit": unit_out, "time_s": pa.array(seconds, pa.float64())},
                   schema=SPIKES_SCHEMA)
    report.rows_written, report.n_units = out.num_rows, len(labels)
    report.first_s, report.last_s = float(seconds.min()), float(seconds.max())
    return out, report


def _scan(table: pa.Table, *, columns: ColumnNames, time_unit: str,
          sampling_rate_hz: float | None) -> ordered_scan.OrderedSpikes | None:
    """The batch-wise pass for tables already in order (``None``: take the full path)."""
    factor = time_units.seconds_per_tick(time_unit, sampling_rate_hz)
    samples = time_unit == "samples"
    return ordered_scan.scan_in_order(
        table, unit_column=columns.unit, time_column=columns.time,
        seconds_per_tick=1.0 if samples else factor,
        divide_by=float(sampling_rate_hz) if samples else None)


def normalise_events(
    table: pa.Table,
    *,
    columns: ColumnNames,
    time_unit: str,
    sampling_rate_hz: float | None,
    span_s: tuple[float, float],
    text_source: bool = True,
    span_declared: bool = False,
) -> tuple[pa.Table, IngestReport]:
    """Validate a raw event table: ``time_s`` (seconds), ``condition`` (string), extras kept.

    Notes
    -----
    Rows are sorted by time. With a declared span (sheet ``start_s``/``duration_s``) an event
    outside it is an input error naming the rows and the span. Without one, ``span_s`` is first
    to last spike, and events outside it are kept with a warning: their windows are dropped
    later where they leave the recording.
    """
    report = IngestReport(rows_read=table.num_rows)
    factors = conditions.factor_names(columns.event_condition)
    condition_columns = list(factors) or [columns.event_condition]
    _require_columns(table, [columns.event_time, *condition_columns],
                     config_key="event_time, event_condition")
    raw = _numeric_times(table.column(columns.event_time), name=columns.event_time,
                         text=text_source)
    seconds = time_units.to_seconds(raw, time_unit=time_unit, sampling_rate_hz=sampling_rate_hz)
    values = {}
    for name in condition_columns:
        column = readers.as_text_column(table.column(name), name=name)
        values[name] = np.asarray(column.to_pylist(), dtype=object)
        missing = np.array([v is None or str(v).strip() == "" for v in values[name]], bool)
        if missing.any():
            raise SpikevarInputError(
                f"{int(missing.sum())} event(s) have no condition"
                f"{f' factor {name!r}' if factors else ''}, at row(s) "
                f"{_row_list(missing, text=text_source)}.",
                fix="give every event a condition label (an empty cell would otherwise become "
                    "a condition named '' with its own trials).",
                where=f"column {name!r}")
        unsafe = conditions.unsafe_values([str(v) for v in values[name]]) if factors else []
        if unsafe:
            raise SpikevarInputError(
                f"Condition factor {name!r} has value(s) {', '.join(map(repr, unsafe[:3]))} "
                f"holding '{conditions.NAME_VALUE}' or "
                f"'{conditions.FACTOR_SEPARATOR.strip()}', which the combined condition label "
                "uses to separate factors.",
                fix="rename those values in the event table.", where=f"column {name!r}")
    if factors:
        cond = pa.array(conditions.combined_labels(
            {n: [str(v) for v in values[n]] for n in factors}), pa.string())
    else:
        cond = readers.as_text_column(table.column(columns.event_condition),
                                      name=columns.event_condition)
    labels = np.asarray(cond.to_pylist(), dtype=object)
    # the factor columns stay in the table as they are (each its own column)
    extras = [c for c in table.column_names
              if c not in (columns.event_time, "time_s", "condition")
              and (factors or c != columns.event_condition)]
    order = np.lexsort((labels.astype(str), seconds))
    report.was_sorted = bool(np.all(order == np.arange(len(order))))
    keep = _event_duplicates(table, seconds, labels, order, extras=extras, report=report,
                             column=columns.event_time, text=text_source)
    order = order[keep]
    arrays = {"time_s": pa.array(seconds[order], pa.float64()),
              "condition": pc.take(cond, pa.array(order))}
    for c in extras:
        arrays[c] = table.column(c).take(pa.array(order))
    outside = (seconds < span_s[0]) | (seconds > span_s[1])
    if outside.any() and span_declared:
        raise SpikevarInputError(
            f"{int(outside.sum())} event(s) lie outside the declared recording span "
            f"[{span_s[0]:g}, {span_s[1]:g}] s, at row(s) {_row_list(outside, text=text_source)}.",
            fix="check start_s and duration_s in the sessions sheet (seconds, on the spike "
                "table's clock after unit conversion) or the event table's time unit.",
            where=f"column {columns.event_time!r}")
    if outside.any():
        report.warnings.append(
            f"{int(outside.sum())} event(s) lie outside the recording span "
            f"[{span_s[0]:.3f}, {span_s[1]:.3f}] s (rows {_row_list(outside, text=text_source)}); "
            "their windows will be dropped where they leave the recording.")
    out = pa.table(arrays)
    report.rows_written = out.num_rows
    return out, report


def _event_duplicates(table: pa.Table, seconds: np.ndarray, labels: np.ndarray,
                      order: np.ndarray, *, extras: list[str], report: IngestReport, column: str,
                      text: bool) -> np.ndarray:
    """Which rows of ``order`` (sorted by time, then condition) to keep.

    Exact duplicate rows (same time, condition and every other column) are dropped and counted,
    as duplicate spikes are; two events at one time with different conditions are refused.
    """
    t, c = seconds[order], labels[order].astype(str)
    same_time = np.r_[False, t[1:] == t[:-1]]
    if not same_time.any():
        return np.ones(len(order), dtype=bool)
    def both_rows(flags: np.ndarray) -> str:
        """The raw rows of each flagged sorted row and of the row before it."""
        rows = np.zeros(len(seconds), dtype=bool)
        at = np.flatnonzero(flags)
        rows[order[at]] = rows[order[at - 1]] = True
        return _row_list(rows, text=text)

    conflict = same_time & np.r_[False, c[1:] != c[:-1]]
    if conflict.any():
        raise SpikevarInputError(
            f"Events at the same time have different conditions, at row(s) "
            f"{both_rows(conflict)}.",
            fix="one event per time: correct the condition or the time of these rows.",
            where=f"column {column!r}")
    same = same_time.copy()
    for name in extras:  # an exact duplicate repeats every column
        values = pd.Series(table.column(name).take(pa.array(order)).to_pylist(), dtype=object)
        previous = values.shift()
        same &= ((values == previous) | (values.isna() & previous.isna())).to_numpy(bool)
    if (same_time & ~same).any():
        raise SpikevarInputError(
            f"Events at the same time and condition differ in another column, at row(s) "
            f"{both_rows(same_time & ~same)}.",
            fix="remove the wrong copy (a trial listed twice would be counted twice).",
            where=f"column {column!r}")
    report.duplicates_dropped = int(same.sum())
    report.warnings.append(f"dropped {report.duplicates_dropped} exact duplicate event row(s) "
                           "(same time and condition).")
    return ~same


def empty_events() -> pa.Table:
    """An events table with no rows and the contract's schema."""
    return EVENTS_SCHEMA.empty_table()


def _read_raw(path: Path, *, columns: ColumnNames, kind: str,
              arrays: SpikeArrayFiles | None = None) -> tuple[pa.Table, bool, bool]:
    """Read a raw table; returns (table, is_text, is_nwb). A spikes folder is read as NumPy
    arrays named by ``arrays``."""
    if kind == "spikes" and path.is_dir():
        arrays = arrays or SpikeArrayFiles()
        return readers.read_spike_array_folder(
            path, times_file=arrays.times, units_file=arrays.units, unit_column=columns.unit,
            time_column=columns.time), False, False
    fmt = readers.table_format(path)
    if fmt == ".nwb":
        if kind == "spikes":
            return readers.read_nwb_units(path, unit_column=columns.unit,
                                          time_column=columns.time), False, True
        return readers.read_nwb_trials(path, time_column=columns.event_time,
                                       condition_column=columns.event_condition), False, True
    if fmt == ".parquet":
        return readers.read_parquet_table(path), False, False
    if kind == "spikes":
        return readers.read_text_table(path, string_columns=(columns.unit,),
                                       float_columns=(columns.time,)), True, False
    factors = conditions.factor_names(columns.event_condition)
    return readers.read_text_table(path, string_columns=tuple(factors) or (
        columns.event_condition,)), True, False


def _check_readable(path: Path, *, session: str) -> None:
    if not path.exists():
        raise SpikevarInputError("The file does not exist.", session=session, path=str(path),
                                 fix="correct the path in the sessions sheet.")
    if path.is_dir():
        return  # a folder of spike arrays: its files are checked when read
    if path.stat().st_size == 0:
        raise SpikevarInputError("The file is empty (0 bytes).", session=session, path=str(path),
                                 fix="check that the export finished and re-export it.")


def _ingest_spikes(path: Path, *, session, columns, time_unit, sampling_rate_hz, hasher,
                   span=None, arrays: SpikeArrayFiles | None = None):
    """Read and normalise the spike table; the source's sha256 is computed by ``hasher`` (a
    one-thread pool) while the rows are checked and written, and returned as a future."""
    _check_readable(path, session=session)
    raw, is_text, is_nwb = _read_raw(path, columns=columns, kind="spikes", arrays=arrays)
    # hashlib releases the GIL: hashing the (now cached) file on the second core while this
    # thread checks and writes the table makes the provenance record cost no wall time
    if path.is_dir():
        arrays = arrays or SpikeArrayFiles()
        digest = hasher.submit(lambda: {name: sha256_of_file(path / name)
                                        for name in (arrays.times, arrays.units)})
    else:
        digest = hasher.submit(sha256_of_file, path)
    declared = "s" if is_nwb else time_unit
    spikes, report = normalise_spikes(raw, columns=columns, time_unit=declared,
                                      sampling_rate_hz=sampling_rate_hz, text_source=is_text)
    if span is not None:
        _check_spikes_in_span(raw, report, columns=columns, time_unit=declared,
                              sampling_rate_hz=sampling_rate_hz, span=span, text=is_text)
    if not report.was_sorted:
        log.info("session %s: spike rows were not sorted by unit and time; sorted them.", session)
    if report.duplicates_dropped:
        log.warning("session %s: dropped %d exact duplicate spike row(s) (same unit, same time).",
                    session, report.duplicates_dropped)
    meta = {"kind": "spikes", "session": session, "source_path": str(path.resolve()),
            "declared_time_unit": declared,
            "sampling_rate_hz": sampling_rate_hz, "rows_read": report.rows_read,
            "rows_written": report.rows_written, "duplicates_dropped": report.duplicates_dropped,
            "input_was_sorted": report.was_sorted, "n_units": report.n_units,
            "first_spike_s": report.first_s, "last_spike_s": report.last_s,
            "span_s": list(span) if span is not None else [report.first_s, report.last_s],
            "span_declared": span is not None}
    return spikes, meta, digest


def _check_spikes_in_span(raw: pa.Table, report: IngestReport, *, columns, time_unit,
                          sampling_rate_hz, span, text: bool) -> None:
    """Refuse spikes outside a declared span, naming the raw rows (only read on failure)."""
    if report.rows_written == 0 or (span[0] <= report.first_s and report.last_s <= span[1]):
        return
    seconds = time_units.to_seconds(
        _numeric_times(raw.column(columns.time), name=columns.time, text=text),
        time_unit=time_unit, sampling_rate_hz=sampling_rate_hz)
    outside = (seconds < span[0]) | (seconds > span[1])
    raise SpikevarInputError(
        f"{int(outside.sum())} spike(s) lie outside the declared recording span "
        f"[{span[0]:g}, {span[1]:g}] s (spikes run from {report.first_s:g} to "
        f"{report.last_s:g} s), at row(s) {_row_list(outside, text=text)}.",
        fix="check start_s and duration_s in the sessions sheet (seconds, on the spike table's "
            "clock after unit conversion), or the declared time unit.",
        where=f"column {columns.time!r}")


def _ingest_events(path: Path, *, session, columns, time_unit, sampling_rate_hz, span,
                   span_declared):
    _check_readable(path, session=session)
    raw, is_text, is_nwb = _read_raw(path, columns=columns, kind="events")
    declared = "s" if is_nwb else time_unit
    events, report = normalise_events(raw, columns=columns, time_unit=declared,
                                      sampling_rate_hz=sampling_rate_hz, span_s=span,
                                      text_source=is_text, span_declared=span_declared)
    for message in report.warnings:
        log.warning("session %s: %s", session, message)
    meta = {"kind": "events", "session": session, "source_path": str(path.resolve()),
            "source_sha256": sha256_of_file(path), "declared_time_unit": declared,
            "rows_read": report.rows_read, "rows_written": report.rows_written,
            "duplicates_dropped": report.duplicates_dropped,
            "sampling_rate_hz": sampling_rate_hz,
            "seconds_per_unit": time_units.seconds_per_tick(declared, sampling_rate_hz),
            "warnings": report.warnings}
    return events, meta


def ingest_session(
    *,
    session: str,
    spikes_path: str | Path,
    events_path: str | Path | None,
    columns: ColumnNames,
    time_unit: str,
    sampling_rate_hz: float | None,
    spikes_out: str | Path,
    events_out: str | Path,
    span: tuple[float, float] | None = None,
    arrays: SpikeArrayFiles | None = None,
) -> dict:
    """Read, validate and write one session's normalised ``spikes.parquet`` and ``events.parquet``.

    ``spikes_path`` may be a folder of NumPy arrays (file names ``arrays``, config
    ``spike_arrays``); its ``source_sha256`` is then ``{file name: sha256}``.

    Nothing is written unless both tables are valid; each output is written atomically. Raw files
    are only opened for reading. ``span`` is the declared recording span from the sheet
    (``[start_s, start_s + duration_s]``): a spike or event outside it is refused.

    Returns
    -------
    dict
        A summary (row counts, duplicates, warnings) that is also logged.
    """
    with ThreadPoolExecutor(max_workers=1) as hasher:
        return _ingest_session(session=session, spikes_path=Path(spikes_path),
                               events_path=events_path, columns=columns, time_unit=time_unit,
                               sampling_rate_hz=sampling_rate_hz, spikes_out=spikes_out,
                               events_out=events_out, hasher=hasher, arrays=arrays,
                               span=None if span is None else tuple(map(float, span)))


def _ingest_session(*, session, spikes_path, events_path, columns, time_unit, sampling_rate_hz,
                    spikes_out, events_out, hasher, span, arrays=None) -> dict:
    try:
        spikes, spikes_meta, digest = _ingest_spikes(
            spikes_path, session=session, columns=columns, time_unit=time_unit,
            sampling_rate_hz=sampling_rate_hz, hasher=hasher, span=span, arrays=arrays)
    except SpikevarInputError as err:
        raise err.with_context(session=session, path=str(spikes_path)) from None
    declared = span is not None
    span = tuple(spikes_meta["span_s"])
    if events_path is None or str(events_path) == "":
        events, events_meta = empty_events(), {"kind": "events", "session": session,
                                               "source_path": None, "rows_written": 0}
    else:
        try:
            events, events_meta = _ingest_events(Path(events_path), session=session,
                                                 columns=columns, time_unit=time_unit,
                                                 sampling_rate_hz=sampling_rate_hz, span=span,
                                                 span_declared=declared)
        except SpikevarInputError as err:
            raise err.with_context(session=session, path=str(events_path)) from None

    def spikes_metadata() -> dict:  # asked for after the rows are written
        spikes_meta["source_sha256"] = digest.result()
        return spikes_meta

    write_parquet_atomic(spikes, spikes_out, metadata=spikes_metadata,
                         options=SPIKE_TABLE_OPTIONS)
    write_parquet_atomic(events, events_out, metadata=events_meta)
    log.info("session %s: wrote %d spikes of %d units and %d events.", session,
             spikes_meta["rows_written"], spikes_meta["n_units"], events_meta["rows_written"])
    return {"session": session, "spikes": spikes_meta, "events": events_meta}
