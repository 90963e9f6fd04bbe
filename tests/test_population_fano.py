"""Population Fano factors against the doubly stochastic Poisson formula and simulated truth."""

import numpy as np
import pandas as pd
import pytest

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.fano_timecourse import fano_timecourse_table
from spikevar.metrics.settings import SlidingWindows
from spikevar.population.fano import population_fano_table
from spikevar.population.settings import MeanMatchSettings
from spikevar.synth import simulate


def timecourse_from_counts(counts, times, group="g", condition="c"):
    """counts: (units, trials, windows) -> a fano_timecourse-like table."""
    n_units, _, n_win = counts.shape
    rows = []
    for u in range(n_units):
        for w in range(n_win):
            c = counts[u, :, w]
            rows.append({"session": f"s{u % 3}", "unit": f"u{u}", "group": group,
                         "condition": condition, "time_s": times[w], "window_s": 0.1,
                         "mean_count": c.mean(), "var_count": c.var(ddof=1)})
    return pd.DataFrame(rows)


def gain_counts(rng, means, n_trials, sigma2):
    """Poisson counts with a gamma gain of variance sigma2 per trial (mean 1)."""
    shape = 1 / sigma2
    gain = rng.gamma(shape, 1 / shape, size=(1, n_trials, 1))
    return rng.poisson(means[:, None, :] * gain)


def test_regression_fano_matches_modulated_poisson_formula():
    # Modulated Poisson with gain variance s2: FF = 1 + s2 * mean (Goris, Movshon & Simoncelli
    # 2014 Nat Neurosci 17:858; formula recalled from memory, checked by this simulation).
    rng = np.random.default_rng(0)
    mu, s2 = 6.0, 0.15
    means = np.full((80, 3), mu)
    counts = np.stack([gain_counts(rng, means[u:u + 1], 400, s2)[0] for u in range(80)])
    table = population_fano_table(timecourse_from_counts(counts, [0.0, 0.1, 0.2]),
                                  settings=MeanMatchSettings(n_boot=50), seed=1)
    assert table["fano_regression"].mean() == pytest.approx(1 + s2 * mu, rel=0.06)
    assert (table["regression_ci_lo"] < 1 + s2 * mu).all()
    assert (table["regression_ci_hi"] > 1 + s2 * mu).all()


