"""Benchmark of the recovery fits (not a test; prints numbers).

400 units x 50,000 intervals each (exponential recovery, varied parameters). Reports total and
per-unit time for the three stationary models without the tau interval, the extra cost of the
profile-likelihood interval and of the slow-rate-modulated fit (on a subset, scaled), and the
log-likelihood evaluations per second.

Run: .venv/bin/python bench/bench_recovery.py [--units 400] [--intervals 50000]
"""

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # "on one core": single-threaded BLAS

import argparse  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

import spikevar.recovery.exp_likelihood as el  # noqa: E402
import spikevar.recovery.fit as rf  # noqa: E402
from spikevar.synth import simulate  # noqa: E402

calls = {"n": 0}
_terms = el.recovery_terms


def counting_terms(*args, **kwargs):
    calls["n"] += 1
    return _terms(*args, **kwargs)


el.recovery_terms = counting_terms


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--units", type=int, default=400)
    parser.add_argument("--intervals", type=int, default=50_000)
    parser.add_argument("--subset", type=int, default=20)
    args = parser.parse_args()
    rng = np.random.default_rng(0)
    data = []
    for _ in range(args.units):
        model = simulate.ExpRecoveryISI(float(rng.uniform(20, 80)), float(rng.uniform(0.002, 0.02)),
                                        float(rng.uniform(0.0005, 0.002)))
        data.append(rf.Intervals.build(model.draw(args.intervals, rng), censored=0.01))
    t0 = time.perf_counter()
    calls["n"] = 0
    for iv in data:
        rf.fit_all(iv, with_interval=False)
    elapsed = time.perf_counter() - t0
    print(f"{args.units} units x {args.intervals:,} intervals: three models in {elapsed:.1f} s "
          f"({elapsed / args.units * 1e3:.1f} ms per unit); {calls['n']:,} log-likelihood "
          f"evaluations, {calls['n'] / elapsed:,.0f} per s "
          f"({calls['n'] * args.intervals / elapsed / 1e6:.0f} M interval-terms per s)")
    sub = data[:args.subset]
    t0 = time.perf_counter()
    for iv in sub:
        rf.fit_all(iv, with_interval=True)
    with_ci = (time.perf_counter() - t0) / len(sub)
    print(f"with the profile-likelihood tau interval: {with_ci * 1e3:.0f} ms per unit "
          f"(~{with_ci * args.units:.0f} s for {args.units} units; timed on {len(sub)})")
    duration = args.intervals / 40.0
    train = simulate.renewal_train(simulate.ExpRecoveryISI(40.0, 0.008, 0.001),
                                   duration_s=duration, rng=rng)
    t0 = time.perf_counter()
    rf.fit_exp_recovery_modulated(train, span_s=(0, duration), bandwidth_s=2.0,
                                  with_interval=False)
    print(f"slow-rate-modulated fit: {(time.perf_counter() - t0) * 1e3:.0f} ms per unit "
          f"({len(train):,} spikes)")


if __name__ == "__main__":
    main()
