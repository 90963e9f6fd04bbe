"""Benchmark of the shared-variability statistics at the scale of a large session (prints).

400 units x 2,000 trials, 2 conditions x 2 epochs (count matrices simulated directly: Poisson
counts with a trial gain shared by the units, so there is structure to find), on one core:
- all pair correlations of the four matrices (matrix products);
- the factor analysis with cross-validated choice of the number of factors, four matrices;
- the time course: a fixed-k factor analysis and mean r_sc in each of 57 sliding windows of one
  condition and alignment (the default config's windows), as the session job does;
and the largest array the pair step holds, against a pairs x trials array.

Run: OPENBLAS_NUM_THREADS=1 .venv/bin/python bench/bench_shared.py [--units 400] [--trials 2000]
"""

import argparse
import os
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # one core, as in a workflow job

import numpy as np  # noqa: E402

from spikevar.population.factor_analysis import (  # noqa: E402
    choose_n_factors,
    covariance,
    fit_factors,
)
from spikevar.population.noise_correlation import count_correlations, upper_pairs  # noqa: E402


def counts(rng, n_units, n_trials, k=3):
    mu = rng.uniform(0.5, 10, n_units)
    loadings = rng.uniform(0, 0.3, (n_units, k))
    log_gain = rng.standard_normal((n_trials, k)) @ loadings.T * 0.5
    return rng.poisson(mu * np.exp(log_gain)).astype(float)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--units", type=int, default=400)
    parser.add_argument("--trials", type=int, default=2000)
    parser.add_argument("--windows", type=int, default=57)
    args = parser.parse_args()
    rng = np.random.default_rng(0)
    per_condition = args.trials // 2
    matrices = [counts(rng, args.units, per_condition) for _ in range(4)]

    t0 = time.perf_counter()
    for x in matrices:
        r, _ = count_correlations(x)
        a, b = upper_pairs(args.units)
        r[a, b].copy()
    t_pairs = time.perf_counter() - t0

    t0 = time.perf_counter()
    chosen = []
    for x in matrices:
        xc = x - x.mean(axis=0)
        k, _ = choose_n_factors(xc, max_factors=10, n_folds=5, rng=rng)
        fit_factors(covariance(xc), k)
        chosen.append(k)
    t_fa = time.perf_counter() - t0

    t0 = time.perf_counter()
    k = chosen[0]
    start = None
    for _ in range(args.windows):
        x = counts(rng, args.units, per_condition)
        xc = x - x.mean(axis=0)
        count_correlations(x)
        fit = fit_factors(covariance(xc), k, start=start)
        start = (fit.loadings, fit.private)
    t_course = time.perf_counter() - t0

    n_pairs = args.units * (args.units - 1) // 2
    print(f"shared variability, {args.units} units x {args.trials} trials "
          f"(2 conditions x 2 epochs), one core")
    print(f"  pair correlations, 4 matrices ({4 * n_pairs:,} pairs): {t_pairs:6.2f} s "
          f"(target < 5 s)")
    print(f"  factor analysis + 5-fold CV, 4 matrices (k chosen {chosen}): {t_fa:6.2f} s "
          f"(target < 60 s)")
    print(f"  time course, {args.windows} windows x 1 condition, k = {k}: {t_course:6.2f} s; "
          f"x 2 conditions = {2 * t_course:6.2f} s (target < 60 s)")
    print(f"  largest pair array: units x units = {args.units**2 * 8 / 1e6:.1f} MB; a pairs x "
          f"trials array would be {n_pairs * per_condition * 8 / 1e9:.1f} GB")


if __name__ == "__main__":
    main()
