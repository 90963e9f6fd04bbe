"""Ingestion: every supported format, and every kind of bad input with a helpful message."""

import gzip
import os
import stat

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest

from spikevar.base.errors import SpikevarInputError
from spikevar.base.parquet_io import read_metadata, sha256_of_file
from spikevar.inputs.ingest import ingest_session
from spikevar.inputs.settings import ColumnNames
from spikevar.synth.demo import write_nwb

COLS = ColumnNames()
SPIKES = pd.DataFrame({"unit": ["b", "a", "a", "b", "a"],
                       "time": [0.5, 0.1, 0.3, 0.2, 1.25]})
EVENTS = pd.DataFrame({"time": [0.2, 1.0], "condition": ["dim", "bright"], "trial": [1, 2]})


def run(tmp_path, spikes_path, events_path=None, **kw):
    out = tmp_path / "out"
    kw.setdefault("time_unit", "s")
    kw.setdefault("sampling_rate_hz", None)
    ingest_session(session="s1", spikes_path=spikes_path, events_path=events_path,
                   columns=kw.pop("columns", COLS), spikes_out=out / "spikes.parquet",
                   events_out=out / "events.parquet", **kw)
    return (pq.read_table(out / "spikes.parquet").to_pandas(),
            pq.read_table(out / "events.parquet").to_pandas(), out)


def expected_sorted():
    return SPIKES.sort_values(["unit", "time"]).reset_index(drop=True)


@pytest.mark.parametrize("fmt", ["csv", "tsv", "csv.gz", "tsv.gz", "parquet"])
def test_each_text_and_parquet_format(tmp_path, fmt):
    path = tmp_path / f"spk.{fmt}"
    sep = "\t" if fmt.startswith("tsv") else ","
    if fmt == "parquet":
        SPIKES.to_parquet(path)
        EVENTS.to_parquet(tmp_path / "ev.parquet")
        ev = tmp_path / "ev.parquet"
    else:
        SPIKES.to_csv(path, sep=sep, index=False)
        ev = tmp_path / f"ev.{fmt}"
        EVENTS.to_csv(ev, sep=sep, index=False)
    spikes, events, out = run(tmp_path, path, ev)
    exp = expected_sorted()
    assert spikes["unit"].tolist() == exp["unit"].tolist()
    np.testing.assert_array_equal(spikes["time_s"].to_numpy(), exp["time"].to_numpy())
    assert str(pq.read_schema(out / "spikes.parquet").field("time_s").type) == "double"
    assert events["condition"].tolist() == ["dim", "bright"]
    assert events["trial"].tolist() == [1, 2]
    meta = read_metadata(out / "spikes.parquet")
    assert meta["source_sha256"] == sha256_of_file(path)
    assert meta["declared_time_unit"] == "s"
    assert meta["rows_read"] == 5 and meta["rows_written"] == 5
    assert meta["source_path"] == str(path.resolve())


def test_nwb_units_and_trials(tmp_path):
    path = tmp_path / "s.nwb"
    write_nwb(path, SPIKES, EVENTS, "s1", "fen")
    spikes, events, _ = run(tmp_path, path, path, time_unit="ms")  # NWB is always seconds
    assert len(spikes) == 5
    assert spikes.groupby("unit").size().to_dict() == {"a": 3, "b": 2}
    np.testing.assert_allclose(np.sort(spikes["time_s"]), np.sort(SPIKES["time"]))
    np.testing.assert_allclose(events["time_s"], [0.2, 1.0])
    assert events["condition"].tolist() == ["dim", "bright"]


@pytest.mark.parametrize("unit,factor,rate", [("ms", 1e3, None), ("us", 1e6, None),
                                              ("samples", 30_000, 30_000.0)])
