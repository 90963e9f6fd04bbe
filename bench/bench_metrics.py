"""Benchmark of the metric stage on one large session (not a test; prints numbers).

400 units x 1 h (~20 million spikes), 2,000 trials, 57-60 sliding windows, 8 counting windows.
Reports seconds and spikes/s for spikevar's metric stage, its peak traced memory relative to the
spike arrays, and the ratio against the straightforward per-unit/per-trial reference
(bench/naive_reference.py), timed on a subset of units and scaled to all units.

Run: .venv/bin/python bench/bench_metrics.py [--units 400] [--hours 1]
"""

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # one core

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
from naive_reference import naive_tables  # noqa: E402

from spikevar.base.spike_arrays import SpikeArrays  # noqa: E402
from spikevar.metrics.session import compute_tables  # noqa: E402
from spikevar.metrics.settings import MetricSettings, SlidingWindows  # noqa: E402


def make_session(n_units, duration, n_trials, seed=0):
    rng = np.random.default_rng(seed)
    rates = rng.uniform(4, 24, n_units)
    counts = rng.poisson(rates * duration)
    codes = np.repeat(np.arange(n_units), counts)
    times = rng.uniform(0, duration, counts.sum())
    order = np.lexsort((times, codes))
    labels = np.array([f"u{i:04d}" for i in range(n_units)])
    spikes = SpikeArrays(labels=labels, codes=codes[order], times=times[order])
    onsets = np.sort(rng.uniform(2, duration - 2, n_trials))
    events = pd.DataFrame({"time_s": onsets,
                           "condition": rng.choice(["dim", "bright"], n_trials)})
    return spikes, events


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--units", type=int, default=400)
    parser.add_argument("--hours", type=float, default=1.0)
    parser.add_argument("--trials", type=int, default=2000)
    parser.add_argument("--naive-units", type=int, default=4)
    args = parser.parse_args()
    duration = args.hours * 3600
    spikes, events = make_session(args.units, duration, args.trials)
    n = len(spikes.times)
    settings = MetricSettings()
    windows = SlidingWindows(-0.5, 1.0, 0.1, 0.025)
    print(f"session: {args.units} units, {duration:.0f} s, {n:,} spikes, {args.trials} trials, "
          f"{len(windows.left_edges())} sliding windows, "
          f"{len(settings.counting_windows_s)} counting windows")
    array_bytes = spikes.times.nbytes + spikes.codes.nbytes
    tracemalloc.start()
    t0 = time.perf_counter()
    tables = compute_tables(spikes, events, settings=settings, windows=windows,
                            span=(0.0, duration))
    elapsed = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    print(f"spikevar metric stage: {elapsed:.2f} s, {n / elapsed / 1e6:.2f} M spikes/s; "
          f"peak traced memory {peak / 1e6:.0f} MB = {peak / array_bytes:.2f}x the spike arrays "
          f"({array_bytes / 1e6:.0f} MB)")
    print(f"  rows: units {len(tables['units'])}, count_fano {len(tables['count_fano'])}, "
          f"fano_timecourse {len(tables['fano_timecourse'])}")
    k = args.naive_units
    keep = spikes.codes < k
    frame = pd.DataFrame({"unit": spikes.labels[spikes.codes[keep]],
                          "time_s": spikes.times[keep]})
    t0 = time.perf_counter()
    naive_tables(frame, events, windows_s=settings.counting_windows_s,
                 tc_left=settings.timecourse.left_edges(), tc_width=0.1, start=0.0,
                 stop=duration)
    naive = (time.perf_counter() - t0) * args.units / k
    print(f"straightforward reference: {naive:.1f} s for all units (timed on {k}, scaled); "
          f"spikevar is {naive / elapsed:.0f}x faster")


if __name__ == "__main__":
    main()
