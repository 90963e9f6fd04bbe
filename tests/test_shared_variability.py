"""Shared variability: pair correlations, factor analysis and gain variance against known truth
and against an outside implementation (scikit-learn, a test-only reference).
"""

import numpy as np
import pandas as pd
import pytest

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.settings import SlidingWindows
from spikevar.population.factor_analysis import (
    FactorFit,
    choose_n_factors,
    covariance,
    fit_factors,
    gaussian_loglik,
    summarise_fit,
)
from spikevar.population.gain import NOTE_FEW_WINDOWS, NOTE_NO_RANGE, gain_variance
from spikevar.population.noise_correlation import count_correlations, mean_pair_correlation
from spikevar.population.settings import SharedSettings
from spikevar.population.shared import shared_tables


def gain_counts(rng, mu, s2, n_trials):
    """Poisson counts with one trial gain G (gamma, mean 1, variance s2) shared by all units."""
    gain = rng.gamma(1 / s2, s2, size=n_trials)
    return rng.poisson(gain[:, None] * mu[None, :])


def r_sc_theory(mu_i, mu_j, s2):
    # Var N = mu + s2 mu^2 and Cov = s2 mu_i mu_j for a shared multiplicative gain (follows from
    # Goris, Movshon & Simoncelli 2014, Nat Neurosci 17:858; derived by the law of total
    # variance)
    return s2 * np.sqrt(mu_i * mu_j) / np.sqrt((1 + s2 * mu_i) * (1 + s2 * mu_j))


def test_r_sc_recovers_the_shared_gain_formula():
    rng = np.random.default_rng(1)
    mu = np.array([2.0, 5.0, 10.0, 20.0])
    s2 = 0.1
    counts = gain_counts(rng, mu, s2, 40_000)
    r, varies = count_correlations(counts)
    assert varies.all()
    for i in range(4):
        for j in range(i + 1, 4):
            # sampling sd of r near 0.3 with 40,000 trials is about 0.005
            assert r[i, j] == pytest.approx(r_sc_theory(mu[i], mu[j], s2), abs=0.02)
    # the matrix product equals numpy's own Pearson correlation
    np.testing.assert_allclose(r, np.corrcoef(counts.T), atol=1e-12)


def test_independent_poisson_units_have_mean_r_sc_near_zero():
    rng = np.random.default_rng(2)
    counts = rng.poisson(rng.uniform(1, 10, 40), size=(500, 40))
    r, _ = count_correlations(counts)
    # each r has sd ~ 1/sqrt(500) = 0.045; the mean of 780 pairs has sd ~ 0.002
    assert abs(mean_pair_correlation(r)) < 0.01


def test_a_constant_unit_gives_nan_not_a_number():
    counts = np.column_stack([np.arange(10) % 3, np.full(10, 4), np.arange(10) % 4])
    r, varies = count_correlations(counts)
    assert varies.tolist() == [True, False, True]
    assert np.isnan(r[1]).all() and np.isnan(r[:, 1]).all() and np.isfinite(r[0, 2])


def latent_counts(rng, loadings, private, n_trials):
    z = rng.standard_normal((n_trials, loadings.shape[1]))
    noise = rng.standard_normal((n_trials, len(private))) * np.sqrt(private)
    return z @ loadings.T + noise


def test_factor_fit_agrees_with_scikit_learn():
    sklearn = pytest.importorskip("sklearn.decomposition")
    rng = np.random.default_rng(3)
    loadings = rng.normal(0, 1.0, size=(25, 3))
    private = rng.uniform(0.5, 1.5, 25)
    x = latent_counts(rng, loadings, private, 800)
    x = x - x.mean(axis=0)
    ours = fit_factors(covariance(x), 3, tol=1e-10, max_iter=20000)
    ref = sklearn.FactorAnalysis(n_components=3, tol=1e-10, max_iter=20000).fit(x)
    ref_shared = ref.components_.T @ ref.components_
    np.testing.assert_allclose(ours.shared_cov, ref_shared, atol=2e-3 * np.abs(ref_shared).max())
    np.testing.assert_allclose(ours.private, ref.noise_variance_, rtol=5e-3)
    # scikit-learn's score is the mean log-likelihood per trial
    assert ours.loglik_per_trial == pytest.approx(ref.score(x), abs=1e-4)
    assert gaussian_loglik(covariance(x), ours.loadings, ours.private) == \
        pytest.approx(ours.loglik_per_trial)


def test_cross_validation_finds_the_true_number_of_factors():
    # Known truth: k = 3 latent factors of clearly separated strength, 30 units, 600 trials.
    # Williamson et al. 2016 (PLoS Comput Biol 12:e1005141) choose the dimensionality by
    # cross-validated likelihood in the same way.
    rng = np.random.default_rng(4)
    hits, runs = 0, 30
    for _ in range(runs):
        loadings = rng.normal(0, 0.8, size=(30, 3))
        private = rng.uniform(0.5, 1.5, 30)
        x = latent_counts(rng, loadings, private, 600)
        k, tried = choose_n_factors(x - x.mean(axis=0), max_factors=8, n_folds=5, rng=rng)
        hits += k == 3
        assert len(tried) >= 4
    assert hits / runs >= 0.9  # measured: 30 of 30