def test_time_units_are_converted(tmp_path, unit, factor, rate):
    path = tmp_path / "spk.csv"
    SPIKES.assign(time=np.round(SPIKES["time"] * factor)).to_csv(path, index=False)
    spikes, _, out = run(tmp_path, path, time_unit=unit, sampling_rate_hz=rate)
    np.testing.assert_allclose(spikes["time_s"], expected_sorted()["time"], rtol=1e-12)
    assert read_metadata(out / "spikes.parquet")["declared_time_unit"] == unit


def test_configurable_column_names(tmp_path):
    path = tmp_path / "spk.csv"
    SPIKES.rename(columns={"unit": "cluster_id", "time": "t"}).to_csv(path, index=False)
    cols = ColumnNames(unit="cluster_id", time="t")
    spikes, _, _ = run(tmp_path, path, columns=cols)
    assert len(spikes) == 5


def test_integer_unit_ids_become_strings(tmp_path):
    path = tmp_path / "spk.csv"
    SPIKES.assign(unit=[7, 12, 12, 7, 12]).to_csv(path, index=False)
    spikes, _, _ = run(tmp_path, path)
    assert set(spikes["unit"]) == {"7", "12"}


def test_unsorted_rows_are_sorted_and_logged(tmp_path, caplog):
    path = tmp_path / "spk.csv"
    SPIKES.to_csv(path, index=False)
    with caplog.at_level("INFO"):
        _, _, out = run(tmp_path, path)
    assert "not sorted" in caplog.text
    assert read_metadata(out / "spikes.parquet")["input_was_sorted"] is False


def test_exact_duplicates_dropped_and_counted(tmp_path, caplog):
    path = tmp_path / "spk.csv"
    pd.concat([SPIKES, SPIKES.iloc[[1, 1, 3]]]).to_csv(path, index=False)
    with caplog.at_level("INFO"):
        spikes, _, out = run(tmp_path, path)
    assert len(spikes) == 5
    assert read_metadata(out / "spikes.parquet")["duplicates_dropped"] == 3
    assert "3 exact duplicate" in caplog.text


# ---------------------------------------------------------------- bad input
def expect_error(tmp_path, spikes_path, *fragments, events_path=None, **kw):
    with pytest.raises(SpikevarInputError) as info:
        run(tmp_path, spikes_path, events_path, **kw)
    message = str(info.value)
    assert "session 's1'" in message
    assert "Fix:" in message
    for fragment in fragments:
        assert fragment in message, message
    assert not (tmp_path / "out" / "spikes.parquet").exists()
    assert not (tmp_path / "out" / "events.parquet").exists()
    return message


def test_missing_file(tmp_path):
    expect_error(tmp_path, tmp_path / "nope.csv", "does not exist", "nope.csv")


def test_zero_byte_file(tmp_path):
    (tmp_path / "e.csv").write_bytes(b"")
    expect_error(tmp_path, tmp_path / "e.csv", "empty")


def test_header_only_file(tmp_path):
    (tmp_path / "h.csv").write_text("unit,time\n")
    expect_error(tmp_path, tmp_path / "h.csv", "no rows")


def test_unreadable_parquet(tmp_path):
    (tmp_path / "bad.parquet").write_text("this is not parquet")
    expect_error(tmp_path, tmp_path / "bad.parquet", "could not be read as Parquet")


def test_gz_that_is_not_gzip(tmp_path):
    (tmp_path / "x.csv.gz").write_text("unit,time\na,1\n")
    expect_error(tmp_path, tmp_path / "x.csv.gz", "not gzip")


def test_unsupported_extension(tmp_path):
    (tmp_path / "x.xlsx").write_text("junk")
    expect_error(tmp_path, tmp_path / "x.xlsx", "not supported")


def test_missing_columns_lists_found(tmp_path):
    path = tmp_path / "spk.csv"
    SPIKES.rename(columns={"time": "spike_time"}).to_csv(path, index=False)
    msg = expect_error(tmp_path, path, "'time'", "'spike_time'", "'unit'", "columns")
    assert "the file has" in msg


