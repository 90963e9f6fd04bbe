"""Coverage of the population Fano intervals and fidelity of mean matching (known truth).

Simulated populations: subjects > sessions > units, Poisson counts with a per-trial gain
shared by every unit of a session (gamma, mean 1, variance s2; s2 = 0 is plain Poisson). A
unit of mean mu then has Fano factor 1 + s2 mu (doubly stochastic Poisson; Goris, Movshon &
Simoncelli 2014, Nat Neurosci 17:858, recalled from memory), so the population value of the
weighted regression (the trial-weighted mean of var/mean) is 1 + s2 E[mu].
"""

import numpy as np
import pandas as pd
import pytest

from spikevar.population.fano import population_fano_table
from spikevar.population.settings import MeanMatchSettings


def population(rng, s2, *, group="g", mu_range=(2.0, 8.0), n_subj=6, n_sess=2, n_units=12,
               n_trials=30, n_win=2):
    frames = []
    for s in range(n_subj):
        for k in range(n_sess):
            gain = rng.gamma(1 / s2, s2, size=(n_trials, n_win)) if s2 > 0 else \
                np.ones((n_trials, n_win))
            mu = rng.uniform(*mu_range, size=n_units)
            counts = rng.poisson(mu[:, None, None] * gain[None])  # units x trials x windows
            frames.append(pd.DataFrame({
                "subject": f"{group}{s}", "session": f"{group}{s}-{k}", "group": group,
                "unit": np.repeat([f"u{u}" for u in range(n_units)], n_win),
                "condition": "c", "time_s": np.tile(0.1 * np.arange(n_win), n_units),
                "window_s": 0.1, "n_trials": n_trials,
                "mean_count": counts.mean(axis=1).ravel(),
                "var_count": counts.var(axis=1, ddof=1).ravel()}))
    return pd.concat(frames, ignore_index=True)


@pytest.mark.parametrize("s2", [0.0, 0.1])
def test_interval_coverage_with_and_without_a_session_shared_gain(s2):
    # Before: units resampled as independent and one matching per resample: the mean-matched
    # interval covered a Poisson population's truth 200/200 times and the regression interval
    # covered 90% with a session-shared gain. Must hold: 93-97% (bench/calibrate_population.py
    # runs 400 populations); here 100 populations, so the bound is widened to 88-99%.
    truth = 1 + s2 * 5.0
    rng = np.random.default_rng(int(s2 * 10) + 1)
    covered = np.zeros(2)
    n = 100
    for i in range(n):
        table = population_fano_table(population(rng, s2),
                                      settings=MeanMatchSettings(n_boot=120, n_repeats=4),
                                      seed=i)
        row = table.iloc[0]
        covered += [row["regression_ci_lo"] <= truth <= row["regression_ci_hi"],
                    row["ci_lo"] <= truth <= row["ci_hi"]]
    coverage = covered / n
    assert ((coverage >= 0.88) & (coverage <= 0.99)).all(), coverage


def test_matching_across_the_cohort_compares_groups_on_one_distribution():
    # Two groups with the same gain variance but different rate spreads. Matched within each
    # group (match_across = series) their values differ (1.22 vs 1.93 in the issue's
    # simulation); matched across the cohort they agree within their intervals.
    rng = np.random.default_rng(5)
    tc = pd.concat([population(rng, 0.15, group="A", mu_range=(1.0, 4.0), n_units=20),
                    population(rng, 0.15, group="B", mu_range=(1.0, 12.0), n_units=20)])
    tables = {scope: population_fano_table(
        tc, settings=MeanMatchSettings(n_boot=100, n_repeats=5, match_across=scope), seed=2)
        .groupby("group").first() for scope in ("cohort", "series")}
    a, b = tables["cohort"].loc["A"], tables["cohort"].loc["B"]
    assert a["ci_lo"] <= b["fano_mean_matched"] <= a["ci_hi"]
    assert b["ci_lo"] <= a["fano_mean_matched"] <= b["ci_hi"]
    own = tables["series"]
    assert own.loc["B", "fano_mean_matched"] - own.loc["A", "fano_mean_matched"] > 0.2
    # the raw (weighted) regression sees the different spreads in every case
    assert b["fano_regression"] - a["fano_regression"] > 0.3


def test_weighted_and_unweighted_regression_differ_where_rates_differ():
    rng = np.random.default_rng(9)
    row = population_fano_table(population(rng, 0.2, mu_range=(1.0, 15.0)),
                                settings=MeanMatchSettings(n_boot=20), seed=1).iloc[0]
    # OLS through the origin is pulled to the high-rate units (FF = 1 + s2 mu): its population
    # value is 1 + s2 E[mu^3] / E[mu^2] = 3.25 for mu ~ U(1, 15), the weighted one
    # 1 + s2 E[mu] = 2.6
    assert row["fano_regression"] == pytest.approx(2.6, rel=0.08)
    assert row["fano_regression_unweighted"] == pytest.approx(3.25, rel=0.08)
