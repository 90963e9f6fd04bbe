"""Calibration of the recovery table's model choice and goodness of fit (simulation, known truth).

Every number here is a rate measured on simulated trains whose true model is known; the README
reports the same measurements.
"""

import numpy as np
import pytest

from spikevar.recovery.fit import (
    Intervals,
    fit_all_units,
    ks_uniform,
    nested_lr_pvalues,
    preferred_model,
    rescaled_intervals,
)
from spikevar.recovery.ks_null import fitted_ks_pvalue
from spikevar.synth import simulate


def fits_of(model, n, rng, reps):
    """``reps`` trains of ``n`` intervals, fitted together: (intervals, fits by model) each."""
    ivs = [Intervals.build(model.draw(n, rng)) for _ in range(reps)]
    return [(iv, {f.model: f for f in fits})
            for iv, fits in zip(ivs, fit_all_units(ivs, with_interval=False), strict=True)]


@pytest.mark.parametrize("truth,expected", [
    (simulate.PoissonISI(20.0), "poisson"),
    (simulate.DeadTimeISI(20.0, 0.002), "dead_time"),
    (simulate.ExpRecoveryISI(100.0, 0.005), "exp_recovery"),
])
def test_preferred_model_is_right_in_at_least_90_percent(truth, expected):
    # Before: lowest AIC, which chose dead_time for 39.5% of Poisson trains, because the dead
    # time is a threshold parameter whose likelihood gain is not chi-square (Smith 1985,
    # Biometrika 72:67). Now nested likelihood-ratio tests with exact / boundary nulls.
    rng = np.random.default_rng(21)
    chosen = [preferred_model(fits, iv.n) for iv, fits in
              fits_of(truth, 2000, rng, 200)]
    share = np.mean([c == expected for c in chosen])
    assert share >= 0.90, (expected, share)


def ks_pvalues(truth, model, n, reps, rng):
    out = []
    for iv, fits in fits_of(truth, n, rng, reps):
        fit = fits[model]
        ks, _ = ks_uniform(rescaled_intervals(fit, iv))
        out.append(fitted_ks_pvalue(ks, iv.n, model, fit.rate_hz * fit.tau_s))
    return np.array(out)


@pytest.mark.parametrize("truth,model", [
    (simulate.PoissonISI(20.0), "poisson"),
    (simulate.DeadTimeISI(30.0, 0.003), "dead_time"),
    (simulate.ExpRecoveryISI(20.0, 0.0025), "exp_recovery"),   # r tau = 0.05
    (simulate.ExpRecoveryISI(100.0, 0.005, 0.001), "exp_recovery"),  # r tau = 0.5
])
def test_ks_pvalue_has_its_size_under_the_true_model(truth, model):
    # Before: the known-parameter (Kolmogorov) p-value, of which 0 of 300 true-model fits fell
    # below 0.05 (fitted parameters shrink the KS distance: Lilliefors 1969, JASA 62:399).
    # Must hold: 3-8% below 0.05 (600 fits: the rate's standard error is about 0.9%).
    rng = np.random.default_rng(31)
    p = ks_pvalues(truth, model, 1000, 600, rng)
    size = np.mean(p < 0.05)
    assert 0.03 <= size <= 0.08, (model, size)


def test_ks_rejects_poisson_for_recovery_data():
    # power: a Poisson fit to exponential-recovery data (tau = 10 ms, 5,000 intervals)
    rng = np.random.default_rng(41)
    p = ks_pvalues(simulate.ExpRecoveryISI(20.0, 0.010), "poisson", 5000, 100, rng)
    assert np.mean(p < 0.05) >= 0.90


def test_nested_lr_pvalues_have_their_size():
    # dead_time vs poisson under Poisson truth: the exact Beta(1, n - 1) null of the threshold
    # gain (minimum's share of a sum of exponentials) gives size 5%; exp_recovery vs dead_time
    # under dead-time truth: the 1/2 chi2_0 + 1/2 chi2_1 boundary null (Self & Liang 1987,
    # JASA 82:605) is conservative here (size at most 5%). 300 trains of 2,000 intervals each.
    rng = np.random.default_rng(51)
    p_dt = [nested_lr_pvalues(f, iv.n)["dead_time"]
            for iv, f in fits_of(simulate.PoissonISI(20.0), 2000, rng, 300)]
    p_er = [nested_lr_pvalues(f, iv.n)["exp_recovery"]
            for iv, f in fits_of(simulate.DeadTimeISI(20.0, 0.002), 2000, rng, 300)]
    assert 0.025 <= np.mean(np.array(p_dt) < 0.05) <= 0.08
    assert np.mean(np.array(p_er) < 0.05) <= 0.06
    # the exact null also holds over the whole range: p-values are uniform under Poisson
    assert np.mean(np.array(p_dt) < 0.5) == pytest.approx(0.5, abs=0.08)
