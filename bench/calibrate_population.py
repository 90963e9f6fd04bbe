"""Coverage of the population Fano intervals on simulated populations (not a test; minutes).

Prints, for plain Poisson populations and for populations with a per-trial gain shared by the
units of a session, the share of 95% intervals (regression and mean-matched) that contain the
population value 1 + s2 E[mu], over many simulated populations (6 subjects x 2 sessions x 12
units, 30 trials, two windows). The suite runs a smaller version
(tests/test_population_calibration.py).

Run: .venv/bin/python bench/calibrate_population.py [--populations 400]
"""

import argparse
import os
import sys
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

import numpy as np  # noqa: E402
from test_population_calibration import population  # noqa: E402

from spikevar.population.fano import population_fano_table  # noqa: E402
from spikevar.population.settings import MeanMatchSettings  # noqa: E402


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--populations", type=int, default=400)
    args = parser.parse_args()
    n = args.populations
    for s2 in (0.0, 0.1):
        truth = 1 + s2 * 5.0
        rng = np.random.default_rng(100 + int(10 * s2))
        covered, estimates = np.zeros(2), []
        t0 = time.perf_counter()
        for i in range(n):
            row = population_fano_table(population(rng, s2), settings=MeanMatchSettings(),
                                        seed=i).iloc[0]
            covered += [row["regression_ci_lo"] <= truth <= row["regression_ci_hi"],
                        row["ci_lo"] <= truth <= row["ci_hi"]]
            estimates.append((row["fano_regression"], row["fano_mean_matched"]))
        se = np.sqrt(0.95 * 0.05 / n)
        mean = np.mean(estimates, axis=0)
        print(f"gain variance {s2}: truth {truth:.3f}, mean estimates {mean.round(4)}; "
              f"coverage regression {covered[0] / n:.3f}, mean-matched {covered[1] / n:.3f} "
              f"(+- {2 * se:.3f}, {n} populations, {time.perf_counter() - t0:.0f} s)")


if __name__ == "__main__":
    main()
