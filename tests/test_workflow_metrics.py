"""The metric stage through Snakemake: tables written, read back, and sessions without events."""

import shutil

import pandas as pd
import pyarrow.parquet as pq
import pytest

from conftest import run_snakemake

pytestmark = pytest.mark.workflow


def test_metric_tables_per_session(tiny_cohort, tmp_path):
    cohort = tmp_path / "cohort"
    shutil.copytree(tiny_cohort.parent, cohort)
    sheet = pd.read_csv(cohort / "sessions.tsv", sep="\t", dtype=str, keep_default_na=False)
    no_events = sheet.loc[1, "session"]
    sheet.loc[1, "events"] = ""
    sheet.to_csv(cohort / "sessions.tsv", sep="\t", index=False)
    run_snakemake(tmp_path, "--config", f"sessions={cohort / 'sessions.tsv'}", "results=out",
                  "--until", "session_metrics")
    for session in sheet["session"]:
        folder = tmp_path / "out" / "sessions" / session
        units = pq.read_table(folder / "units.parquet").to_pandas()
        for column in ("session", "unit", "n_spikes", "duration_s", "rate_hz", "isi_cv",
                       "isi_cv2", "isi_lv", "isi_lvr", "refractory_violation_fraction"):
            assert column in units.columns
        assert (units["session"] == session).all()
        assert len(units) == 3
        counts = pq.read_table(folder / "count_fano.parquet").to_pandas()
        assert sorted(counts["window_s"].unique()) == [0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0]
        assert {"fano", "fano_lo", "fano_hi", "n_windows"} <= set(counts.columns)
        timecourse = pq.read_table(folder / "fano_timecourse.parquet")
        assert {"condition", "time_s", "n_trials", "mean_count", "var_count", "fano"} <= \
            set(timecourse.schema.names)
        if session == no_events:
            assert timecourse.num_rows == 0
        else:
            assert timecourse.num_rows == 3 * 2 * 57
