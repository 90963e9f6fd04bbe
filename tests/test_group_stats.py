"""Hierarchical bootstrap: coverage under animal effects, and group summary edge cases."""

import numpy as np
import pandas as pd
import pytest

from spikevar.base.resampling import hierarchical_resample_indices
from spikevar.cohort.bootstrap import replicate_stats
from spikevar.cohort.group_stats import group_summary
from spikevar.cohort.permutation import permutation_test_mean


def nested(rng, group, n_subj=4, n_sess=2, n_units=15, animal_sd=1.0, unit_sd=0.5):
    rows = []
    for s in range(n_subj):
        animal = rng.normal(0, animal_sd)
        for k in range(n_sess):
            session = rng.normal(0, 0.2)
            for u in range(n_units):
                rows.append({"group": group, "subject": f"{group}{s}",
                             "session": f"{group}{s}-{k}", "unit": str(u),
                             "value": animal + session + rng.normal(0, unit_sd)})
    return pd.DataFrame(rows)


def diff_interval(a, b, *, levels, rng, n_boot=400):
    out = []
    for part in (a, b):
        rows, rep = hierarchical_resample_indices(part["subject"], part["session"],
                                                  n_boot=n_boot, rng=rng, levels=levels)
        out.append(replicate_stats(part["value"].to_numpy(), rows, rep, n_boot)[0])
    d = out[0] - out[1]
    return np.percentile(d, [2.5, 97.5])


def test_hierarchical_interval_covers_zero_where_naive_does_not():
    # No group difference, strong animal effects: the hierarchical bootstrap interval of the
    # difference covers 0 in about 95% of repeats, the naive unit-level one far less often
    # (the failure described by Saravanan, Berman & Sober 2020, NBDT 3(5)).
    rng = np.random.default_rng(0)
    hier, naive, repeats = 0, 0, 120
    for _ in range(repeats):
        a, b = nested(rng, "A"), nested(rng, "B")
        lo, hi = diff_interval(a, b, levels=("subject", "session", "unit"), rng=rng)
        hier += lo <= 0 <= hi
        lo, hi = diff_interval(a, b, levels=("unit",), rng=rng)
        naive += lo <= 0 <= hi
    assert hier / repeats >= 0.86
    assert naive / repeats <= 0.6


def test_resampling_keeps_the_hierarchy():
    rng = np.random.default_rng(1)
    data = nested(rng, "A", n_subj=3, n_sess=2, n_units=4)
    rows, rep = hierarchical_resample_indices(data["subject"], data["session"], n_boot=50,
                                              rng=rng)
    picked = data.iloc[rows].assign(rep=rep)
    # every replicate has 3 subject draws x 2 session draws x 4 unit draws
    assert (picked.groupby("rep").size() == 24).all()
    # units of a drawn session all come from that session
    assert picked.groupby(["rep"])["session"].nunique().max() <= 6


def test_replicate_median_matches_numpy():
    rng = np.random.default_rng(2)
    values = rng.normal(size=50)
    rows = rng.integers(0, 50, size=(7, 9))
    rep = np.repeat(np.arange(7), 9)
    mean, median = replicate_stats(values, rows.ravel(), rep, 7)
    np.testing.assert_allclose(mean, values[rows].mean(axis=1))
    np.testing.assert_allclose(median, np.median(values[rows], axis=1))


def metric_frame(a, b):
    """Two groups' nested values as every summarised metric."""
    frame = pd.concat([a, b]).rename(columns={"value": "rate_hz"})
    for metric in ("isi_cv", "isi_cv2", "isi_lv", "isi_lvr", "fano_long", "recovery_tau_s",
                   "dead_time_s"):
        frame[metric] = frame["rate_hz"]
    return frame


def test_group_summary_flags_single_subject_and_empty_metric():
    rng = np.random.default_rng(3)
    frame = metric_frame(nested(rng, "A", n_subj=1), nested(rng, "B", n_subj=3))
    frame["dead_time_s"] = np.nan
    summary, diffs = group_summary(frame, n_boot=200, seed=1)
    rate = summary[summary["metric"] == "rate_hz"].set_index("group")
    assert rate.loc["A", "n_subjects"] == 1
    assert "single subject" in rate.loc["A", "summary_reason"]
    dead = summary[summary["metric"] == "dead_time_s"]
    assert dead["mean"].isna().all() and (dead["summary_reason"] == "no usable unit").all()
    d = diffs[diffs["metric"] == "rate_hz"].iloc[0]
    assert d["diff_mean_ci_lo"] <= d["diff_mean"] <= d["diff_mean_ci_hi"]
    assert 0 < d["p_mean"] <= 1
    assert np.isnan(diffs[diffs["metric"] == "dead_time_s"]["diff_mean"]).all()
    # deterministic with a fixed seed
    again, _ = group_summary(frame, n_boot=200, seed=1)
    pd.testing.assert_frame_equal(summary, again)
    assert rate.loc["B", "mean_ci_lo"] < rate.loc["B", "mean"] < rate.loc["B", "mean_ci_hi"]