def test_cross_validation_finds_no_factor_in_independent_units():
    # Known truth: independent Poisson units share nothing, so k = 0 is the right choice (the
    # false-factor rate of the choice; measured 1 of 30 data sets of 200 trials x 30 units
    # chose one factor)
    rng = np.random.default_rng(9)
    chosen = []
    for _ in range(30):
        x = rng.poisson(4.0, size=(200, 30)).astype(float)
        k, _ = choose_n_factors(x - x.mean(axis=0), max_factors=8, n_folds=5, rng=rng)
        chosen.append(k)
    assert np.mean(np.array(chosen) == 0) >= 0.9


def test_percent_shared_and_dimensionality_match_known_loadings():
    rng = np.random.default_rng(5)
    p = 20
    # one factor with equal loadings: shared 1, private 1 -> 50% shared, loading similarity 1
    loadings = np.ones((p, 1))
    private = np.ones(p)
    x = latent_counts(rng, loadings, private, 20_000)
    x = x - x.mean(axis=0)
    fit = fit_factors(covariance(x), 1)
    summary = summarise_fit(fit)
    assert summary.percent_shared.mean() == pytest.approx(50, abs=1.5)
    assert summary.dim_shared == 1
    assert summary.loading_similarity == pytest.approx(1, abs=0.01)
    # the other limit: one unit carrying the factor gives 1 - p (1/p - 1/p^2) = 1/p
    single = np.zeros((p, 1))
    single[0] = 1
    assert summarise_fit(FactorFit(single, np.ones(p), 0.0, 0, True)).loading_similarity == \
        pytest.approx(1 / p, abs=1e-12)
    # two orthogonal factors of equal strength: 95% of shared variance needs both
    two = np.zeros((p, 2))
    two[:10, 0] = 1
    two[10:, 1] = 1
    assert summarise_fit(FactorFit(two, np.ones(p), 0.0, 0, True)).dim_shared == 2


def test_gain_variance_recovers_sigma2_across_windows():
    rng = np.random.default_rng(6)
    s2 = 0.2
    n_trials = 4000
    mu = np.linspace(1, 12, 15)  # one unit's mean count in 15 windows (rate range 12x)
    gain = rng.gamma(1 / s2, s2, size=n_trials)
    counts = rng.poisson(gain[:, None] * mu[None, :])  # trials x windows
    sigma2, n_windows, note = gain_variance(counts.mean(axis=0)[None],
                                            counts.var(axis=0, ddof=1)[None])
    assert note[0] == "" and n_windows[0] == 15
    assert sigma2[0] == pytest.approx(s2, rel=0.1)
    # Poisson counts (no gain) give sigma2 near 0
    plain = rng.poisson(np.tile(mu, (n_trials, 1)))
    s0, _, _ = gain_variance(plain.mean(axis=0)[None], plain.var(axis=0, ddof=1)[None])
    assert abs(s0[0]) < 0.01


def test_gain_variance_is_not_reported_when_not_identifiable():
    mean = np.array([[2.0, 2.1, 2.05, 1.9], [0.0, 0.0, 1.0, 2.0]])
    var = mean * 1.5
    sigma2, _, note = gain_variance(mean, var)
    assert np.isnan(sigma2).all()
    assert note.tolist() == [NOTE_NO_RANGE, NOTE_FEW_WINDOWS]


def session_with_gain(rng, *, n_units=12, n_trials=120, s2_response=0.0, s2_base=0.3):
    """Spike times of one session: per trial, a baseline gain before the event and another
    after it; rates 5-20 Hz before, 10-40 Hz in the response."""
    events = 2.0 + 2.0 * np.arange(n_trials)
    base = rng.uniform(5, 20, n_units)
    resp = 2 * base
    times, units = [], []
    for t in events:
        g_b = rng.gamma(1 / s2_base, s2_base) if s2_base else 1.0
        g_r = rng.gamma(1 / s2_response, s2_response) if s2_response else 1.0
        for u in range(n_units):
            for lo, hi, rate in ((t - 0.5, t, base[u] * g_b), (t, t + 0.5, resp[u] * g_r)):
                n = rng.poisson(rate * (hi - lo))
                times.append(rng.uniform(lo, hi, n))
                units.append(np.full(n, u))
    spikes = SpikeArrays.from_arrays(np.concatenate(units), np.concatenate(times))
    frame = pd.DataFrame({"time_s": events, "condition": "flash"})
    return spikes, frame, (0.0, events[-1] + 2.0)


def test_session_tables_show_the_drop_of_shared_variability_at_the_event():
    rng = np.random.default_rng(7)
    spikes, events, span = session_with_gain(rng)
    tables = shared_tables(
        spikes, events, alignments={"time": events["time_s"].to_numpy()},
        epochs={"baseline": (-0.4, 0.0), "response": (0.05, 0.45)},
        windows=SlidingWindows(start_s=-0.4, stop_s=0.45, width_s=0.1, step_s=0.05),
        settings=SharedSettings(max_factors=3), span=span, rng=rng)
    structure = tables["population_structure"].set_index("epoch")
    assert structure.loc["baseline", "n_factors"] >= 1
    assert structure.loc["response", "mean_r_sc"] < 0.05 < structure.loc["baseline", "mean_r_sc"]
    assert structure.loc["baseline", "percent_shared_mean"] > \
        structure.loc["response", "percent_shared_mean"] + 5
    n = spikes.n_units
    assert len(tables["pair_correlations"]) == 2 * n * (n - 1) // 2
    assert len(tables["shared_variance"]) == 2 * n
    course = tables["shared_timecourse"]
    before = course.loc[course["time_s"] < 0, "mean_r_sc"].mean()
    after = course.loc[course["time_s"] > 0.1, "mean_r_sc"].mean()
    assert before > after + 0.05
    assert (tables["gain_variance"]["alignment"] == "time").all()
