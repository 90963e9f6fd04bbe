"""config session_jobs: whole_session: one job per session, the same tables as a job per stage."""

import shutil
import time

import pandas as pd
import pyarrow.parquet as pq
import pytest
from test_workflow_incremental import planned_jobs, rules_of, sessions_of

from conftest import REPO, run_snakemake
from spikevar.base.layout import (
    COHORT_FIGURES,
    NORMALISED_TABLES,
    SESSION_TABLES,
    STATISTICS_TABLES,
)

pytestmark = pytest.mark.workflow

WHOLE = ("session_jobs=whole_session",)


@pytest.fixture(scope="module")
def runs(tiny_cohort, tmp_path_factory):
    """The whole pipeline with one job per session (results ``whole``), and the per-session
    tables of the same cohort from the per-stage jobs (results ``staged``)."""
    work = tmp_path_factory.mktemp("whole_session")
    shutil.copytree(tiny_cohort.parent, work / "cohort")
    sheet = "cohort/sessions.tsv"
    sessions = pd.read_csv(work / sheet, sep="\t")["session"].tolist()
    run_snakemake(work, "--config", f"sessions={sheet}", "results=whole", *WHOLE)
    targets = [f"staged/sessions/{s}/{t}.parquet" for s in sessions
               for t in (*NORMALISED_TABLES, *SESSION_TABLES)]
    run_snakemake(work, *targets, "--config", f"sessions={sheet}", "results=staged")
    return work, sheet, sessions


def test_one_job_per_session_writes_the_tables_of_the_per_stage_jobs(runs):
    work, _, sessions = runs
    for session in sessions:
        for table in (*NORMALISED_TABLES, *SESSION_TABLES):
            whole = pq.read_table(work / "whole" / "sessions" / session / f"{table}.parquet")
            staged = pq.read_table(work / "staged" / "sessions" / session / f"{table}.parquet")
            assert whole.num_rows > 0 or table in ("fano_timecourse", "pair_correlations",
                                                   "shared_timecourse"), (session, table)
            assert whole.equals(staged), f"{session}: {table} differs between the two ways"
        # one job ran every stage (the per-stage rules are not part of this workflow)
        jobs = {p.stem for p in (work / "whole" / "benchmarks" / "sessions" / session).glob(
            "*.tsv")}
        assert "whole_session" in jobs
        assert not jobs & {"ingest_session", "session_metrics", "session_recovery",
                           "session_selection", "session_shared", "session_timecourse"}
    for table in STATISTICS_TABLES:
        assert pq.read_table(work / "whole" / "cohort" / f"{table}.parquet").num_rows > 0, table
    for figure in COHORT_FIGURES:
        assert (work / "whole" / "figures" / f"{figure}.png").stat().st_size > 1000, figure


def test_a_changed_session_reruns_its_own_job_and_a_setting_reruns_every_session(runs,
                                                                                   tmp_path):
    work, sheet, sessions = runs
    copy = tmp_path / "work"
    shutil.copytree(work, copy, symlinks=True)
    assert planned_jobs(copy, sheet, config=(*WHOLE, "results=whole")) == []
    # the price of one job per session: an inclusion setting reruns every whole session
    (copy / "inclusion.yaml").write_text("inclusion: {min_rate_hz: 12.0}\n")
    jobs = planned_jobs(copy, sheet, "--configfile", str(REPO / "config" / "config.yaml"),
                        str(copy / "inclusion.yaml"), config=(*WHOLE, "results=whole"))
    assert {s for r, s in jobs if r == "whole_session"} == set(sessions)
    rows = pd.read_csv(copy / sheet, sep="\t").set_index("session")
    csv_session = next(s for s in sessions if str(rows.loc[s, "spikes"]).endswith(".csv"))
    path = copy / "cohort" / rows.loc[csv_session, "spikes"]
    time.sleep(1.1)
    spikes = pd.read_csv(path)
    spikes.sample(frac=1.0, random_state=1).to_csv(path, index=False)  # same spikes, new order
    jobs = planned_jobs(copy, sheet, config=(*WHOLE, "results=whole"))
    assert {s for r, s in jobs if r == "whole_session"} == {csv_session}
    assert sessions_of(jobs) == {csv_session}
    assert "population_fano" in rules_of(jobs)


def test_a_bad_session_is_named_with_its_stage_error(runs, tmp_path):
    work, sheet, sessions = runs
    copy = tmp_path / "work"
    shutil.copytree(work, copy, symlinks=True)
    rows = pd.read_csv(copy / sheet, sep="\t").set_index("session")
    csv_session = next(s for s in sessions if str(rows.loc[s, "spikes"]).endswith(".csv"))
    (copy / "cohort" / rows.loc[csv_session, "spikes"]).write_text("unit,time\nu1,0.5\nu1,late\n")
    proc = run_snakemake(copy, "--keep-going", "--config", f"sessions={sheet}", "results=whole",
                         *WHOLE, check=False)
    assert proc.returncode != 0
    text = proc.stdout + proc.stderr
    assert f"session {csv_session} failed in whole_session:" in text
    assert "column 'time'] Non-numeric time value(s) at row(s) 2" in text
    failed = pd.read_parquet(copy / "whole" / "cohort_partial" / "failed_sessions.parquet")
    assert failed["session"].tolist() == [csv_session]
    assert failed["rule"].tolist() == ["whole_session"]
