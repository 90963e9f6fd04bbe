"""Benchmark of a large cohort through Snakemake (not a test; prints numbers).

Builds a synthetic cohort of N sessions x U units (Poisson trains written as Parquet), runs the
whole pipeline, and reports: full run time and time per job; the dry run of the finished cohort;
the rerun after one session's spike file changes (and its share of the full run); the peak
memory (max RSS from Snakemake's benchmark files) of the cohort-assembly jobs.

The per-session recovery figures are off (config figures.session_recovery: false, the setting
the README recommends for large cohorts) unless --session-figures is given.

Run: .venv/bin/python bench/bench_cohort.py [--sessions 200] [--units 100] [--duration 120]
     [--session-figures] [--session-jobs whole_session]
"""

import argparse
import os
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

REPO = Path(__file__).resolve().parents[1]


def build(folder: Path, n_sessions: int, n_units: int, duration: float) -> Path:
    rng = np.random.default_rng(0)
    folder.mkdir(parents=True, exist_ok=True)
    rows = []
    for s in range(n_sessions):
        rates = rng.uniform(2, 20, n_units)
        counts = rng.poisson(rates * duration)
        unit = np.repeat([f"u{i:03d}" for i in range(n_units)], counts)
        t = rng.uniform(0, duration, counts.sum())
        name = f"s{s:04d}"
        pd.DataFrame({"unit": unit, "time": t}).to_parquet(folder / f"{name}.parquet")
        onsets = np.arange(2.0, duration - 2.0, 3.0)
        pd.DataFrame({"time": onsets, "condition": np.where(np.arange(len(onsets)) % 2, "a",
                                                             "b")}).to_parquet(
            folder / f"{name}_events.parquet")
        rows.append({"session": name, "subject": f"m{s // 4:03d}",
                     "group": "g1" if (s // 4) % 2 else "g2", "spikes": f"{name}.parquet",
                     "events": f"{name}_events.parquet"})
    pd.DataFrame(rows).to_csv(folder / "sessions.tsv", sep="\t", index=False)
    return folder / "sessions.tsv"


def snakemake(work: Path, *args: str) -> float:
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "snakemake", "-s", str(REPO / "Snakefile"),
                    "--directory", str(work), "--cores", str(os.cpu_count() or 2), *args,
                    "--configfile", str(REPO / "config" / "config.yaml"),
                    str(work / "override.yaml"), "--config", "sessions=cohort/sessions.tsv",
                    "results=out"],
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def snakemake_floor(work: Path) -> float:
    """Seconds of a dry run of an empty workflow in the same environment (the start-up every
    Snakemake command pays: its imports and the executor plugins installed)."""
    empty = work / "empty"
    empty.mkdir(exist_ok=True)
    (empty / "Snakefile").write_text("rule all:\n    input: []\n")
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "snakemake", "-s", str(empty / "Snakefile"),
                    "--directory", str(empty), "--cores", "1", "-n"],
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def job_seconds_by_rule(folder: Path) -> None:
    """Where the run's time goes: seconds of every job (Snakemake's benchmark files) by rule."""
    seconds: dict[str, list[float]] = {}
    for path in folder.rglob("*.tsv"):
        seconds.setdefault(path.stem, []).append(float(pd.read_csv(path, sep="\t")["s"].iloc[0]))
    total = sum(sum(v) for v in seconds.values())
    print(f"job seconds by rule (sum {total:.0f} s; the last run's value for rerun jobs):")
    for rule, values in sorted(seconds.items(), key=lambda kv: -sum(kv[1]))[:14]:
        print(f"  {rule:<26} {len(values):4d} jobs {sum(values):8.1f} s "
              f"({100 * sum(values) / total:4.1f}%), {np.mean(values):.2f} s per job")


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--sessions", type=int, default=200)
    parser.add_argument("--units", type=int, default=100)
    parser.add_argument("--duration", type=float, default=120.0)
    parser.add_argument("--work", default="bench/out/cohort")
    parser.add_argument("--session-figures", action="store_true",
                        help="also draw the per-session recovery figures (config default)")
    parser.add_argument("--session-jobs", default="by_stage", choices=["by_stage", "whole_session"],
                        help="config session_jobs: a job per stage or one job per session")
    args = parser.parse_args()
    work = Path(args.work).resolve()
    if work.exists():
        import shutil
        shutil.rmtree(work)
    build(work / "cohort", args.sessions, args.units, args.duration)
    # the profile-likelihood interval is switched off: this measures the workflow, not the fits
    override = "recovery:\n  tau_interval: false\n"
    if not args.session_figures:  # the large-cohort setting the README recommends
        override += "figures:\n  session_recovery: false\n"
    override += f"session_jobs: {args.session_jobs}\n"
    (work / "override.yaml").write_text(override)
    full = snakemake(work)
    n_jobs = len(list((work / "out" / "benchmarks").rglob("*.tsv")))
    print(f"cohort: {args.sessions} sessions x {args.units} units, {args.duration:.0f} s each; "
          f"per-session recovery figures {'on' if args.session_figures else 'off'}; "
          f"session_jobs: {args.session_jobs}")
    print(f"full run: {full:.1f} s for {n_jobs} jobs on {os.cpu_count()} cores "
          f"({full / n_jobs * (os.cpu_count() or 2):.2f} core-seconds per job)")
    dry = snakemake(work, "-n")
    print(f"dry run of the finished cohort: {dry:.2f} s ({snakemake_floor(work):.2f} s of it is "
          "Snakemake's own start-up: the dry run of a workflow with no rules)")
    target = work / "cohort" / "s0000.parquet"
    frame = pd.read_parquet(target)
    frame.sample(frac=1.0, random_state=1).to_parquet(target)
    rerun = snakemake(work)
    print(f"rerun after one session changed: {rerun:.1f} s = {100 * rerun / full:.1f}% of the "
          "full run")
    job_seconds_by_rule(work / "out" / "benchmarks")
    rss = []
    for path in (work / "out" / "benchmarks" / "cohort").glob("*.tsv"):
        bench = pd.read_csv(path, sep="\t")
        rss.append((path.stem, float(bench["max_rss"].iloc[0])))
    for name, value in sorted(rss):
        print(f"  peak memory (max RSS) of cohort job {name}: {value:.0f} MB")


if __name__ == "__main__":
    main()
