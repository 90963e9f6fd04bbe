"""Benchmark of the whole per-session pipeline on one large session (not a test).

One session of 400 units x 1 h (~20 million spikes) written as CSV with a 2,000-trial event
table. Prints stage-by-stage seconds and spikes/s for spikevar (ingest, metrics, recovery fits),
the CSV ingestion time against reading the same file with pyarrow.csv alone, and the end-to-end
ratio against a straightforward pandas/NumPy script with per-unit and per-trial loops
(bench/naive_reference.py; timed on a subset of units and scaled to all).

Also times ingestion of the same rows sorted by time (units interleaved), which needs the sort.

Run: .venv/bin/python bench/bench_pipeline.py [--units 400] [--hours 1] [--ingest-only]
"""

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # one core, as one Snakemake job

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
import pyarrow as pa  # noqa: E402
import pyarrow.csv as pacsv  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
from naive_reference import naive_recovery_fit, naive_tables  # noqa: E402

from spikevar.inputs.ingest import ingest_session  # noqa: E402
from spikevar.inputs.settings import ColumnNames  # noqa: E402
from spikevar.metrics.session import run_session_metrics, run_session_timecourse  # noqa: E402
from spikevar.metrics.settings import (  # noqa: E402
    MetricSettings,
    SlidingWindows,
    StabilitySettings,
)
from spikevar.recovery.settings import RecoverySettings  # noqa: E402
from spikevar.recovery.table import run_session_recovery  # noqa: E402
from spikevar.synth.simulate import ExpRecoveryISI, renewal_train  # noqa: E402


def build(folder: Path, n_units: int, duration: float, n_trials: int):
    rng = np.random.default_rng(0)
    units, times = [], []
    for u in range(n_units):
        model = ExpRecoveryISI(float(rng.uniform(8, 30)), float(rng.uniform(0.002, 0.02)),
                               float(rng.uniform(0.0005, 0.002)))
        t = renewal_train(model, duration_s=duration, rng=rng)
        units.append(np.full(len(t), u, dtype=np.int32))
        times.append(t)
    table = pa.table({"unit": np.concatenate(units), "time": np.concatenate(times)})
    folder.mkdir(parents=True, exist_ok=True)
    pacsv.write_csv(table, folder / "spikes.csv")
    onsets = np.sort(rng.uniform(2, duration - 2, n_trials))
    pd.DataFrame({"time": onsets, "condition": rng.choice(["a", "b"], n_trials)}).to_csv(
        folder / "events.csv", index=False)
    return table.num_rows


def timed(label, fn, n_spikes, results):
    t0 = time.perf_counter()
    out = fn()
    results[label] = time.perf_counter() - t0
    print(f"  {label:<28} {results[label]:8.2f} s  {n_spikes / results[label] / 1e6:6.2f} "
          "M spikes/s")
    return out