@pytest.mark.parametrize("levels", [("subject", "session", "unit"), ("unit",)])
def test_resample_sizes(levels):
    rows, rep = hierarchical_resample_indices(["a"] * 5, ["s"] * 5, n_boot=3,
                                              rng=np.random.default_rng(0), levels=levels)
    assert len(rows) == 15 and set(rep) == {0, 1, 2}


def permutation_p(frame_a, frame_b, rng):
    both = pd.concat([frame_a, frame_b])
    names, codes = np.unique(both["subject"].to_numpy(), return_inverse=True)
    in_a = np.isin(names, frame_a["subject"].unique())
    return permutation_test_mean(both["value"].to_numpy(), codes, in_a, rng=rng)


@pytest.mark.parametrize("n_subj,n_sets", [(3, 150), (4, 300), (8, 300)])
def test_permutation_false_positive_rate_with_few_animals(n_subj, n_sets):
    # No true difference, animal-level variance dominant: the subject-level permutation test is
    # exact (Fisher 1935; Good 2005), so P(p < 0.05) <= 0.05 up to sampling error. The issue's
    # measurement of the hierarchical bootstrap here was 15% (3 animals), 10% (4), 9% (8).
    rng = np.random.default_rng(100 + n_subj)
    hits, smallest = 0, []
    for _ in range(n_sets):
        a = nested(rng, "A", n_subj=n_subj, n_units=8)
        b = nested(rng, "B", n_subj=n_subj, n_units=8)
        p, p_min, exact = permutation_p(a, b, rng)
        assert exact
        hits += p < 0.05
        smallest.append(p_min)
    rate = hits / n_sets
    assert rate <= 0.06 + 2 * np.sqrt(0.05 * 0.95 / n_sets) * (n_subj > 3)
    # 3 animals per group: 20 arrangements, the smallest two-sided p is 2/20 = 0.1
    assert smallest[0] == pytest.approx({3: 0.1, 4: 2 / 70, 8: 2 / 12870}[n_subj])
    if n_subj == 3:
        assert hits == 0


def test_permutation_detects_a_real_difference_with_eight_animals():
    rng = np.random.default_rng(5)
    detected = 0
    for _ in range(60):
        a = nested(rng, "A", n_subj=8, n_units=8)
        b = nested(rng, "B", n_subj=8, n_units=8).assign(value=lambda f: f["value"] + 2.0)
        detected += permutation_p(a, b, rng)[0] < 0.05
    assert detected >= 54  # a shift of 2 animal SDs is found in at least 90% of data sets


def test_group_differences_carry_permutation_columns():
    rng = np.random.default_rng(8)
    frame = metric_frame(nested(rng, "A", n_subj=3), nested(rng, "B", n_subj=6))
    frame["tau_at_bound"] = ""
    frame.loc[frame.index[:5], "tau_at_bound"] = "upper"
    _, diffs = group_summary(frame, n_boot=100, seed=2)
    row = diffs[diffs["metric"] == "rate_hz"].iloc[0]
    assert row["few_subjects"]  # 3 < 5 subjects in group A
    assert row["permutation_exact"] and row["p_permutation_min"] == pytest.approx(1 / 84)
    assert row["p_permutation_min"] <= row["p_permutation"] <= 1


def test_bootstrap_p_values_are_too_small_with_few_animals():
    # Size of the hierarchical-bootstrap p_mean / p_median (no true difference, animal-level
    # variance): measured and stated in the README, which tells users to read p_permutation
    # when few_subjects is set. The bootstrap is anti-conservative with 8 animals per group
    # (above 5%) but not wildly so; at 16 animals it approaches its nominal size.
    from spikevar.cohort.bootstrap import bootstrap_mean_median

    def size(n_subj, n_sets, seed):
        rng = np.random.default_rng(seed)
        hits = np.zeros(2)
        for _ in range(n_sets):
            boots = []
            for g in ("A", "B"):
                part = nested(rng, g, n_subj=n_subj, n_units=8)
                boots.append(bootstrap_mean_median(part["value"].to_numpy(), part["subject"],
                                                   part["session"], n_boot=400, rng=rng))
            for k in range(2):
                d = boots[0][k] - boots[1][k]
                hits[k] += 2 * min(np.mean(d <= 0), np.mean(d >= 0)) < 0.05
        return hits / n_sets

    eight, sixteen = size(8, 200, 61), size(16, 200, 62)
    assert (eight > 0.05).any() and (eight < 0.2).all()
    assert (sixteen < 0.12).all()
