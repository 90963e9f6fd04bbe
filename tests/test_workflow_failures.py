"""Failed jobs in a real run are reported with their session, step and reason.

The reasons come from the failure records the job wrapper writes beside each log.
"""

import json
import os
import shutil

import pandas as pd
import pytest

from conftest import run_snakemake

pytestmark = pytest.mark.workflow


def test_failing_figure_and_cohort_jobs_are_reported(tiny_cohort, tmp_path):
    cohort = tmp_path / "cohort"
    shutil.copytree(tiny_cohort.parent, cohort)
    sheet = cohort / "sessions.tsv"
    run_snakemake(tmp_path, "--config", f"sessions={sheet}", "results=out")
    session = pd.read_csv(sheet, sep="\t")["session"].iloc[0]
    # damage one intermediate table: the recovery figure and the cohort recovery table read it
    damaged = tmp_path / "out" / "sessions" / session / "recovery.parquet"
    damaged.write_bytes(b"not a parquet file")
    later = damaged.stat().st_mtime + 10
    os.utime(damaged, (later, later))
    proc = run_snakemake(tmp_path, "--keep-going", "--config", f"sessions={sheet}",
                         "results=out", check=False)
    assert proc.returncode != 0
    text = proc.stdout + proc.stderr
    assert f"session {session} failed in session_recovery_figure:" in text
    assert "cohort step cohort_table failed:" in text
    assert "damaged or not Parquet" in text
    logs = tmp_path / "out" / "logs"
    figure = json.loads((logs / "sessions" / session / "recovery_figure.failure.json")
                        .read_text())
    assert figure["session"] == session and figure["step"] == "recovery_figure"
    assert figure["kind"] == "input" and "recovery.parquet" in figure["reason"]
    table = json.loads((logs / "cohort" / "recovery.failure.json").read_text())
    assert table["rule"] == "cohort_table" and table["session"] is None
    assert session in table["reason"]
    failed = pd.read_parquet(tmp_path / "out" / "cohort_partial" / "failed_sessions.parquet")
    assert failed["session"].tolist() == [session]
    assert failed["rule"].tolist() == ["session_recovery_figure"]
    # jobs that succeeded leave an empty record (Snakemake creates declared logs)
    assert (logs / "sessions" / session / "metrics.failure.json").read_text() == ""
