"""Incremental reruns: each change reruns exactly the jobs that depend on it (dry runs)."""

import re
import shutil
import time

import pandas as pd
import pyarrow.parquet as pq
import pytest

from conftest import REPO, run_snakemake
from spikevar.base.parquet_io import read_frame

pytestmark = pytest.mark.workflow

SESSION_RULES = {"ingest_session", "session_metrics", "session_selection", "session_timecourse",
                 "session_shared", "session_recovery", "session_recovery_figure"}
COHORT_RULES = {"cohort_table", "cohort_dataset", "population_fano", "group_summary",
                "shared_statistics", "handoff", "cohort_figures", "report_pages"}


def planned_jobs(workdir, sheet, *extra, snakefile=None, config=()):
    """(rule, session or None) of every job a dry run would execute (``config``: more
    ``key=value`` settings, later ones winning)."""
    args = ["-n", *extra, "--config", f"sessions={sheet}", "results=out", *config]
    if snakefile is not None:
        args = ["-s", str(snakefile), *args]
    text = run_snakemake(workdir, *args).stdout
    jobs, current = [], None
    for line in text.splitlines():
        match = re.match(r"^(?:local)?rule (\w+):", line.strip())
        if match:
            if current:
                jobs.append(tuple(current))
            current = [match.group(1), None]
        wild = re.search(r"wildcards: .*session=([^,\s]+)", line)
        if wild and current:
            current[1] = wild.group(1)
    if current:
        jobs.append(tuple(current))
    return [j for j in jobs if j[0] != "all"]


@pytest.fixture(scope="module")
def template(tiny_cohort, tmp_path_factory):
    """One finished run; each test works on a copy of the whole working folder."""
    work = tmp_path_factory.mktemp("template")
    shutil.copytree(tiny_cohort.parent, work / "cohort")
    run_snakemake(work, "--config", "sessions=cohort/sessions.tsv", "results=out")
    return work


@pytest.fixture()
def finished(template, tmp_path):
    work = tmp_path / "work"
    shutil.copytree(template, work, symlinks=True)
    return work, "cohort/sessions.tsv"


def rules_of(jobs):
    return {r for r, _ in jobs}


def sessions_of(jobs):
    return {s for _, s in jobs if s is not None}


def test_nothing_changed_runs_nothing(finished):
    work, sheet = finished
    assert planned_jobs(work, sheet) == []


def test_resorted_session_reruns_that_session_and_cohort(finished):
    work, sheet = finished
    sheet_path = work / sheet
    frame = pd.read_csv(sheet_path, sep="\t", dtype=str, keep_default_na=False)
    target = frame.loc[frame["spikes"].str.endswith(".csv")].iloc[0]
    path = sheet_path.parent / target["spikes"]
    time.sleep(1.1)
    spikes = pd.read_csv(path)
    spikes.sample(frac=1.0, random_state=1).to_csv(path, index=False)  # same spikes, new order
    jobs = planned_jobs(work, sheet)
    assert sessions_of(jobs) == {target["session"]}
    assert SESSION_RULES <= rules_of(jobs)
    assert COHORT_RULES <= rules_of(jobs)


def test_new_row_runs_new_session_and_cohort_only(finished):
    work, sheet = finished
    sheet_path = work / sheet
    frame = pd.read_csv(sheet_path, sep="\t", dtype=str, keep_default_na=False)
    extra = frame.iloc[[0]].copy()
    shutil.copy(sheet_path.parent / extra["spikes"].iloc[0],
                sheet_path.parent / "added_spikes.csv")
    extra["session"] = "added-s1"
    extra["spikes"] = "added_spikes.csv"
    pd.concat([frame, extra]).to_csv(sheet_path, sep="\t", index=False)
    jobs = planned_jobs(work, sheet)
    assert sessions_of(jobs) == {"added-s1"}
    assert rules_of(jobs) == SESSION_RULES | COHORT_RULES


def test_metadata_edit_reruns_cohort_jobs_only(finished):
    work, sheet = finished
    frame = pd.read_csv(work / sheet, sep="\t", dtype=str, keep_default_na=False)
    frame.loc[0, "group"] = "relabelled"
    frame.to_csv(work / sheet, sep="\t", index=False)
    jobs = planned_jobs(work, sheet)
    assert sessions_of(jobs) == set()
    assert "cohort_table" in rules_of(jobs)
    assert not rules_of(jobs) & SESSION_RULES


