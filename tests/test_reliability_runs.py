"""Interrupted runs, read-only raw inputs and numerical robustness."""

import os
import shutil
import signal
import stat
import subprocess
import sys
import time

import numpy as np
import pyarrow.parquet as pq
import pytest

from conftest import REPO, run_snakemake
from spikevar.base.parquet_io import sha256_of_file
from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.count_fano import count_fano_table
from spikevar.metrics.isi import unit_isi_table
from spikevar.recovery.fit import Intervals, fit_all
from spikevar.synth import simulate

TABLES = ("units", "count_fano", "recovery", "population_fano", "group_summary",
          "group_differences", "population_structure", "shared_over_time")
DATASETS = ("fano_timecourse", "pair_correlations")


@pytest.mark.workflow
def test_killed_run_resumes_to_identical_outputs_with_read_only_inputs(tiny_cohort, tmp_path):
    cohort = tmp_path / "cohort"
    shutil.copytree(tiny_cohort.parent, cohort)
    raw = sorted(p for p in cohort.rglob("*") if p.is_file() and p.name != "sessions.tsv")
    folders = sorted((p for p in cohort.rglob("*") if p.is_dir()), reverse=True)
    before = {str(p.relative_to(cohort)): sha256_of_file(p) for p in raw}
    for p in raw + [cohort / "sessions.tsv"]:
        p.chmod(stat.S_IRUSR | stat.S_IRGRP)
    for folder in [*folders, cohort]:  # a sorter's folder of arrays too
        folder.chmod(stat.S_IRUSR | stat.S_IXUSR)
    config = ["--config", "sessions=cohort/sessions.tsv", "results=out"]
    try:
        # reference: an uninterrupted run in another folder
        ref = tmp_path / "ref"
        ref.mkdir()
        (ref / "cohort").symlink_to(cohort)
        run_snakemake(ref, *config)
        # interrupted run: killed (SIGKILL, whole process group) once the first jobs finished
        work = tmp_path / "work"
        work.mkdir()
        (work / "cohort").symlink_to(cohort)
        proc = subprocess.Popen(
            [sys.executable, "-m", "snakemake", "-s", str(REPO / "Snakefile"), "--directory",
             str(work), "--cores", "1", *config], stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL, start_new_session=True)
        deadline = time.time() + 120
        while time.time() < deadline and not list((work / "out").glob("sessions/*/units.parquet")):
            time.sleep(0.2)
        time.sleep(1.0)
        os.killpg(proc.pid, signal.SIGKILL)
        proc.wait()
        assert not (work / "out" / "cohort" / "units.parquet").exists()
        # whatever was left is either absent or complete: no truncated Parquet looks finished
        for path in (work / "out" / "sessions").glob("*/*.parquet"):
            pq.read_table(path)
        run_snakemake(work, "--unlock", *config)
        run_snakemake(work, "--rerun-incomplete", *config)
        for table in TABLES:
            a = pq.read_table(ref / "out" / "cohort" / f"{table}.parquet")
            b = pq.read_table(work / "out" / "cohort" / f"{table}.parquet")
            assert a.equals(b), table
        for dataset in DATASETS:
            a = pq.read_table(ref / "out" / "cohort" / dataset)
            b = pq.read_table(work / "out" / "cohort" / dataset)
            assert a.equals(b), dataset
    finally:
        for folder in [cohort, *sorted(folders)]:
            folder.chmod(stat.S_IRWXU)
        for p in raw + [cohort / "sessions.tsv"]:
            p.chmod(stat.S_IRUSR | stat.S_IWUSR)
    assert {str(p.relative_to(cohort)): sha256_of_file(p) for p in raw} == before


def _table(train, duration):
    spikes = SpikeArrays.from_arrays(np.full(len(train), "u"), train)
    return unit_isi_table(spikes, duration_s=duration).iloc[0], spikes


@pytest.mark.parametrize("model,duration", [
    (simulate.DeadTimeISI(500.0, 0.0008), 60.0),        # very high rate
    (simulate.PoissonISI(0.1), 200.0),                   # a handful of spikes
    (simulate.GammaISI(20.0, 400.0), 60.0),              # near-periodic, CV -> 0.05
    (simulate.GammaISI(5.0, 0.08), 2000.0),              # very bursty, CV about 3.5
])
def test_metrics_and_fits_stay_finite_at_extremes(model, duration):
    train = simulate.renewal_train(model, duration_s=duration, rng=np.random.default_rng(1))
    row, spikes = _table(train, duration)
    if len(train) >= 3:
        for c in ("isi_cv", "isi_cv2", "isi_lv", "isi_lvr"):
            assert np.isfinite(row[c])
    counts = count_fano_table(spikes, windows_s=[0.01, 1.0], start_s=0, stop_s=duration)
    assert not np.isinf(counts["fano"].astype(float)).any()
    if len(train) > 20:
        iv = Intervals.build(np.diff(train), censored=duration - train[-1])
        for fit in fit_all(iv):
            if fit.converged:
                assert np.isfinite([fit.rate_hz, fit.tau_s, fit.dead_time_s,
                                    fit.log_likelihood]).all()
            else:
                assert fit.note
    if isinstance(model, simulate.GammaISI) and model.shape > 100:
        assert row["isi_cv"] == pytest.approx(1 / np.sqrt(model.shape), rel=0.1)
    if isinstance(model, simulate.GammaISI) and model.shape < 0.1:
        assert row["isi_cv"] > 3


def test_sub_millisecond_precision_far_into_a_recording():
    # ISIs of 0.2 and 0.3 ms at t ~ 3e4 s give the same statistics as at t ~ 0
    isi = np.tile([0.0002, 0.0003], 500)
    near = np.cumsum(isi)
    far = 3e4 + near
    a, _ = _table(near, 1.0)
    b, _ = _table(far, 3e4 + 1.0)
    for c in ("isi_cv", "isi_cv2", "isi_lv", "isi_lvr"):
        assert b[c] == pytest.approx(a[c], rel=1e-6)
    assert a["isi_lv"] == pytest.approx(3 * (0.1 / 0.5) ** 2, rel=1e-9)


def test_non_converging_fit_says_so():
    # a strictly periodic train has no refractory recovery to resolve
    train = np.arange(0, 50, 0.05) + 1e-4 * np.random.default_rng(2).standard_normal(1000)
    iv = Intervals.build(np.diff(np.sort(train)), censored=0.01)
    recovery = [f for f in fit_all(iv) if f.model == "exp_recovery"][0]
    assert recovery.tau_at_bound == "upper"
    assert "tau at upper bound" in recovery.note
    assert np.isnan(recovery.tau_ci).all()  # no interval is claimed for an unresolved tau