def test_non_numeric_time_names_row(tmp_path):
    path = tmp_path / "spk.csv"
    path.write_text("unit,time\na,0.1\na,0.2\nb,oops\n")
    expect_error(tmp_path, path, "Non-numeric", "3 (line 4)", "column 'time'")


@pytest.mark.parametrize("value,word", [("", "NaN"), ("nan", "NaN"), ("inf", "Infinite"),
                                        ("-0.5", "Negative")])
def test_nan_inf_negative_times(tmp_path, value, word):
    path = tmp_path / "spk.csv"
    path.write_text(f"unit,time\na,0.1\nb,{value}\na,0.3\n")
    expect_error(tmp_path, path, word, "2 (line 3)")


def test_implausible_unit_seconds_suggests_ms(tmp_path):
    path = tmp_path / "spk.csv"
    SPIKES.assign(time=SPIKES["time"] * 1e3 + 1.0e8).to_csv(path, index=False)
    expect_error(tmp_path, path, "days", "'ms'")


def test_implausible_unit_ms_suggests_s(tmp_path):
    path = tmp_path / "spk.csv"
    t = np.arange(0, 2, 0.01)
    pd.DataFrame({"unit": "a", "time": t}).to_csv(path, index=False)
    expect_error(tmp_path, path, "us", "'s'", time_unit="ms")


def test_samples_without_rate(tmp_path):
    path = tmp_path / "spk.csv"
    SPIKES.to_csv(path, index=False)
    expect_error(tmp_path, path, "sampling", time_unit="samples", sampling_rate_hz=None)


def test_events_missing_condition_column(tmp_path):
    path = tmp_path / "spk.csv"
    SPIKES.to_csv(path, index=False)
    ev = tmp_path / "ev.csv"
    EVENTS.drop(columns="condition").to_csv(ev, index=False)
    msg = expect_error(tmp_path, path, "'condition'", events_path=ev)
    assert "ev.csv" in msg


def test_events_outside_span_warn(tmp_path, caplog):
    path = tmp_path / "spk.csv"
    SPIKES.to_csv(path, index=False)
    ev = tmp_path / "ev.csv"
    EVENTS.assign(time=[0.2, 50.0]).to_csv(ev, index=False)
    with caplog.at_level("WARNING"):
        _, events, out = run(tmp_path, path, ev)
    assert "outside the recording span" in caplog.text
    assert len(events) == 2
    assert read_metadata(out / "events.parquet")["warnings"]


def test_raw_files_are_never_written(tmp_path):
    path = tmp_path / "spk.csv.gz"
    with gzip.open(path, "wt") as handle:
        SPIKES.to_csv(handle, index=False)
    before = sha256_of_file(path)
    os.chmod(path, stat.S_IRUSR)
    try:
        run(tmp_path, path)
    finally:
        os.chmod(path, stat.S_IRUSR | stat.S_IWUSR)
    assert sha256_of_file(path) == before


def test_failed_events_leave_no_spikes_output(tmp_path):
    # a session with valid spikes but broken events writes neither file
    path = tmp_path / "spk.csv"
    SPIKES.to_csv(path, index=False)
    ev = tmp_path / "ev.csv"
    ev.write_text("time,condition\nabc,dim\n")
    expect_error(tmp_path, path, "Non-numeric", events_path=ev)


def test_integer_unit_ids_sort_by_value(tmp_path):
    path = tmp_path / "spk.csv"
    pd.DataFrame({"unit": [10, 2, 2, 10, 1], "time": [0.1, 0.2, 0.3, 0.4, 0.5]}).to_csv(
        path, index=False)
    spikes, _, _ = run(tmp_path, path)
    assert spikes["unit"].tolist() == ["1", "2", "2", "10", "10"]


def test_unit_column_without_a_text_form_names_the_column(tmp_path):
    import pyarrow as pa

    path = tmp_path / "lists.parquet"
    pq.write_table(pa.table({"unit": pa.array([[1], [2]], pa.list_(pa.int64())),
                             "time": [0.1, 0.2]}), path)
    with pytest.raises(SpikevarInputError) as err:
        run(tmp_path, path)
    message = str(err.value)
    assert "column 'unit'" in message and "lists.parquet" in message and "s1" in message


