"""Population Fano factors over time: variance-on-mean regression and mean matching.

Input: the cohort ``fano_timecourse`` table (one row per unit x condition x window, with the
across-trial ``mean_count`` and ``var_count``). For every group x condition x window:

* ``fano_regression``: slope of ``var_count`` on ``mean_count`` across units, through the origin
  (ordinary least squares: ``sum m v / sum m^2``).
* ``fano_mean_matched``: the same slope after mean matching (Churchland et al. 2010, Nat
  Neurosci 13:369; procedure as recalled from memory): the units' mean counts are binned
  (``n_bins`` equal bins over the observed range, one grid for the point estimate and all
  resamples); the greatest common distribution is the
  bin-wise minimum of the histograms over all windows; at each window, units are randomly
  discarded within each bin down to that common count; the slope is computed on the kept units.
  This is repeated ``n_repeats`` times with a fixed seed and averaged. A change of the
  mean-matched value over time cannot be caused by a change of the mean-count distribution.
* ``ci_lo``/``ci_hi``: 95% percentile interval of the mean-matched value from ``n_boot``
  resamples of units (each resample draws units with replacement and keeps those kept by one of
  the ``n_repeats`` matchings, in turn, so the interval is conditional on the matching);
  ``regression_ci_lo``/``_hi``: the same resamples for the regression value.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

from spikevar.population.settings import MeanMatchSettings

COLUMNS = ["group", "condition", "time_s", "window_s", "n_units", "mean_count",
           "fano_regression", "regression_ci_lo", "regression_ci_hi", "fano_mean_matched",
           "ci_lo", "ci_hi", "n_units_matched", "population_reason"]


def slope_through_origin(mean: np.ndarray, var: np.ndarray, axis: int = -1) -> np.ndarray:
    """OLS slope of ``var`` on ``mean`` through the origin, along ``axis`` (NaN-aware)."""
    ok = np.isfinite(mean) & np.isfinite(var)
    m = np.where(ok, mean, 0.0)
    v = np.where(ok, var, 0.0)
    num = (m * v).sum(axis=axis)
    den = (m * m).sum(axis=axis)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / den, np.nan)


def mean_match_mask(bins: np.ndarray, hist: np.ndarray, common: np.ndarray,
                    rng: np.random.Generator) -> np.ndarray:
    """Units kept at each window so that every window's histogram equals ``common``.

    ``bins``: (units, windows) bin index, -1 for unusable; ``hist``: (windows, bins) counts.
    Within each (window, bin) the kept units are a uniformly random subset: units are sorted by
    ``bin + U(0, 1)`` (one sort per call) and the first ``common[bin]`` of each bin are kept.
    """
    n_units, n_win = bins.shape
    first = np.concatenate([np.zeros((n_win, 1), dtype=np.int64),
                            np.cumsum(hist, axis=1)[:, :-1]], axis=1)  # (windows, bins)
    order = np.argsort(np.where(bins >= 0, bins + rng.random((n_units, n_win)), np.inf), axis=0)
    sorted_bins = np.take_along_axis(bins, order, axis=0)
    sorted_safe = np.maximum(sorted_bins, 0)
    rank = np.arange(n_units)[:, None] - first[np.arange(n_win)[None, :], sorted_safe]
    keep_sorted = (sorted_bins >= 0) & (rank < common[sorted_safe])
    keep = np.zeros_like(keep_sorted)
    np.put_along_axis(keep, order, keep_sorted, axis=0)
    return keep


def mean_count_bins(mean: np.ndarray, var: np.ndarray, n_bins: int):
    """Bin index of each (unit, window) mean count on ``n_bins`` equal bins over the observed
    range; -1 where mean or variance is undefined."""
    finite = np.isfinite(mean) & np.isfinite(var)
    if not finite.any():
        return np.full(mean.shape, -1)
    lo, hi = mean[finite].min(), mean[finite].max()
    edges = np.linspace(lo, hi if hi > lo else lo + 1.0, n_bins + 1)
    bins = np.clip(np.searchsorted(edges, np.where(finite, mean, lo), side="right") - 1, 0,
                   n_bins - 1)
    return np.where(finite, bins, -1)


def mean_matched_slopes(mean: np.ndarray, var: np.ndarray, *, n_bins: int, n_repeats: int,
                        rng: np.random.Generator, bins: np.ndarray | None = None):
    """Mean-matched slope for every window. ``mean``/``var``: (units, windows).

    Returns the slope per window (averaged over repeats), the number of units kept per window
    and the keep masks of the repeats (units, windows), which the interval reuses.
    """
    n_units, n_win = mean.shape
    if bins is None:
        bins = mean_count_bins(mean, var, n_bins)
    usable = bins >= 0
    key = (bins + n_bins * np.arange(n_win)[None, :])[usable]
    hist = np.bincount(key, minlength=n_win * n_bins).reshape(n_win, n_bins)
    common = hist.min(axis=0)
    masks = [mean_match_mask(bins, hist, common, rng) for _ in range(n_repeats)]
    slopes = np.stack([slope_through_origin(np.where(k, mean, np.nan),
                                            np.where(k, var, np.nan), axis=0) for k in masks])
    return slopes.mean(axis=0), np.full(n_win, int(common.sum())), masks


def population_fano_table(timecourse: pd.DataFrame, *, settings: MeanMatchSettings,
                          seed: int) -> pd.DataFrame:
    """One row per group x condition x window (see the module docstring).

    Notes
    -----
    A unit is identified by (session, unit). Units with NaN mean or variance in a window (no
    trials, single trial) are left out of that window. Fewer than ``min_units`` usable units
    give NaN values with ``population_reason``; a condition present in some sessions only uses
    the units that have it (``n_units`` says how many).
    """
    if len(timecourse) == 0:
        return pd.DataFrame({c: pd.Series(dtype=float if c not in ("group", "condition",
                                                                    "population_reason")
                                          else object) for c in COLUMNS})
    rng = np.random.default_rng(seed)
    frames = []
    tc = timecourse.assign(unit_key=timecourse["session"].astype(str) + "/" +
                           timecourse["unit"].astype(str))
    for (group, condition), part in tc.groupby(["group", "condition"], sort=True):
        mean = part.pivot_table(index="unit_key", columns="time_s", values="mean_count",
                                dropna=False)
        var = part.pivot_table(index="unit_key", columns="time_s", values="var_count",
                               dropna=False).reindex_like(mean)
        m, v = mean.to_numpy(), var.to_numpy()
        usable = (np.isfinite(m) & np.isfinite(v)).sum(axis=0)
        reg = slope_through_origin(m, v, axis=0)
        n_units = m.shape[0]
        enough = usable >= settings.min_units
        if enough.any():
            mm, kept, masks = mean_matched_slopes(m, v, n_bins=settings.n_bins,
                                                  n_repeats=settings.n_repeats, rng=rng)
            boot_reg = np.empty((settings.n_boot, m.shape[1]))
            boot_mm = np.empty((settings.n_boot, m.shape[1]))
            for b in range(settings.n_boot):  # one resample at a time bounds memory
                i = rng.integers(0, n_units, size=n_units)
                boot_reg[b] = slope_through_origin(m[i], v[i], axis=0)
                # resample the units kept by one of the matchings (cycling through them)
                keep = masks[b % len(masks)][i]
                boot_mm[b] = slope_through_origin(np.where(keep, m[i], np.nan),
                                                  np.where(keep, v[i], np.nan), axis=0)
        else:
            mm = kept = np.full(m.shape[1], np.nan)
            boot_reg = boot_mm = np.full((2, m.shape[1]), np.nan)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN windows stay NaN
            reg_lo, reg_hi = np.nanpercentile(boot_reg, [2.5, 97.5], axis=0)
            mm_lo, mm_hi = np.nanpercentile(boot_mm, [2.5, 97.5], axis=0)
            mean_count = np.nanmean(m, axis=0)
        reason = np.where(enough, "", f"fewer than {settings.min_units} units")
        no_common = enough & ~(np.asarray(kept, dtype=float) > 0)
        reason = np.where(no_common, "no common mean-count distribution across windows", reason)
        mm = np.where(no_common, np.nan, mm)
        mm_lo = np.where(no_common, np.nan, mm_lo)
        mm_hi = np.where(no_common, np.nan, mm_hi)

        def nan_if(x, ok=enough):
            return np.where(ok, x, np.nan)

        widths = part.groupby("time_s")["window_s"].first().reindex(mean.columns)
        frames.append(pd.DataFrame({
            "group": group, "condition": condition, "time_s": mean.columns.to_numpy(float),
            "window_s": widths.to_numpy(float), "n_units": usable.astype(np.int64),
            "mean_count": mean_count, "fano_regression": nan_if(reg),
            "regression_ci_lo": nan_if(reg_lo), "regression_ci_hi": nan_if(reg_hi),
            "fano_mean_matched": nan_if(mm), "ci_lo": nan_if(mm_lo), "ci_hi": nan_if(mm_hi),
            "n_units_matched": kept, "population_reason": reason}))
    return pd.concat(frames, ignore_index=True)[COLUMNS]
