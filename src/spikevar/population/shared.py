"""Shared variability of one session: pair correlations, factor analysis, its time course and
the gain variance, per alignment x condition (tables of the rule session_shared).

Every statistic is computed within one condition, with the condition mean removed. A trial is
used only when every epoch window and every time-course window around it lies inside the
recording span, so all tables of one alignment x condition rest on the same trials.
"""

from __future__ import annotations

import zlib

import numpy as np
import pandas as pd

from spikevar.base.layout import SHARED_TABLES
from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.settings import SlidingWindows
from spikevar.population.factor_analysis import (
    choose_n_factors,
    covariance,
    fit_factors,
    summarise_fit,
)
from spikevar.population.gain import NOTE_FEW_TRIALS, gain_variance
from spikevar.population.noise_correlation import (
    REASON_FEW_TRIALS,
    REASON_NO_VARIANCE,
    count_correlations,
    mean_pair_correlation,
    upper_pairs,
)
from spikevar.population.settings import SharedSettings

TABLES = SHARED_TABLES
COLUMNS = {
    "pair_correlations": ["unit_a", "unit_b", "alignment", "condition", "epoch", "n_trials",
                          "r_sc", "geo_mean_rate_hz", "r_sc_reason"],
    "shared_variance": ["unit", "alignment", "condition", "epoch", "n_trials", "n_factors",
                        "shared_variance", "private_variance", "percent_shared",
                        "shared_reason"],
    "population_structure": ["alignment", "condition", "epoch", "n_units", "n_trials",
                             "n_factors", "dim_shared", "percent_shared_mean", "mean_r_sc",
                             "loading_similarity", "structure_reason"],
    "shared_timecourse": ["alignment", "condition", "time_s", "window_s", "n_units", "n_trials",
                          "n_factors", "mean_r_sc", "percent_shared_mean"],
    "gain_variance": ["unit", "alignment", "condition", "n_trials", "n_windows",
                      "gain_variance", "fit_note"],
}
DTYPES = {"unit_a": object, "unit_b": object, "unit": object, "alignment": object,
          "condition": object, "epoch": object, "n_trials": np.int64, "n_units": np.int64,
          "n_factors": np.int64, "dim_shared": np.int64, "n_windows": np.int64,
          "r_sc_reason": object, "shared_reason": object, "structure_reason": object,
          "fit_note": object}

REASON_FEW_FA_TRIALS = "fewer trials than shared.min_trials"
REASON_FEW_UNITS = "fewer than 2 units whose counts vary"


def empty_table(name: str) -> pd.DataFrame:
    return pd.DataFrame({c: pd.Series(dtype=DTYPES.get(c, float)) for c in COLUMNS[name]})


def window_counts(spikes: SpikeArrays, events: np.ndarray, left: np.ndarray,
                  right: np.ndarray) -> np.ndarray:
    """Spike counts in ``[e + left_j, e + right_j)``: units x events x windows (int32).

    One binary search per unit over the sorted set of all window edges; the loop is over
    units, never over spikes.
    """
    offsets, inverse = np.unique(np.concatenate([left, right]), return_inverse=True)
    n = len(left)
    bounds = spikes.bounds()
    out = np.zeros((spikes.n_units, len(events), n), dtype=np.int32)
    edges = events[:, None] + offsets[None, :]
    for u in range(spikes.n_units):
        cumulative = np.searchsorted(spikes.times[bounds[u]:bounds[u + 1]], edges)
        out[u] = cumulative[:, inverse[n:]] - cumulative[:, inverse[:n]]
    return out


def session_seed(seed: int, session: str) -> np.random.Generator:
    """A generator fixed by the run's seed and the session id (reruns give identical tables)."""
    return np.random.default_rng([int(seed), zlib.crc32(session.encode())])