def time_sorted_ingestion(work: Path, n: int) -> None:
    """Ingestion of the same spikes sorted by time (units interleaved, as many sorters export):
    the table must be sorted by unit, so it takes the full path."""
    table = pacsv.read_csv(work / "raw" / "spikes.csv")
    order = np.argsort(table.column("time").to_numpy(), kind="stable")
    path = work / "raw" / "spikes_by_time.csv"
    pacsv.write_csv(table.take(order), path)
    del table, order
    times = []
    for _ in range(2):
        t0 = time.perf_counter()
        ingest_session(session="big_by_time", spikes_path=path, events_path=None,
                       columns=ColumnNames(), time_unit="s", sampling_rate_hz=None,
                       spikes_out=work / "out" / "by_time_spikes.parquet",
                       events_out=work / "out" / "by_time_events.parquet")
        times.append(time.perf_counter() - t0)
    print(f"  {'ingest, rows sorted by time':<28} {min(times):8.2f} s  "
          f"{n / min(times) / 1e6:6.2f} M spikes/s (best of 2; needs the sort by unit)")
    path.unlink()


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--units", type=int, default=400)
    parser.add_argument("--hours", type=float, default=1.0)
    parser.add_argument("--trials", type=int, default=2000)
    parser.add_argument("--naive-units", type=int, default=4)
    parser.add_argument("--work", default="bench/out/pipeline")
    parser.add_argument("--time-sorted", action=argparse.BooleanOptionalAction, default=True,
                        help="also time ingestion of the rows sorted by time")
    parser.add_argument("--ingest-only", action="store_true",
                        help="stop after the ingestion measurements")
    args = parser.parse_args()
    work = Path(args.work)
    duration = args.hours * 3600
    n = build(work / "raw", args.units, duration, args.trials)
    size = (work / "raw" / "spikes.csv").stat().st_size
    print(f"session: {args.units} units, {duration:.0f} s, {n:,} spikes "
          f"(CSV {size / 1e6:.0f} MB), {args.trials} trials")
    out = work / "out"
    r = {}

    def ingest():
        return ingest_session(
            session="big", spikes_path=work / "raw" / "spikes.csv",
            events_path=work / "raw" / "events.csv", columns=ColumnNames(), time_unit="s",
            sampling_rate_hz=None, spikes_out=out / "spikes.parquet",
            events_out=out / "events.parquet")

    # best of three for both: the file is in the page cache after the first read
    read_times, ingest_times = [], []
    for _ in range(3):
        t0 = time.perf_counter()
        pacsv.read_csv(work / "raw" / "spikes.csv")
        read_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        ingest()
        ingest_times.append(time.perf_counter() - t0)
    r["pyarrow.csv.read_csv alone"] = min(read_times)
    r["spikevar ingest (CSV)"] = min(ingest_times)
    for label in ("pyarrow.csv.read_csv alone", "spikevar ingest (CSV)"):
        print(f"  {label:<28} {r[label]:8.2f} s  {n / r[label] / 1e6:6.2f} M spikes/s "
              "(best of 3)")
    if args.time_sorted:
        time_sorted_ingestion(work, n)
    if args.ingest_only:
        return
    def metrics():
        run_session_metrics(
            session="big", spikes_path=out / "spikes.parquet",
            outputs={k: out / f"{k}.parquet" for k in ("units", "count_fano", "unit_blocks")},
            settings=MetricSettings(), stability=StabilitySettings())
        run_session_timecourse(
            session="big", spikes_path=out / "spikes.parquet", events_path=out / "events.parquet",
            output=out / "fano_timecourse.parquet", windows=SlidingWindows(), alignments=[],
            event_time_column="time")

    timed("spikevar metrics", metrics, n, r)
    timed("spikevar recovery fits", lambda: run_session_recovery(
        session="big", spikes_path=out / "spikes.parquet", output=out / "recovery.parquet",
        settings=RecoverySettings()), n, r)
    ours = r["spikevar ingest (CSV)"] + r["spikevar metrics"] + r["spikevar recovery fits"]
    print(f"  spikevar end to end: {ours:.1f} s; CSV ingestion / pyarrow alone = "
          f"{r['spikevar ingest (CSV)'] / r['pyarrow.csv.read_csv alone']:.2f}x")
    # straightforward reference, timed on a subset of units and scaled
    t0 = time.perf_counter()
    spikes = pd.read_csv(work / "raw" / "spikes.csv")
    events = pd.read_csv(work / "raw" / "events.csv")
    read_s = time.perf_counter() - t0
    k = args.naive_units
    subset = spikes[spikes["unit"] < k].rename(columns={"time": "time_s"})
    subset = subset.sort_values(["unit", "time_s"])
    t0 = time.perf_counter()
    naive_tables(subset, events.rename(columns={"time": "time_s"}),
                 windows_s=MetricSettings().counting_windows_s,
                 tc_left=SlidingWindows().left_edges(), tc_width=0.1, start=0.0,
                 stop=duration)
    for _, frame in subset.groupby("unit"):
        t = frame["time_s"].to_numpy()
        naive_recovery_fit(np.diff(t), duration - t[-1])
    per_unit = (time.perf_counter() - t0) / k
    naive = read_s + per_unit * args.units
    print(f"straightforward reference: {naive:.0f} s (pandas read {read_s:.1f} s + "
          f"{per_unit:.2f} s per unit x {args.units}, timed on {k} units)")
    print(f"spikevar is {naive / ours:.0f}x faster end to end")


if __name__ == "__main__":
    main()
