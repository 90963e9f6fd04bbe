"""Stand-in points for the recovery likelihood's sums: exact moments, the same fits."""

import numpy as np
import pytest

from spikevar.recovery import fit as rf
from spikevar.recovery.interval_quadrature import compressed_sums
from spikevar.synth import simulate


def _intervals(rng, n=20_000, rate=20.0, tau=0.006, dead=0.001):
    return np.sort(simulate.ExpRecoveryISI(rate, tau, dead).draw(n, rng))


def test_points_keep_the_moments_and_the_short_intervals():
    # Gauss rules with 3 nodes integrate polynomials up to degree 5 exactly (Golub & Welsch
    # 1969, Math Comput 23:221); per bin, so over the whole sample too
    rng = np.random.default_rng(1)
    isi = _intervals(rng)
    w = rng.uniform(0.5, 1.5, len(isi))
    (dx, dw), (lx, lw), _ = compressed_sums(isi, w)
    assert len(dx) < len(isi) / 10
    assert np.all(np.diff(dx) >= 0) and np.all(np.diff(lx) >= 0)
    assert dw.min() >= 0 and lw.min() >= 0
    scale = isi.mean()
    for k in range(6):
        np.testing.assert_allclose((dw * (dx / scale) ** k).sum(),
                                   (w * (isi / scale) ** k).sum(), rtol=1e-11)
        np.testing.assert_allclose((lw * (lx / scale) ** k).sum(),
                                   ((isi / scale) ** k).sum(), rtol=1e-11)
    head = isi[isi < 2 * isi[0]]
    np.testing.assert_array_equal(dx[:len(head)], head)  # kept as they are


def test_unweighted_intervals_share_one_set_of_points():
    isi = _intervals(np.random.default_rng(2), n=5_000)
    d_set, l_set, _ = compressed_sums(isi, np.ones_like(isi))
    assert d_set[0] is l_set[0]


def test_reused_layout_and_plain_points_give_the_points_of_a_fresh_build():
    # the slow-rate fit's passes reuse the weight-free work of an earlier build
    rng = np.random.default_rng(5)
    isi = _intervals(rng, n=8_000)
    first = rf.Intervals.build(isi)
    w = rng.uniform(0.5, 1.5, len(isi))
    fresh = rf.Intervals.build(isi, weights=w)
    reused = rf.Intervals.build(isi, weights=w, same_intervals=first)
    for name in ("sum_x", "sum_w", "log_x", "log_w"):
        np.testing.assert_array_equal(getattr(reused, name), getattr(fresh, name))


@pytest.mark.parametrize("quantised", [False, True])
def test_fits_on_the_points_equal_fits_on_every_interval(quantised):
    """Simulation with known truth: varied rates, time constants and dead times, and spike
    times on a 30 kHz sample grid (repeated interval values); tau, dead time, rate and
    log-likelihood agree with the fit over every interval."""
    rng = np.random.default_rng(3)
    for _ in range(8):
        isi = _intervals(rng, n=int(rng.integers(500, 20_000)), rate=rng.uniform(5, 60),
                         tau=rng.uniform(0.001, 0.03), dead=rng.uniform(0.0003, 0.002))
        if quantised:
            isi = np.round(isi * 30_000) / 30_000
        full = rf.fit_exp_recovery(rf.Intervals.build(isi, censored=0.05, compress=False))
        fast = rf.fit_exp_recovery(rf.Intervals.build(isi, censored=0.05))
        assert fast.converged == full.converged and fast.tau_at_bound == full.tau_at_bound
        np.testing.assert_allclose(fast.tau_s, full.tau_s, rtol=1e-6)
        np.testing.assert_allclose(fast.dead_time_s, full.dead_time_s, rtol=1e-6, atol=1e-9)
        np.testing.assert_allclose(fast.rate_hz, full.rate_hz, rtol=1e-7)
        np.testing.assert_allclose(fast.log_likelihood, full.log_likelihood, rtol=1e-9)
        # the interval ends are located to 1e-6 in log tau
        np.testing.assert_allclose(fast.tau_ci, full.tau_ci, rtol=1e-5)


def test_weighted_fit_on_the_points_equals_the_full_fit():
    rng = np.random.default_rng(4)
    isi = rng.permutation(_intervals(rng, n=10_000))
    w = np.exp(0.3 * np.sin(np.arange(len(isi)) / 500.0))
    full = rf.fit_exp_recovery(rf.Intervals.build(isi, weights=w, censored=0.1,
                                                  compress=False), with_interval=False)
    fast = rf.fit_exp_recovery(rf.Intervals.build(isi, weights=w, censored=0.1),
                               with_interval=False)
    np.testing.assert_allclose(fast.tau_s, full.tau_s, rtol=1e-6)
    np.testing.assert_allclose(fast.log_likelihood, full.log_likelihood, rtol=1e-9)