def test_mean_matching_removes_spurious_change_with_constant_gain_variance():
    # Units keep the same gain variance (var = mu + s2 mu^2) while half of them triple their
    # mean in the last window: the raw regression slope rises with the means, the mean-matched
    # value does not (the purpose of mean matching, Churchland et al. 2010 Nat Neurosci 13:369).
    rng = np.random.default_rng(2)
    n_units, s2 = 200, 0.2
    base = rng.uniform(1.0, 8.0, n_units)
    means = np.tile(base[:, None], (1, 4))
    means[: n_units // 2, 3] *= 3.0
    counts = np.stack([gain_counts(rng, means[u:u + 1], 300, s2)[0] for u in range(n_units)])
    table = population_fano_table(timecourse_from_counts(counts, [0.0, 0.1, 0.2, 0.3]),
                                  settings=MeanMatchSettings(n_boot=20, n_bins=8), seed=3)
    raw_change = table["fano_regression"].iloc[3] - table["fano_regression"].iloc[:3].mean()
    mm_change = table["fano_mean_matched"].iloc[3] - table["fano_mean_matched"].iloc[:3].mean()
    assert raw_change > 0.8
    assert abs(mm_change) < 0.35 * raw_change


def test_mean_matched_fano_shows_drop_at_event_onset():
    # Simulator: spontaneous gain variability (CV 0.6) and much less variable driven responses;
    # the Fano factor must fall after the event while the mean rises (Churchland et al. 2010).
    # Rates spread widely so that matching keeps a real share of the units (with 30 units of
    # alike rates it kept one, and an earlier version of this test passed on that one unit).
    rng = np.random.default_rng(4)
    events = np.arange(2.0, 2.0 + 2.5 * 160, 2.5)
    units, times = simulate.event_locked_population(
        n_units=120, event_times_s=events, baseline_hz=lambda g: g.uniform(2, 40),
        amplitude_hz=lambda g: g.uniform(5, 25), gain_cv=0.6, driven_gain_cv=0.05, rng=rng)
    spikes = SpikeArrays.from_arrays(units, times)
    tc = fano_timecourse_table(spikes, pd.DataFrame({"time_s": events, "condition": "flash"}),
                               windows=SlidingWindows(-0.4, 0.4, 0.2, 0.1),
                               recording_s=(0.0, times.max()))
    # six animals of twenty units each: intervals resample animals
    animal = "m" + (tc["unit"].str.extract(r"(\d+)$")[0].astype(int) % 6).astype(str)
    tc = tc.assign(session=animal + "-1", subject=animal, group="g")
    table = population_fano_table(tc, settings=MeanMatchSettings(n_boot=50, n_bins=6),
                                  seed=5).set_index("time_s")
    before, after = table.loc[-0.3], table.loc[0.2]
    assert after["mean_count"] > 1.4 * before["mean_count"]
    assert (table["n_units_matched"] >= 40).all()
    # the kept units' mean count stays put while the mean of all units rises
    assert abs(after["mean_count_matched"] / before["mean_count_matched"] - 1) < 0.1
    assert after["fano_mean_matched"] < before["fano_mean_matched"] - 0.3
    assert after["ci_hi"] < before["ci_lo"] + 0.3


def test_too_few_units_gives_nan_with_reason():
    rng = np.random.default_rng(6)
    counts = rng.poisson(3.0, size=(3, 20, 2))
    table = population_fano_table(timecourse_from_counts(counts, [0.0, 0.1]),
                                  settings=MeanMatchSettings(min_units=5, n_boot=10), seed=0)
    assert table["fano_regression"].isna().all()
    assert (table["population_reason"] == "fewer than 5 units").all()
    empty = population_fano_table(timecourse_from_counts(counts, [0.0, 0.1]).iloc[:0],
                                  settings=MeanMatchSettings(), seed=0)
    assert len(empty) == 0 and "fano_mean_matched" in empty.columns


def test_mean_match_mask_keeps_the_common_distribution():
    from spikevar.population.fano import mean_match_mask

    rng = np.random.default_rng(7)
    bins = rng.integers(-1, 4, size=(60, 5))
    hist = np.stack([np.bincount(bins[:, w][bins[:, w] >= 0], minlength=4) for w in range(5)])
    common = hist.min(axis=0)
    keep = mean_match_mask(bins, hist, common, rng)
    for w in range(5):
        kept = np.bincount(bins[keep[:, w], w], minlength=4)
        np.testing.assert_array_equal(kept, common)
    assert not keep[bins < 0].any()


def test_bucket_selection_keeps_the_units_a_full_sort_keeps():
    """The threshold found by counting units in slices of [0, 1) is the common[bin]-th
    smallest key of each cell, as sorting every cell's keys gives: cells larger and smaller
    than the slice count, cells that keep all, none or one unit, unusable units."""
    from spikevar.population.fano import SELECT_BUCKETS, mean_match_mask

    rng = np.random.default_rng(11)
    for case in range(60):
        n_units = int(rng.integers(0, 8 * SELECT_BUCKETS)) if case % 4 else int(rng.integers(3))
        n_win, n_bins = int(rng.integers(1, 6)), int(rng.integers(1, 8))
        bins = rng.integers(-1, n_bins, size=(n_units, n_win))
        if case % 3 == 0:  # one crowded bin: many units share each threshold slice
            bins = np.where(rng.random(bins.shape) < 0.8, 0, bins)
        hist = np.zeros((n_win, n_bins), dtype=np.int64)
        for w in range(n_win):
            hist[w] = np.bincount(bins[:, w][bins[:, w] >= 0], minlength=n_bins)
        common = (hist.min(axis=0) * rng.uniform(0, 1.3, n_bins)).astype(int)
        common = np.minimum(common, hist.min(axis=0))
        seed = int(rng.integers(2**31))
        keep = mean_match_mask(bins, hist, common, np.random.default_rng(seed))
        u = np.random.default_rng(seed).random((n_units, n_win))  # the uniforms it drew
        expected = np.zeros_like(keep)
        for w in range(n_win):
            for b in range(n_bins):
                members = np.flatnonzero(bins[:, w] == b)
                chosen = members[np.argsort(b + u[members, w], kind="stable")][:common[b]]
                expected[chosen, w] = True
        np.testing.assert_array_equal(keep, expected, err_msg=f"case {case}")


def test_matching_reports_how_many_units_it_kept_and_their_mean_count():
    """Two rate levels that swap between windows: the common distribution keeps only the units
    whose rate is alike in both windows; with too few kept, no mean-matched value is given."""
    rng = np.random.default_rng(8)
    means = np.concatenate([np.full((20, 1), 2.0), np.full((20, 1), 8.0)])
    means = np.hstack([means, means[::-1]])  # window 2: the same two levels, units swapped
    counts = rng.poisson(means[:, None, :], size=(40, 30, 2))
    tc = timecourse_from_counts(counts, [0.0, 0.1])
    table = population_fano_table(tc, settings=MeanMatchSettings(n_boot=10, n_bins=10), seed=0)
    # every unit's mean is near 2 or 8 in both windows, so both histograms are alike and most
    # units are kept; the kept units' mean count is that of the two levels
    assert (table["n_units_matched"] >= 30).all()
    np.testing.assert_allclose(table["mean_count_matched"], 5.0, atol=0.8)
    # now every unit changes level: window 1 holds only low, window 2 only high rates
    low_high = np.hstack([np.full((40, 1), 2.0), np.full((40, 1), 8.0)])
    counts = rng.poisson(low_high[:, None, :], size=(40, 30, 2))
    table = population_fano_table(timecourse_from_counts(counts, [0.0, 0.1]),
                                  settings=MeanMatchSettings(n_boot=10, min_units=5), seed=0)
    assert (table["n_units_matched"] < 5).all()
    assert table["fano_mean_matched"].isna().all() and table["mean_count_matched"].isna().all()
    assert table["fano_regression"].notna().all()
    assert table["population_reason"].str.startswith(
        ("mean matching kept fewer than 5", "no common")).all()


def test_resamples_over_two_workers_give_the_same_table_to_the_bit():
    # each worker advances its copy of the random stream to where the one-process loop would
    # stand, so the intervals do not depend on the number of workers
    rng = np.random.default_rng(8)
    counts = rng.poisson(rng.uniform(1.0, 6.0, size=(60, 1, 1)), size=(60, 25, 3))
    tc = timecourse_from_counts(counts, [0.0, 0.1, 0.2])
    tc["subject"] = "m" + (tc["unit"].str[1:].astype(int) % 5).astype(str)
    settings = MeanMatchSettings(n_boot=13, n_bins=5, n_repeats=3)
    one = population_fano_table(tc, settings=settings, seed=4, workers=1)
    two = population_fano_table(tc, settings=settings, seed=4, workers=2)
    assert one["ci_lo"].notna().all()
    pd.testing.assert_frame_equal(one, two)


def test_resamples_leave_out_only_what_they_do_not_report():
    """estimate(details=False), as the subject resamples call it, gives the same slopes from
    the same random numbers; the kept units' mean count equals np.nanmean of the kept means to
    the bit, with NaN where a window keeps no unit."""
    from spikevar.population.fano import Series, bin_edges, estimate, mean_of_kept

    rng = np.random.default_rng(11)
    mean = rng.gamma(2.0, 1.0, size=(300, 6))
    mean[rng.random(mean.shape) < 0.05] = np.nan
    var = mean * rng.uniform(0.5, 2.0, size=mean.shape)
    series = [Series("g", c, "a", mean[i::2], var[i::2], np.full_like(mean[i::2], 20.0))
              for i, c in enumerate(["x", "y"])]
    edges = bin_edges([s.mean for s in series], 10)
    full = estimate(series, [0, 0], edges, n_repeats=5, rng=np.random.default_rng(3))
    lean = estimate(series, [0, 0], edges, n_repeats=5, rng=np.random.default_rng(3),
                    details=False)
    for f, lean_one in zip(full, lean, strict=True):
        assert set(lean_one) == {"regression", "matched"}
        np.testing.assert_array_equal(f["matched"], lean_one["matched"])
        np.testing.assert_array_equal(f["regression"], lean_one["regression"])
    keep = rng.random(mean.shape) < 0.4
    keep &= np.isfinite(mean)
    keep[:, 2] = False  # a window with no kept unit
    with np.errstate(invalid="ignore"), pytest.warns(RuntimeWarning):
        expected = np.nanmean(np.where(keep, mean, np.nan), axis=0)
    np.testing.assert_array_equal(mean_of_kept(mean, keep), expected)
    assert np.isnan(mean_of_kept(mean, keep)[2])