def test_spike_past_the_declared_span_is_refused(tmp_path):
    path = tmp_path / "late.csv"
    pd.DataFrame({"unit": ["a", "a", "b"], "time": [1000.5, 1301.0, 1100.0]}).to_csv(path,
                                                                                   index=False)
    with pytest.raises(SpikevarInputError) as err:
        run(tmp_path, path, span=(1000.0, 1300.0))
    message = str(err.value)
    assert "outside the declared recording span [1000, 1300]" in message
    assert "2 (line 3)" in message and "late.csv" in message and "s1" in message
    assert not (tmp_path / "out" / "spikes.parquet").exists()


def test_event_outside_the_declared_span_is_refused(tmp_path):
    spikes, events = tmp_path / "s.csv", tmp_path / "e.csv"
    SPIKES.to_csv(spikes, index=False)
    pd.DataFrame({"time": [0.2, 5.0], "condition": ["dim", "dim"]}).to_csv(events, index=False)
    with pytest.raises(SpikevarInputError, match="event.*outside the declared"):
        run(tmp_path, spikes, events, span=(0.0, 2.0))
    # without a declared span the same event is only a warning
    _, ev, _ = run(tmp_path, spikes, events)
    assert len(ev) == 2


def test_declared_span_is_recorded(tmp_path):
    path = tmp_path / "s.csv"
    SPIKES.to_csv(path, index=False)
    _, _, out = run(tmp_path, path, span=(0.0, 10.0))
    meta = read_metadata(out / "spikes.parquet")
    assert meta["span_s"] == [0.0, 10.0] and meta["span_declared"] is True


def events_case(tmp_path, frame):
    spikes, events = tmp_path / "s.csv", tmp_path / "e.csv"
    SPIKES.to_csv(spikes, index=False)
    frame.to_csv(events, index=False)
    return spikes, events


def test_event_without_condition_is_refused(tmp_path):
    spikes, events = events_case(tmp_path, pd.DataFrame(
        {"time": [0.2, 0.6, 1.0], "condition": ["dim", "", "bright"]}))
    with pytest.raises(SpikevarInputError) as err:
        run(tmp_path, spikes, events)
    message = str(err.value)
    assert "1 event(s) have no condition, at row(s) 2 (line 3)" in message
    assert "e.csv" in message and "s1" in message and "Fix:" in message


def test_exact_duplicate_events_are_dropped_and_counted(tmp_path, caplog):
    spikes, events = events_case(tmp_path, pd.DataFrame(
        {"time": [0.2, 1.0, 0.2], "condition": ["dim", "bright", "dim"], "trial": [1, 2, 1]}))
    _, ev, out = run(tmp_path, spikes, events)
    assert ev["time_s"].tolist() == [0.2, 1.0]
    meta = read_metadata(out / "events.parquet")
    assert meta["duplicates_dropped"] == 1
    assert any("duplicate event" in r.message for r in caplog.records)


@pytest.mark.parametrize("frame,expected", [
    (pd.DataFrame({"time": [0.2, 0.2], "condition": ["dim", "bright"]}),
     "same time have different conditions"),
    (pd.DataFrame({"time": [0.2, 0.2], "condition": ["dim", "dim"], "trial": [1, 2]}),
     "differ in another column"),
])
def test_conflicting_events_at_one_time_are_refused(tmp_path, frame, expected):
    spikes, events = events_case(tmp_path, frame)
    with pytest.raises(SpikevarInputError, match=expected) as err:
        run(tmp_path, spikes, events)
    assert "1 (line 2), 2 (line 3)" in str(err.value)


def spike_folder(tmp_path, times, units, names=("times.npy", "units.npy")):
    folder = tmp_path / "sorted"
    folder.mkdir(exist_ok=True)
    np.save(folder / names[0], times)
    np.save(folder / names[1], units)
    return folder


