"""Benchmark of one large session through the whole workflow (not a test; prints numbers).

One session of 400 units x 1 h (~22 million spikes, CSV, 2,000 trials of two conditions)
goes through Snakemake with the default config, every rule included (ingest, metrics,
time course, selection, recovery fits with the tau interval and the slow-rate-modulated fit,
shared variability, the recovery figure, cohort tables, statistics, figures, hand-off).
Prints the wall time, each job's seconds and peak memory (max RSS and max PSS, from
Snakemake's benchmark files), and the peak PSS against the size of the session's spike arrays
(8-byte times and 4-byte unit codes per spike).

Run: .venv/bin/python bench/bench_session.py [--units 400] [--hours 1] [--cores 2]
"""

import argparse
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "bench"))
from bench_pipeline import build  # noqa: E402


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--units", type=int, default=400)
    parser.add_argument("--hours", type=float, default=1.0)
    parser.add_argument("--trials", type=int, default=2000)
    parser.add_argument("--cores", type=int, default=2)
    parser.add_argument("--work", default="bench/out/session")
    args = parser.parse_args()
    work = Path(args.work).resolve()
    if work.exists():
        shutil.rmtree(work)
    n = build(work / "cohort", args.units, args.hours * 3600, args.trials)
    pd.DataFrame([{"session": "big-s1", "subject": "big", "group": "g",
                   "spikes": "spikes.csv", "events": "events.csv"}]).to_csv(
        work / "cohort" / "sessions.tsv", sep="\t", index=False)
    print(f"session: {args.units} units, {args.hours * 3600:.0f} s, {n:,} spikes, "
          f"{args.trials} trials; default config; {args.cores} cores")
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "snakemake", "-s", str(REPO / "Snakefile"),
                    "--directory", str(work), "--cores", str(args.cores),
                    "--configfile", str(REPO / "config" / "config.yaml"),
                    "--config", "sessions=cohort/sessions.tsv", "results=out"],
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    print(f"end to end (Snakemake, all rules): {wall:.1f} s")
    arrays_mb = n * 12 / 1e6
    rows = []
    for path in sorted((work / "out" / "benchmarks").rglob("*.tsv")):
        bench = pd.read_csv(path, sep="\t")
        rows.append((path.stem, float(bench["s"].iloc[0]), float(bench["max_rss"].iloc[0]),
                     float(bench["max_pss"].iloc[0])))
    # RSS counts pages shared between a job's processes (its forked workers) once per
    # process; PSS splits each shared page between its sharers, so it sums to the memory used
    print(f"{'job':<24} {'seconds':>8} {'max RSS MB':>11} {'max PSS MB':>11} "
          f"{'PSS x spike arrays':>19}")
    for name, seconds, rss, pss in sorted(rows, key=lambda r: -r[1]):
        print(f"{name:<24} {seconds:8.1f} {rss:11.0f} {pss:11.0f} {pss / arrays_mb:19.2f}")
    print(f"spike arrays: {arrays_mb:.0f} MB")


if __name__ == "__main__":
    main()
