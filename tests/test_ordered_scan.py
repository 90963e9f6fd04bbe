"""The batch-wise pass for tables already in order, against the full sort-and-deduplicate path.

Whatever route a table takes, the normalised spikes must equal an independent pandas reference:
sort by unit (numerically when every id is an integer) then time, drop exact duplicates.
"""

import os
import stat

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from spikevar.base.parquet_io import SPIKE_TABLE_OPTIONS, read_metadata, write_parquet_atomic
from spikevar.base.spike_arrays import load_spikes
from spikevar.inputs.ingest import normalise_spikes
from spikevar.inputs.ordered_scan import scan_in_order
from spikevar.inputs.settings import ColumnNames


def batched(units, times, batch_rows):
    """A table made of several record batches, so runs and ties cross batch edges."""
    frame = pd.DataFrame({"unit": units, "time": times})
    table = pa.Table.from_pandas(frame, preserve_index=False)
    return pa.Table.from_batches(table.to_batches(max_chunksize=max(1, batch_rows)))


def reference(units, times):
    frame = pd.DataFrame({"unit": [str(u) for u in units], "time": np.asarray(times, float)})
    frame = frame.drop_duplicates()
    numeric = frame["unit"].str.fullmatch(r"[+-]?\d+").all()
    key = frame["unit"].astype(int) if numeric else frame["unit"]
    frame = frame.assign(key=key).sort_values(["key", "time"], kind="stable")
    return frame["unit"].tolist(), frame["time"].to_numpy()


def normalised(table):
    out, report = normalise_spikes(table, columns=ColumnNames(), time_unit="s",
                                   sampling_rate_hz=None)
    return out.column("unit").to_pylist(), out.column("time_s").to_numpy(), report


spike_rows = st.lists(st.tuples(st.sampled_from(["0", "2", "10", "7", "11"]),
                                st.integers(0, 40).map(lambda k: k * 0.0125)),
                      min_size=1, max_size=60)


@settings(max_examples=150, deadline=None)
@given(rows=spike_rows, batch_rows=st.integers(1, 9), presort=st.booleans())
def test_any_table_matches_the_pandas_reference(rows, batch_rows, presort):
    if presort:  # in order (the batch-wise route), possibly with duplicates
        rows = sorted(rows, key=lambda r: (int(r[0]), r[1]))
    units, times = zip(*rows, strict=True)
    got_units, got_times, report = normalised(batched(units, times, batch_rows))
    want_units, want_times = reference(units, times)
    assert got_units == want_units
    np.testing.assert_array_equal(got_times, want_times)
    assert report.rows_written == len(want_units)
    assert report.n_units == len(set(units))
    assert report.first_s == want_times.min() and report.last_s == want_times.max()


def test_in_order_table_takes_the_batch_route_and_keeps_the_time_buffers():
    table = batched(["1", "1", "2", "2", "10"], [0.1, 0.2, 0.05, 0.3, 0.4], batch_rows=2)
    found = scan_in_order(table, unit_column="unit", time_column="time", seconds_per_tick=1.0)
    assert found is not None
    assert found.units.to_pylist() == ["1", "1", "2", "2", "10"]
    same_memory = [a.buffers()[1].address == b.buffers()[1].address
                   for a, b in zip(found.times_s.chunks, table.column("time").chunks, strict=True)]
    assert all(same_memory)  # the times are not copied
    assert (found.n_units, found.first_s, found.last_s) == (3, 0.05, 0.4)


@pytest.mark.parametrize("units,times,why", [
    (["1", "2", "1"], [0.1, 0.2, 0.3], "unit in two runs"),
    (["10", "2"], [0.1, 0.2], "integer ids out of numeric order"),
    (["b", "a"], [0.1, 0.2], "text ids out of order"),
    (["1", "1"], [0.2, 0.1], "times decrease within a unit"),
    (["1", "1"], [0.2, 0.2], "duplicate across the batch edge"),
    (["1", "1"], [0.1, float("nan")], "NaN time"),
    (["1", "1"], [-0.1, 0.2], "negative time"),
])
def test_anything_out_of_order_or_invalid_goes_to_the_full_path(units, times, why):
    table = batched(units, times, batch_rows=1)
    assert scan_in_order(table, unit_column="unit", time_column="time",
                         seconds_per_tick=1.0) is None, why


def test_interleaved_units_stop_the_scan_early(monkeypatch):
    import spikevar.inputs.ordered_scan as module
    monkeypatch.setattr(module, "MAX_RUNS", 5)
    units = np.tile(["1", "2"], 20)
    table = batched(units, np.arange(40) * 0.01, batch_rows=4)
    assert scan_in_order(table, unit_column="unit", time_column="time",
                         seconds_per_tick=1.0) is None
    got_units, _, report = normalised(table)
    assert got_units == ["1"] * 20 + ["2"] * 20 and not report.was_sorted


@pytest.mark.parametrize("unit,tick,rate", [("ms", 1e-3, None), ("samples", None, 30_000.0)])
def test_integer_ticks_convert_exactly_as_the_full_path(unit, tick, rate):
    raw = np.array([300, 3100, 9000, 4500, 6000], dtype=np.int64)
    table = batched(["3", "3", "3", "4", "4"], raw, batch_rows=2)
    out, _ = normalise_spikes(table, columns=ColumnNames(), time_unit=unit,
                              sampling_rate_hz=rate)
    expected = raw / rate if unit == "samples" else raw.astype(float) * tick
    np.testing.assert_array_equal(out.column("time_s").to_numpy(), expected)


def test_written_table_reads_back_as_plain_strings_with_metadata(tmp_path):
    table = batched(["1", "1", "2"], [0.1, 0.2, 0.3], batch_rows=2)
    out, _ = normalise_spikes(table, columns=ColumnNames(), time_unit="s", sampling_rate_hz=None)
    path = tmp_path / "spikes.parquet"
    write_parquet_atomic(out, path, metadata=lambda: {"late": "value"},
                         options=SPIKE_TABLE_OPTIONS)
    back = pq.read_table(path)
    assert back.schema.field("unit").type == pa.string()
    assert back.column("unit").to_pylist() == ["1", "1", "2"]
    assert read_metadata(path) == {"late": "value"}
    spikes = load_spikes(path)
    assert spikes.labels.tolist() == ["1", "2"] and spikes.codes.tolist() == [0, 0, 1]
    # finished outputs get the usual permissions, not the 0600 of a temporary file
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(path.stat().st_mode) == 0o666 & ~umask


def test_loading_some_units_reads_only_their_spikes_with_the_session_labels(tmp_path):
    # the per-session figure reads only the units it draws; a normalised table (sorted by
    # unit in the one unit order, then time) written in row groups of two
    path = tmp_path / "spikes.parquet"
    pq.write_table(pa.table({"unit": ["2", "2", "2", "7", "10", "10"],
                             "time_s": [0.1, 0.3, 0.9, 0.2, 0.5, 0.6]}), path, row_group_size=2)
    every = load_spikes(path)
    some = load_spikes(path, units=["2", "10"])
    assert some.labels.tolist() == every.labels.tolist() == ["2", "7", "10"]
    b = some.bounds()
    assert some.times[b[0]:b[1]].tolist() == [0.1, 0.3, 0.9]
    assert b[2] - b[1] == 0  # unit 7 was not read
    assert some.times[b[2]:b[3]].tolist() == [0.5, 0.6]
