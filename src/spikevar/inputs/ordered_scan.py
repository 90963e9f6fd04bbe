"""One pass over a spike table that is already in the contract's order, batch by batch.

Most exports are grouped by unit with each unit's times increasing. For those, ingestion needs no
sort and no per-spike copy: this scan checks, one record batch at a time (a few MB, so the
temporaries stay small and are reused), that

* the times are numbers, finite and non-negative;
* within a unit the times strictly increase (equal times would be duplicates);
* each unit forms one run of rows and the runs follow the unit order of
  :func:`spikevar.base.unit_order.unit_sort_order`.

When all of that holds it returns the unit runs, the times in seconds (the raw buffers
themselves when they already are float64 seconds) and the numbers the plausibility check needs.
When anything does not hold it returns ``None`` and the caller takes the full path, which sorts,
drops duplicates and words the precise error with row numbers. The scan never raises for bad data.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from spikevar.base.unit_order import unit_sort_order
from spikevar.inputs.readers import as_text_column

#: More unit runs than this means the rows are not grouped by unit (for example sorted by time
#: with the units interleaved); the scan then stops early and leaves the table to the full path.
MAX_RUNS = 100_000
#: Intervals kept for the median-ISI plausibility check (an evenly spaced subsample).
ISI_SAMPLE = 1_000_000


@dataclass
class OrderedSpikes:
    """A table found to be in order: its unit and time columns, ready to write."""

    units: pa.DictionaryArray
    times_s: pa.ChunkedArray
    n_units: int
    first_s: float
    last_s: float
    median_isi_s: float


def _is_text(dtype: pa.DataType) -> bool:
    return pa.types.is_string(dtype) or pa.types.is_large_string(dtype)


def scan_in_order(table: pa.Table, *, unit_column: str, time_column: str,
                  seconds_per_tick: float, divide_by: float | None = None) -> OrderedSpikes | None:
    """Verify order and values batch by batch; ``None`` when the full path is needed.

    Parameters
    ----------
    seconds_per_tick
        Factor from the raw time unit to seconds (1 for seconds).
    divide_by
        For sample indices: the sampling rate, divided by instead of multiplying (exactly as
        :func:`spikevar.inputs.time_units.to_seconds` does).
    """
    unit_col, time_col = table.column(unit_column), table.column(time_column)
    numeric = pa.types.is_integer(time_col.type) or pa.types.is_floating(time_col.type)
    if not numeric or time_col.null_count or unit_col.null_count:
        return None
    if not (_is_text(unit_col.type) or pa.types.is_integer(unit_col.type)):
        return None
    keep_raw = (pa.types.is_float64(time_col.type) and seconds_per_tick == 1.0
                and divide_by is None)
    step = max(1, table.num_rows // ISI_SAMPLE)
    run_labels: list[str] = []
    run_starts: list[np.ndarray] = []
    time_chunks: list[np.ndarray] = []
    isi_sample: list[np.ndarray] = []
    prev_label, prev_time, offset, n_runs = None, -np.inf, 0, 0
    first_s, last_s = np.inf, -np.inf
    for batch in table.select([unit_column, time_column]).to_batches():
        n = batch.num_rows
        if n == 0:
            continue
        units = batch.column(0) if _is_text(batch.column(0).type) else as_text_column(
            batch.column(0), name=unit_column)
        raw = batch.column(1).to_numpy(zero_copy_only=False)
        times = (raw / divide_by if divide_by is not None
                 else raw if keep_raw else raw.astype(np.float64) * seconds_per_tick)
        low, high = times.min(), times.max()
        if not (np.isfinite(low) and np.isfinite(high) and low >= 0):
            return None  # NaN, infinite or negative: the full path words the error
        first_s, last_s = min(first_s, low), max(last_s, high)
        change = pc.not_equal(units.slice(1), units.slice(0, n - 1)).to_numpy(
            zero_copy_only=False)
        gaps = np.diff(times)
        if np.any((gaps <= 0) & ~change):
            return None  # unsorted or duplicated within a unit
        starts = np.flatnonzero(change) + 1
        n_runs += len(starts)
        if n_runs > MAX_RUNS:
            return None
        first_label = units[0].as_py()
        if first_label != prev_label:
            run_labels.append(first_label)
            run_starts.append(np.array([offset]))
        elif times[0] <= prev_time:
            return None
        run_labels.extend(units.take(pa.array(starts)).to_pylist())
        run_starts.append(starts + offset)
        within = gaps[(-offset) % step::step]
        kept = ~change[(-offset) % step::step]
        isi_sample.append(within[kept])
        if not keep_raw:
            time_chunks.append(times)
        prev_label, prev_time, offset = units[n - 1].as_py(), times[-1], offset + n
    if offset == 0:
        return None
    labels = np.asarray(run_labels, dtype=str)
    if len(set(run_labels)) != len(run_labels):
        return None  # a unit appears in more than one run
    if not np.array_equal(unit_sort_order(labels), np.arange(len(labels))):
        return None  # grouped, but the units are not in order
    sample = np.concatenate(isi_sample) if isi_sample else np.zeros(0)
    lengths = np.diff(np.concatenate([*run_starts, [offset]]))
    codes = np.repeat(np.arange(len(labels), dtype=np.int32), lengths)
    times_out = time_col if keep_raw else pa.chunked_array(time_chunks, type=pa.float64())
    return OrderedSpikes(units=unit_dictionary(codes, labels), times_s=times_out,
                         n_units=len(labels), first_s=float(first_s), last_s=float(last_s),
                         median_isi_s=float(np.median(sample)) if len(sample) else float("nan"))


def unit_dictionary(codes: np.ndarray, labels: np.ndarray) -> pa.DictionaryArray:
    """The unit column as ``dictionary<int32, string>``: ``labels[codes[i]]`` is row i's unit.

    Writing a dictionary column skips the per-row hashing a plain string column costs; on disk it
    is an ordinary Parquet string column.
    """
    return pa.DictionaryArray.from_arrays(pa.array(codes.astype(np.int32, copy=False)),
                                          pa.array(labels, pa.string()))
