"""The sessions sheet: paths, defaults and every sheet-level mistake."""

import pandas as pd
import pytest

from spikevar.base.errors import SpikevarInputError
from spikevar.inputs.sheet import load_sheet, metadata_columns


def write_sheet(folder, rows, name="sessions.tsv"):
    for row in rows:
        for key in ("spikes", "events"):
            if row.get(key) and not row[key].startswith("missing"):
                (folder / row[key]).write_text("unit,time\na,1\n")
    path = folder / name
    pd.DataFrame(rows).to_csv(path, sep="\t" if name.endswith(".tsv") else ",", index=False)
    return path


def test_paths_resolve_against_sheet_folder_and_defaults(tmp_path):
    sub = tmp_path / "cohort"
    sub.mkdir()
    path = write_sheet(sub, [{"session": "a1", "subject": "m1", "spikes": "a1.csv",
                              "hemisphere": "left"}])
    sheet = load_sheet(path, default_time_unit="ms")
    assert sheet.loc["a1", "spikes"] == str((sub / "a1.csv").resolve())
    assert sheet.loc["a1", "group"] == "all"
    assert sheet.loc["a1", "time_unit"] == "ms"
    assert metadata_columns(sheet) == ["session", "subject", "group", "hemisphere"]


def test_csv_sheet_is_accepted(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m1", "spikes": "a1.csv"}],
                       name="sessions.csv")
    assert list(load_sheet(path).index) == ["a1"]


@pytest.mark.parametrize("bad", ["../x", "has space", "a/b", ".hidden", ""])
def test_unsafe_session_ids(tmp_path, bad):
    path = write_sheet(tmp_path, [{"session": bad, "subject": "m1", "spikes": "a.csv"}])
    with pytest.raises(SpikevarInputError, match="not allowed") as info:
        load_sheet(path)
    assert "row 1" in str(info.value)


def test_duplicate_session_ids(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m1", "spikes": "a.csv"},
                                  {"session": "a1", "subject": "m1", "spikes": "b.csv"}])
    with pytest.raises(SpikevarInputError, match="more than once"):
        load_sheet(path)


def test_shared_spike_file(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m1", "spikes": "a.csv"},
                                  {"session": "a2", "subject": "m1", "spikes": "a.csv"}])
    with pytest.raises(SpikevarInputError, match="share the same spike file") as info:
        load_sheet(path)
    assert "a1" in str(info.value) and "a2" in str(info.value)


def test_missing_files_listed_together(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m1", "spikes": "missing1.csv"},
                                  {"session": "a2", "subject": "m1", "spikes": "missing2.csv"}])
    with pytest.raises(SpikevarInputError, match="not found") as info:
        load_sheet(path)
    assert "missing1.csv" in str(info.value) and "missing2.csv" in str(info.value)


def test_samples_without_rate(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m1", "spikes": "a.csv",
                                   "time_unit": "samples"}])
    with pytest.raises(SpikevarInputError, match="sampling_rate_hz"):
        load_sheet(path)
    # a rate from the config is enough
    assert load_sheet(path, default_sampling_rate_hz=30000.0).loc["a1", "sampling_rate_hz"] \
        == 30000.0


def test_missing_required_column(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "spikes": "a.csv"}])
    with pytest.raises(SpikevarInputError, match="subject"):
        load_sheet(path)


def test_bad_time_unit_and_rate(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m", "spikes": "a.csv",
                                   "time_unit": "minutes"}])
    with pytest.raises(SpikevarInputError, match="Unknown time unit"):
        load_sheet(path)
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m", "spikes": "a.csv",
                                   "time_unit": "samples", "sampling_rate_hz": "fast"}])
    with pytest.raises(SpikevarInputError, match="positive number"):
        load_sheet(path)


def test_missing_sheet(tmp_path):
    with pytest.raises(SpikevarInputError, match="does not exist"):
        load_sheet(tmp_path / "none.tsv")


def test_recording_span_columns(tmp_path):
    path = write_sheet(tmp_path, [
        {"session": "a1", "subject": "m", "spikes": "a.csv", "start_s": "1000",
         "duration_s": "300"},
        {"session": "b1", "subject": "m", "spikes": "b.csv", "start_s": "", "duration_s": "60"},
        {"session": "c1", "subject": "m", "spikes": "c.csv", "start_s": "", "duration_s": ""}])
    sheet = load_sheet(path)
    assert sheet.loc["a1", "start_s"] == 1000.0 and sheet.loc["a1", "duration_s"] == 300.0
    assert sheet.loc["b1", "start_s"] == 0.0  # start defaults to 0 when the duration is given
    assert pd.isna(sheet.loc["c1", "start_s"]) and pd.isna(sheet.loc["c1", "duration_s"])
    assert "start_s" not in metadata_columns(sheet)


def test_start_without_duration_is_refused(tmp_path):
    path = write_sheet(tmp_path, [{"session": "a1", "subject": "m", "spikes": "a.csv",
                                   "start_s": "12"}])
    with pytest.raises(SpikevarInputError, match="start_s but no duration_s") as err:
        load_sheet(path)
    assert "row 1" in str(err.value)