def shared_tables(spikes: SpikeArrays, events: pd.DataFrame, *,
                  alignments: dict[str, np.ndarray], epochs: dict[str, tuple[float, float]],
                  windows: SlidingWindows, settings: SharedSettings,
                  span: tuple[float, float], rng: np.random.Generator,
                  units: np.ndarray | None = None) -> dict[str, pd.DataFrame]:
    """The five shared-variability tables of one session (without the session column).

    ``units``: boolean per unit of ``spikes`` (the included units); default every unit.
    """
    keep = np.ones(spikes.n_units, bool) if units is None else np.asarray(units, bool)
    labels = spikes.labels.astype(str)[keep]
    frames: dict[str, list[pd.DataFrame]] = {name: [] for name in TABLES}
    names = list(epochs)
    ep_left = np.array([epochs[e][0] for e in names])
    ep_right = np.array([epochs[e][1] for e in names])
    tc_left = windows.left_edges()
    tc_right = tc_left + windows.width_s
    tc_centre = np.round(tc_left + windows.width_s / 2, 9)
    left = np.concatenate([ep_left, tc_left])
    right = np.concatenate([ep_right, tc_right])
    conditions = events["condition"].astype(str).to_numpy() if len(events) else np.zeros(0, str)
    for alignment, times in alignments.items():
        times = np.asarray(times, float)
        inside = np.isfinite(times) & (times + left.min() >= span[0]) & \
            (times + right.max() <= span[1]) if len(left) else np.zeros(len(times), bool)
        for condition in np.unique(conditions):
            trials = np.sort(times[inside & (conditions == condition)])
            counts = window_counts(spikes, trials, left, right)[keep]
            key = {"alignment": alignment, "condition": condition}
            k_fixed = 0
            for j, epoch in enumerate(names):
                x = counts[:, :, j].T.astype(float)
                width = ep_right[j] - ep_left[j]
                pairs, per_unit, structure = _epoch_tables(x, labels, width, settings, rng)
                for frame, name in ((pairs, "pair_correlations"), (per_unit, "shared_variance"),
                                    (structure, "population_structure")):
                    frames[name].append(frame.assign(**key, epoch=epoch))
                k_epoch = int(structure["n_factors"].iloc[0])
                if settings.factor_epoch == "largest":
                    k_fixed = max(k_fixed, k_epoch)
                elif epoch == settings.factor_epoch:
                    k_fixed = k_epoch
            tc = counts[:, :, len(names):]
            if settings.timecourse and len(tc_left):
                frames["shared_timecourse"].append(
                    _timecourse(tc, tc_centre, windows.width_s, k_fixed,
                                min_trials=settings.min_trials).assign(**key))
            frames["gain_variance"].append(_gain(tc, labels).assign(**key))
    out = {}
    for name in TABLES:
        parts = [f for f in frames[name] if len(f)]
        frame = pd.concat(parts, ignore_index=True) if parts else empty_table(name)
        out[name] = frame[COLUMNS[name]].astype({c: DTYPES[c] for c in COLUMNS[name]
                                                 if DTYPES.get(c) is np.int64})
    return out


