"""Count Fano factors against renewal theory, the chi-square null and a loop reference."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from reference_metrics import count_fano_loop
from scipy import special

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.count_fano import count_fano_table, poisson_fano_bounds
from spikevar.synth import simulate


def many_trains(model, n_units, duration, seed):
    rng = np.random.default_rng(seed)
    units, times = [], []
    for i in range(n_units):
        t = simulate.renewal_train(model, duration_s=duration, rng=rng)
        units.append(np.full(len(t), f"u{i:03d}"))
        times.append(t)
    return SpikeArrays.from_arrays(np.concatenate(units), np.concatenate(times))


def pooled_fano(table, window):
    rows = table[table["window_s"] == window]
    return float(np.mean(rows["fano"]))


def test_chi_square_bounds_published_values():
    # Eden & Kramer 2010 J Neurosci Methods 190:149: (N-1) FF ~ chi2(N-1) for Poisson counts.
    # 95% bounds (computed from scipy.stats.chi2, listed in the design's check values):
    expected = {10: (0.3000, 2.1136), 20: (0.4688, 1.7291), 50: (0.6440, 1.4331),
                100: (0.7410, 1.2972)}
    for n, (lo, hi) in expected.items():
        got_lo, got_hi = poisson_fano_bounds(n)
        assert got_lo == pytest.approx(lo, abs=1e-4)
        assert got_hi == pytest.approx(hi, abs=1e-4)
    assert np.isnan(poisson_fano_bounds(1)[0])


def test_poisson_fano_is_one_at_every_window():
    spikes = many_trains(simulate.PoissonISI(15.0), 20, 400.0, 1)
    windows = [0.01, 0.05, 0.2, 1.0, 2.0]
    table = count_fano_table(spikes, windows_s=windows, start_s=0.0, stop_s=400.0)
    for w in windows:
        # Poisson counts: FF = 1 for every window (Cox 1962)
        assert pooled_fano(table, w) == pytest.approx(1.0, abs=0.05)
    # about 95% of units fall inside the chi-square band (Eden & Kramer 2010)
    inside = (table["fano"] >= table["fano_lo"]) & (table["fano"] <= table["fano_hi"])
    assert inside.mean() > 0.85


@pytest.mark.parametrize("window,expected", [(0.01, 0.8442), (0.05, 0.6227), (0.2, 0.5312),
                                             (1.0, 0.5062)])
def test_gamma2_exact_finite_window_fano(window, expected):
    # Stationary gamma renewal, shape 2, rate r: FF(T) = 1/2 + (1 - exp(-4 r T)) / (8 r T)
    # (Cox 1962 renewal theory; check values for r = 20 Hz from the design's list).
    r = 20.0
    assert 0.5 + (1 - np.exp(-4 * r * window)) / (8 * r * window) == pytest.approx(expected,
                                                                                   abs=1e-4)
    spikes = many_trains(simulate.GammaISI(r, 2.0), 40, 500.0, 2)
    table = count_fano_table(spikes, windows_s=[window], start_s=0.0, stop_s=500.0)
    assert pooled_fano(table, window) == pytest.approx(expected, abs=0.03)


def _ppd_var(T, r, d):
    # Exact count variance of a stationary Poisson process with dead time (Deger et al. 2012
    # J Comput Neurosci 32:443; Rajdl & Lansky 2014 Math Biosci Eng 11:105).
    lam = r / (1 - r * d)
    total = 0.0
    for k in range(1, int(np.floor(T / d)) + 1):
        x = T - k * d
        total += x * special.gammainc(k, lam * x) - k / lam * special.gammainc(k + 1, lam * x)
    return r * T - (r * T) ** 2 + 2 * r * total


def test_dead_time_fano_matches_exact_and_long_window_limit():
    r, d = 100.0 / (1 + 100.0 * 0.002), 0.002  # free rate 100 Hz, d = 2 ms
    # published table (lam = 100 Hz, d = 2 ms): T = 1, 2, 5, 1000 ms -> 0.9167, 0.8333, 0.7472,
    # 0.6947 (Deger et al. 2012)
    for T, ff in ((0.001, 0.9167), (0.002, 0.8333), (0.005, 0.7472), (1.0, 0.6947)):
        assert _ppd_var(T, r, d) / (r * T) == pytest.approx(ff, abs=2e-4)
    spikes = many_trains(simulate.DeadTimeISI(r, d), 30, 400.0, 3)
    table = count_fano_table(spikes, windows_s=[0.005, 1.0], start_s=0.0, stop_s=400.0)
    assert pooled_fano(table, 0.005) == pytest.approx(0.7472, abs=0.02)
    # long-window limit (1 - d r)^2 = CV^2 (Cox 1962)
    assert pooled_fano(table, 1.0) == pytest.approx((1 - d * r) ** 2, abs=0.04)


def test_window_longer_than_recording_and_empty_unit():
    spikes = SpikeArrays.from_arrays(["a"] * 3, [0.1, 0.2, 0.3])
    table = count_fano_table(spikes, windows_s=[0.5, 2.0], start_s=0.0, stop_s=1.0)
    long = table[table["window_s"] == 2.0].iloc[0]
    assert long["n_windows"] == 0 and np.isnan(long["fano"])
    assert long["fano_reason"] == "fewer than 2 windows fit in the recording"
    # all spikes in a region outside the counted windows -> zero mean, NaN Fano, not 0
    spikes = SpikeArrays.from_arrays(["a", "b"], [0.1, 5.0])
    table = count_fano_table(spikes, windows_s=[0.5], start_s=0.0, stop_s=1.0).set_index("unit")
    assert table.loc["b", "mean_count"] == 0 and np.isnan(table.loc["b", "fano"])
    assert table.loc["b", "fano_reason"] == "no spikes in any window"


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["a", "b"]), st.integers(0, 100)), max_size=50),
       st.sampled_from([0.05, 0.1, 0.25, 0.3]), st.integers(0, 3))
def test_vectorised_agrees_with_loop_including_edges(rows, window, start_tenths):
    # times on a 10 ms grid put many spikes exactly on window edges
    units = np.array([u for u, _ in rows] or ["a"], dtype=str)
    times = np.array([t / 100 for _, t in rows] or [0.5])
    spikes = SpikeArrays.from_arrays(units, times)
    start, stop = start_tenths / 10, 1.0
    table = count_fano_table(spikes, windows_s=[window], start_s=start, stop_s=stop)
    for k, unit in enumerate(spikes.labels):
        n, mean, var = count_fano_loop(spikes.times[spikes.codes == k], start=start, stop=stop,
                                       window=window)
        row = table[table["unit"] == unit].iloc[0]
        assert row["n_windows"] == n
        assert row["mean_count"] == pytest.approx(mean, abs=1e-12)
        if n > 1:
            assert row["var_count"] == pytest.approx(var, abs=1e-9)
