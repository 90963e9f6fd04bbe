"""Snakemake runs for real (subprocess) on a small synthetic cohort in a temporary folder."""

import shutil

import pandas as pd
import pyarrow.parquet as pq
import pytest

from conftest import run_snakemake

pytestmark = pytest.mark.workflow


def copy_cohort(src_sheet, dest):
    shutil.copytree(src_sheet.parent, dest)
    return dest / "sessions.tsv"


def test_ingest_every_format(tiny_cohort, tmp_path):
    sheet = pd.read_csv(tiny_cohort, sep="\t")
    assert {"s", "ms", "samples"} <= set(sheet["time_unit"])
    assert any(sheet["spikes"].str.endswith(".nwb"))
    run_snakemake(tmp_path, "--config", f"sessions={tiny_cohort}", "results=out",
                  "--until", "ingest_session")
    for session in sheet["session"]:
        spikes = pq.read_table(tmp_path / "out" / "sessions" / session / "spikes.parquet")
        assert spikes.schema.names == ["unit", "time_s"]
        frame = spikes.to_pandas()
        assert frame["time_s"].between(0, 61).all()
        assert (frame.groupby("unit")["time_s"].diff().dropna() > 0).all()
        events = pq.read_table(tmp_path / "out" / "sessions" / session / "events.parquet")
        assert {"time_s", "condition"} <= set(events.schema.names)
        assert events.num_rows > 10
        assert (tmp_path / "out" / "logs" / "sessions" / session / "ingest.log").exists()


def test_bad_sheet_stops_before_any_job(tiny_cohort, tmp_path):
    sheet_path = copy_cohort(tiny_cohort, tmp_path / "cohort")
    sheet = pd.read_csv(sheet_path, sep="\t", dtype=str, keep_default_na=False)
    sheet.loc[0, "session"] = "../escape"
    sheet.to_csv(sheet_path, sep="\t", index=False)
    proc = run_snakemake(tmp_path, "--config", f"sessions={sheet_path}", "results=out",
                         check=False)
    assert proc.returncode != 0
    text = proc.stdout + proc.stderr
    assert "Session id '../escape' is not allowed" in text
    assert "Traceback" not in text
    assert not (tmp_path / "out").exists()


def test_keep_going_with_one_broken_session(tiny_cohort, tmp_path):
    sheet_path = copy_cohort(tiny_cohort, tmp_path / "cohort")
    sheet = pd.read_csv(sheet_path, sep="\t", dtype=str, keep_default_na=False)
    broken = sheet.loc[0, "session"]
    (sheet_path.parent / "broken.csv").write_text("unit,time\na,0.1\na,oops\n")
    sheet.loc[0, "spikes"] = "broken.csv"
    sheet.loc[0, "time_unit"] = "s"
    sheet.to_csv(sheet_path, sep="\t", index=False)
    before = (sheet_path.parent / "broken.csv").read_bytes()
    proc = run_snakemake(tmp_path, "--keep-going", "--config", f"sessions={sheet_path}",
                         "results=out", check=False)
    assert proc.returncode != 0
    out = tmp_path / "out" / "sessions"
    assert not (out / broken / "spikes.parquet").exists()
    assert not (out / broken / "events.parquet").exists()
    for session in sheet["session"][1:]:
        assert (out / session / "spikes.parquet").exists()
    log = (tmp_path / "out" / "logs" / "sessions" / broken / "ingest.log").read_text()
    assert "Non-numeric" in log and "2 (line 3)" in log and "broken.csv" in log
    assert "Traceback" not in log
    assert (sheet_path.parent / "broken.csv").read_bytes() == before
    # the complete sessions are assembled into cohort_partial, the broken one is reported
    partial = tmp_path / "out" / "cohort_partial"
    units = pd.read_parquet(partial / "units.parquet")
    assert set(units["session"]) == set(sheet["session"][1:])
    failed = pd.read_parquet(partial / "failed_sessions.parquet")
    assert failed["session"].tolist() == [broken]
    assert failed["rule"].tolist() == ["ingest_session"]
    assert "Non-numeric" in failed["reason"].iloc[0]
    assert f"session {broken} failed in ingest_session:" in proc.stdout + proc.stderr
    assert not (tmp_path / "out" / "cohort" / "units.parquet").exists()