def test_folder_of_spike_arrays_reads_like_a_table(tmp_path):
    # sample indices at 30 kHz, ids as an n x 1 integer column (as sorters often save them)
    samples = np.round(SPIKES["time"].to_numpy() * 30000).astype(np.int64)
    ids = np.array([[2], [1], [1], [2], [1]], dtype=np.int32)
    folder = spike_folder(tmp_path, samples, ids)
    spikes, _, out = run(tmp_path, folder, time_unit="samples", sampling_rate_hz=30000.0)
    assert spikes["unit"].tolist() == ["1", "1", "1", "2", "2"]
    np.testing.assert_allclose(spikes["time_s"], [0.1, 0.3, 1.25, 0.2, 0.5])
    meta = read_metadata(out / "spikes.parquet")
    assert meta["source_sha256"] == {"times.npy": sha256_of_file(folder / "times.npy"),
                                     "units.npy": sha256_of_file(folder / "units.npy")}


def test_folder_file_names_come_from_config(tmp_path):
    from spikevar.inputs.settings import SpikeArrayFiles

    folder = spike_folder(tmp_path, SPIKES["time"].to_numpy(), np.array(list("babba")),
                          names=("st.npy", "clu.npy"))
    spikes, _, _ = run(tmp_path, folder, arrays=SpikeArrayFiles(times="st.npy", units="clu.npy"))
    assert sorted(spikes["unit"].unique()) == ["a", "b"]
    expect_error(tmp_path / "second", folder, "no file times.npy", "st.npy",
                 "spike_arrays.times")


def test_folder_arrays_of_unequal_length_or_wrong_type_are_refused(tmp_path):
    folder = spike_folder(tmp_path, np.arange(5.0), np.arange(4))
    expect_error(tmp_path, folder, "holds 5 values but units.npy holds 4")
    folder = spike_folder(tmp_path, np.array(["a"] * 3), np.arange(3))
    expect_error(tmp_path, folder, "not numbers", "times.npy")
    folder = spike_folder(tmp_path, np.zeros((3, 2)), np.arange(3))
    expect_error(tmp_path, folder, "shape (3, 2)")


def test_conditions_of_several_factors_combine_and_keep_each_factor(tmp_path):
    spikes = tmp_path / "spk.csv"
    SPIKES.to_csv(spikes, index=False)
    events = tmp_path / "ev.csv"
    pd.DataFrame({"time": [0.2, 0.6, 1.0], "contrast": ["high", "low", "high"],
                  "side": ["left", "left", "right"]}).to_csv(events, index=False)
    columns = ColumnNames.from_config({"event_condition": ["contrast", "side"]})
    _, ev, _ = run(tmp_path, spikes, events, columns=columns)
    assert ev["condition"].tolist() == ["contrast=high; side=left", "contrast=low; side=left",
                                        "contrast=high; side=right"]
    assert ev["contrast"].tolist() == ["high", "low", "high"]
    assert ev["side"].tolist() == ["left", "left", "right"]
    pd.DataFrame({"time": [0.2, 0.6], "contrast": ["high", ""],
                  "side": ["left", "left"]}).to_csv(events, index=False)
    expect_error(tmp_path / "second", spikes, "no condition factor 'contrast'", "row(s) 2",
                 events_path=events, columns=columns)


def test_factor_columns_are_parsed_back_from_the_label():
    from spikevar.base.conditions import with_factor_columns

    frame = pd.DataFrame({"metric": ["a", "b", "c"],
                          "condition": ["contrast=high; side=left", "", "contrast=low; side=right"],
                          "value": [1, 2, 3]})
    out = with_factor_columns(frame, ("contrast", "side"))
    assert list(out.columns) == ["metric", "condition", "contrast", "side", "value"]
    assert out["contrast"].tolist() == ["high", "", "low"]
    assert out["side"].tolist() == ["left", "", "right"]
    assert with_factor_columns(frame, ()) is frame