def _epoch_tables(x: np.ndarray, labels: np.ndarray, width_s: float,
                  settings: SharedSettings, rng: np.random.Generator):
    """Pairs, per-unit shared variance and the structure row of one trials x units matrix."""
    n_trials, n_units = x.shape
    r, varies = count_correlations(x) if n_trials >= 3 else \
        (np.full((n_units, n_units), np.nan), np.zeros(n_units, bool))
    a, b = upper_pairs(n_units)
    rate = x.mean(axis=0) / width_s if n_trials else np.full(n_units, np.nan)
    pair_reason = np.where(np.isfinite(r[a, b]), "", REASON_NO_VARIANCE).astype(object)
    if n_trials < 3:
        pair_reason[:] = REASON_FEW_TRIALS
    pairs = pd.DataFrame({"unit_a": labels[a], "unit_b": labels[b], "n_trials": n_trials,
                          "r_sc": r[a, b], "geo_mean_rate_hz": np.sqrt(rate[a] * rate[b]),
                          "r_sc_reason": pair_reason})
    shared = np.full(n_units, np.nan)
    private = np.full(n_units, np.nan)
    percent = np.full(n_units, np.nan)
    reason = np.where(varies, "", REASON_NO_VARIANCE).astype(object)
    structure = {"n_units": int(varies.sum()), "n_trials": n_trials, "n_factors": 0,
                 "dim_shared": 0, "percent_shared_mean": np.nan,
                 "mean_r_sc": mean_pair_correlation(r), "loading_similarity": np.nan,
                 "structure_reason": ""}
    if n_trials < settings.min_trials:
        reason[:] = REASON_FEW_FA_TRIALS
        structure["structure_reason"] = REASON_FEW_FA_TRIALS
    elif varies.sum() < 2:
        reason[:] = REASON_FEW_UNITS
        structure["structure_reason"] = REASON_FEW_UNITS
    else:
        xv = x[:, varies] - x[:, varies].mean(axis=0)
        k, _ = choose_n_factors(xv, max_factors=settings.max_factors, n_folds=settings.cv_folds,
                                rng=rng)
        summary = summarise_fit(fit_factors(covariance(xv), k))
        shared[varies], private[varies] = summary.shared_variance, summary.private_variance
        percent[varies] = summary.percent_shared
        structure.update(n_factors=k, dim_shared=summary.dim_shared,
                         percent_shared_mean=float(summary.percent_shared.mean()),
                         loading_similarity=summary.loading_similarity)
    per_unit = pd.DataFrame({"unit": labels, "n_trials": n_trials,
                             "n_factors": structure["n_factors"], "shared_variance": shared,
                             "private_variance": private, "percent_shared": percent,
                             "shared_reason": reason})
    return pairs, per_unit, pd.DataFrame([structure])


def _timecourse(counts: np.ndarray, centres: np.ndarray, width_s: float,
                k: int, *, min_trials: int) -> pd.DataFrame:
    """Mean r_sc and mean percent shared per window, ``k`` factors in every window.

    With fewer than ``min_trials`` trials the percent shared is NaN (as in
    population_structure), the mean r_sc is still given.
    Each window's fit starts from the previous window's when the same units vary (sliding
    windows overlap, so consecutive optima are close).
    """
    n_units, n_trials, n_win = counts.shape
    mean_r = np.full(n_win, np.nan)
    percent = np.full(n_win, np.nan)
    used = np.zeros(n_win, np.int64)
    start, start_units = None, None
    for w in range(n_win):
        x = counts[:, :, w].T.astype(float)
        if n_trials < 3:
            continue
        r, varies = count_correlations(x)
        mean_r[w] = mean_pair_correlation(r)
        used[w] = int(varies.sum())
        if used[w] < 2 or n_trials < min_trials:
            continue
        kk = min(k, used[w] - 1)
        xv = x[:, varies] - x[:, varies].mean(axis=0)
        warm = start if (start is not None and np.array_equal(start_units, varies)
                         and start[0].shape[1] == kk) else None
        fit = fit_factors(covariance(xv), kk, start=warm)
        start, start_units = (fit.loadings, fit.private), varies
        percent[w] = float(summarise_fit(fit).percent_shared.mean())
    return pd.DataFrame({"time_s": centres, "window_s": width_s, "n_units": used,
                         "n_trials": n_trials, "n_factors": k, "mean_r_sc": mean_r,
                         "percent_shared_mean": percent})


def _gain(counts: np.ndarray, labels: np.ndarray) -> pd.DataFrame:
    """σ²_G per unit from the mean and variance of its counts in the time-course windows."""
    n_units, n_trials, _ = counts.shape
    if n_trials < 2:
        return pd.DataFrame({"unit": labels, "n_trials": n_trials, "n_windows": 0,
                             "gain_variance": np.nan, "fit_note": NOTE_FEW_TRIALS})
    mean = counts.mean(axis=1)
    var = counts.var(axis=1, ddof=1)
    sigma2, n_windows, note = gain_variance(mean, var)
    return pd.DataFrame({"unit": labels, "n_trials": n_trials, "n_windows": n_windows,
                         "gain_variance": sigma2, "fit_note": note})