def test_metric_parameter_reruns_only_rules_that_use_it(finished):
    work, sheet = finished
    override = work / "override.yaml"
    override.write_text("metrics:\n  lvr_refractory_s: 0.004\n")
    jobs = planned_jobs(work, sheet, "--configfile", str(REPO / "config" / "config.yaml"),
                        str(override))
    assert "session_metrics" in rules_of(jobs)
    assert not rules_of(jobs) & {"ingest_session", "session_recovery",
                                 "session_recovery_figure"}


def test_adding_an_alignment_reruns_only_event_aligned_rules(finished):
    work, sheet = finished
    override = work / "alignments.yaml"
    override.write_text("alignments: [time, lick_time]\n")
    jobs = rules_of(planned_jobs(work, sheet, "--configfile",
                                 str(REPO / "config" / "config.yaml"), str(override)))
    # every event-aligned table gains the alignment: the time course, the shared variability
    # and the group statistics of both; nothing per unit
    assert {"session_timecourse", "session_shared", "population_fano", "shared_statistics",
            "group_summary"} <= jobs
    assert not jobs & {"ingest_session", "session_metrics", "session_recovery",
                       "session_recovery_figure"}


def test_changing_the_epochs_reruns_only_shared_variability(finished):
    work, sheet = finished
    override = work / "epochs.yaml"
    override.write_text("epochs: {baseline: [-0.4, 0.0], response: [0.1, 0.4]}\n")
    jobs = planned_jobs(work, sheet, "--configfile", str(REPO / "config" / "config.yaml"),
                        str(override))
    rules = rules_of(jobs)
    assert {"session_shared", "group_summary", "shared_statistics", "cohort_figures"} <= rules
    assert not rules & {"ingest_session", "session_metrics", "session_timecourse",
                        "session_recovery", "session_recovery_figure", "population_fano"}
    tables = {line for line in run_snakemake(
        work, "-n", "--configfile", str(REPO / "config" / "config.yaml"), str(override),
        "--config", f"sessions={sheet}", "results=out").stdout.splitlines()
        if "wildcards: table=" in line}
    assert not any("table=units" in t or "table=recovery" in t for t in tables)


@pytest.mark.parametrize("module,reruns,keeps", [
    ("metrics/count_fano.py", {"session_metrics"}, {"ingest_session", "session_recovery"}),
    # a figure change reruns only the rules that draw
    ("figures/style.py", {"session_recovery_figure", "cohort_figures"},
     SESSION_RULES - {"session_recovery_figure"} | {"cohort_table", "population_fano",
                                                    "group_summary"}),
    # a bootstrap change reruns the group statistics (and what reads them), nothing upstream
    ("cohort/bootstrap.py", {"group_summary"},
     SESSION_RULES | {"cohort_table", "cohort_dataset", "population_fano"}),
    # the factor analysis reruns the shared-variability job of each session and what reads it
    ("population/factor_analysis.py", {"session_shared", "shared_statistics"},
     SESSION_RULES - {"session_shared"} | {"population_fano"}),
])
def test_code_change_reruns_rules_that_import_it(finished, tmp_path_factory, module, reruns,
                                                 keeps):
    work, sheet = finished
    copy = tmp_path_factory.mktemp("repo_copy")
    for part in ("Snakefile", "src", "workflow", "scripts", "config"):
        src = REPO / part
        (shutil.copytree if src.is_dir() else shutil.copy)(src, copy / part)
    with open(copy / "src" / "spikevar" / module, "a") as handle:
        handle.write("\n# a code change\n")
    jobs = rules_of(planned_jobs(work, sheet, snakefile=copy / "Snakefile"))
    assert reruns <= jobs, f"{module}: expected {sorted(reruns)} to rerun, planned {sorted(jobs)}"
    assert not jobs & keeps, f"{module}: {sorted(jobs & keeps)} should not rerun"


