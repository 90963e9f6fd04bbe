"""Build (or check) the null distribution of the time-rescaling KS statistic after fitting.

The KS distance of the rescaled intervals from U(0, 1) is smaller when the model's parameters
were fitted to the same intervals than when they are known (Lilliefors 1969, JASA 62:399, for
the exponential). spikevar's ``ks_pvalue`` therefore uses a null distribution of
``sqrt(n) * KS`` simulated once per model and number of intervals: trains are drawn from the
model, the same model fitted, and the statistic recorded. ``poisson`` and ``dead_time`` are
scale families (the null does not depend on the rate); for ``exp_recovery`` the null depends on
the shape, mainly through ``r_inf * tau`` (the share of intervals inside the recovery): with
``r_inf tau`` = 0.05 the 95% point of ``sqrt(n) KS`` is about 1.02, with 0.5 about 0.83. So
``exp_recovery`` is tabulated on a grid of ``r_inf tau`` and interpolated at the fitted value.

Writes ``src/spikevar/recovery/ks_null_table.json`` with ``--write``; without it prints the
table's quantiles. This is not a test (a few minutes on 2 cores).

Run: .venv/bin/python bench/calibrate_ks_null.py [--reps 2000] [--write]
"""

import argparse
import json
import os
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402

from spikevar.recovery.fit import Intervals, fit_all, ks_uniform, rescaled_intervals  # noqa: E402
from spikevar.synth import simulate  # noqa: E402

SIZES = (50, 100, 300, 1000, 3000, 10000)
#: grid of r_inf * tau for exp_recovery (simulated at r_inf = 20 Hz, no dead time)
SHAPES = (0.01, 0.03, 0.1, 0.3, 1.0, 3.0)
PROBS = np.concatenate([np.linspace(0.0, 0.98, 50), [0.985, 0.99, 0.995, 0.998, 0.999]])
TRUTH = {
    "poisson": [simulate.PoissonISI(20.0)],
    "dead_time": [simulate.DeadTimeISI(20.0, 0.002)],
    "exp_recovery": [simulate.ExpRecoveryISI(20.0, s / 20.0) for s in SHAPES],
}
OUT = Path(__file__).resolve().parents[1] / "src" / "spikevar" / "recovery" / "ks_null_table.json"


def statistics(job):
    model, shape, n, reps, seed = job
    rng = np.random.default_rng(seed)
    truth = TRUTH[model][shape]
    values = []
    for _ in range(reps):
        iv = Intervals.build(truth.draw(n, rng))
        fit = {f.model: f for f in fit_all(iv, with_interval=False)}[model]
        if np.isfinite(fit.log_likelihood):
            values.append(np.sqrt(iv.n) * ks_uniform(rescaled_intervals(fit, iv))[0])
    return model, shape, n, np.array(values)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--reps", type=int, default=1500)
    parser.add_argument("--write", action="store_true")
    args = parser.parse_args()
    jobs = [(m, s, n, args.reps, 100_000 * i + 1000 * s + j) for i, m in enumerate(TRUTH)
            for s in range(len(TRUTH[m])) for j, n in enumerate(SIZES)]
    t0 = time.perf_counter()
    table = {"probabilities": PROBS.round(6).tolist(), "sizes": list(SIZES), "reps": args.reps,
             "exp_recovery_shapes": list(SHAPES),
             "quantiles": {m: [[None] * len(SIZES) for _ in TRUTH[m]] for m in TRUTH}}
    with ProcessPoolExecutor(max_workers=2) as pool:
        for model, shape, n, values in pool.map(statistics, jobs):
            q = np.quantile(values, PROBS)
            table["quantiles"][model][shape][SIZES.index(n)] = q.round(5).tolist()
            label = f"r tau = {SHAPES[shape]:<5g}" if model == "exp_recovery" else " " * 13
            print(f"{model:13s} {label} n={n:6d}: sqrt(n) KS 50% {q[25]:.3f}  "
                  f"95% {np.quantile(values, 0.95):.3f}  99% {q[-4]:.3f}", flush=True)
    for model in ("poisson", "dead_time"):  # one shape each
        table["quantiles"][model] = table["quantiles"][model][0]
    print(f"{len(jobs) * args.reps:,} simulated fits in {time.perf_counter() - t0:.0f} s")
    if args.write:
        OUT.write_text(json.dumps(table, indent=1))
        print(f"wrote {OUT}")


if __name__ == "__main__":
    main()