def test_two_runs_give_identical_tables(finished):
    work, sheet = finished
    run_snakemake(work, "--config", f"sessions={sheet}", "results=again")
    for table in ("units", "count_fano", "recovery", "population_fano", "group_summary",
                  "group_differences", "shared_variance", "population_structure",
                  "gain_variance", "shared_over_time", "r_sc_by_rate"):
        a = pq.read_table(work / "out" / "cohort" / f"{table}.parquet")
        b = pq.read_table(work / "again" / "cohort" / f"{table}.parquet")
        assert a.equals(b), table
    for dataset in ("fano_timecourse", "pair_correlations", "shared_timecourse"):
        a = read_frame(work / "out" / "cohort" / dataset)
        b = read_frame(work / "again" / "cohort" / dataset)
        pd.testing.assert_frame_equal(a, b)


def test_changing_the_inclusion_rules_reruns_the_selection_and_what_reads_it(finished):
    work, sheet = finished
    override = work / "inclusion.yaml"
    override.write_text("inclusion: {min_rate_hz: 12.0}\n")
    args = ("--configfile", str(REPO / "config" / "config.yaml"), str(override))
    rules = rules_of(planned_jobs(work, sheet, *args))
    assert {"session_selection", "session_shared", "cohort_table", "cohort_dataset",
            "population_fano", "group_summary", "shared_statistics", "cohort_figures"} <= rules
    # never ingestion, the per-unit metrics, the time course or the recovery fits
    assert not rules & {"ingest_session", "session_metrics", "session_timecourse",
                        "session_recovery", "session_recovery_figure"}
    # one session gets a label table (one unit unlabelled, one id unknown); labels are
    # ingested on their own, so this too reruns no per-unit metric or fit
    frame = pd.read_csv(work / sheet, sep="\t", dtype=str, keep_default_na=False)
    labelled = frame.loc[0, "session"]
    spikes = pd.read_parquet(work / "out" / "sessions" / labelled / "units.parquet")
    ids = spikes["unit"].astype(str).tolist()
    (work / "cohort" / "labels.tsv").write_text(
        "unit\tlabel\n" + "".join(f"{u}\tgood\n" for u in ids[:-1]) + "zz99\tnoise\n")
    frame["unit_labels"] = ["labels.tsv"] + [""] * (len(frame) - 1)
    frame.to_csv(work / sheet, sep="\t", index=False)
    override.write_text("inclusion: {min_rate_hz: 12.0}\n")
    rules = rules_of(planned_jobs(work, sheet, *args))
    assert "ingest_unit_labels" in rules and not rules & {
        "ingest_session", "session_metrics", "session_recovery"}
    run_snakemake(work, *args, "--config", f"sessions={sheet}", "results=out")
    chosen = pd.read_parquet(work / "out" / "cohort" / "unit_selection.parquet")
    units = pd.read_parquet(work / "out" / "cohort" / "units.parquet")
    slow = units["rate_hz"] < 12.0
    assert slow.any() and (~slow).any()
    assert list(units["included"]) == list(~slow)
    reasons = chosen.set_index(["session", "unit"]).loc[
        list(zip(units.loc[slow, "session"], units.loc[slow, "unit"], strict=True)),
        "exclusion_reasons"]
    assert reasons.str.contains("under 12 Hz").all()
    mine = chosen[chosen["session"] == labelled].set_index("unit")["label"]
    assert mine[ids[:-1]].eq("good").all() and mine[ids[-1]] == ""  # not guessed
    log = (work / "out" / "logs" / "sessions" / labelled / "selection.log").read_text()
    assert "zz99" in log and ids[-1] in log
    summary = pd.read_parquet(work / "out" / "cohort" / "group_summary.parquet")
    cv = summary[summary["metric"] == "isi_cv"].set_index("group")["n_units"]
    assert cv.sum() == int((~slow & units["isi_cv"].notna()).sum())


def test_session_recovery_figures_can_be_left_out_with_the_cohort_figures_kept(finished):
    # config figures.session_recovery: false plans no per-session figure on a new run, and
    # the cohort figures and report pages are still made
    work, sheet = finished
    fresh = work.parent / "fresh"
    fresh.mkdir()
    shutil.copytree(work / "cohort", fresh / "cohort")
    override = fresh / "no_session_figures.yaml"
    override.write_text("figures:\n  session_recovery: false\n")
    jobs = rules_of(planned_jobs(fresh, sheet, "--configfile",
                                 str(REPO / "config" / "config.yaml"), str(override)))
    assert "session_recovery_figure" not in jobs
    assert {"session_recovery", "cohort_figures", "report_pages", "handoff"} <= jobs
