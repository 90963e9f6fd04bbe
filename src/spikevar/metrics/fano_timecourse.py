"""Event-aligned, time-resolved spike counts and Fano factors per unit and condition."""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.settings import SlidingWindows

REASON_NO_TRIALS = "no trial inside the recording"
REASON_ONE_TRIAL = "single trial"
REASON_ZERO_MEAN = "zero mean count"

COLUMNS = ["unit", "condition", "time_s", "window_s", "n_trials", "n_trials_dropped",
           "mean_count", "var_count", "fano", "rate_hz", "fano_reason"]


def trial_counts(times: np.ndarray, events: np.ndarray, left_edges: np.ndarray,
                 width_s: float) -> np.ndarray:
    """Counts of one unit's sorted ``times`` in ``[e + l, e + (l + width))``: (events, windows).

    Left and right window edges are merged into one sorted set of offsets, so overlapping
    sliding windows share their binary searches.
    """
    offsets, inverse = np.unique(np.concatenate([left_edges, left_edges + width_s]),
                                 return_inverse=True)
    cumulative = np.searchsorted(times, events[:, None] + offsets[None, :], side="left")
    n = len(left_edges)
    return cumulative[:, inverse[n:]] - cumulative[:, inverse[:n]]


def fano_timecourse_table(
    spikes: SpikeArrays,
    events: pd.DataFrame,
    *,
    windows: SlidingWindows,
    recording_s: tuple[float, float],
) -> pd.DataFrame:
    """Per unit x condition x window: trial count, mean, variance, Fano factor and PSTH rate.

    Parameters
    ----------
    spikes
        The session's spikes.
    events
        ``time_s`` and ``condition`` columns.
    windows
        Window layout relative to each event.
    recording_s
        ``(start, stop)`` of the recording; a trial whose windows would leave it is dropped and
        counted in ``n_trials_dropped`` (never padded with zeros).

    Returns
    -------
    DataFrame
        Columns :data:`COLUMNS`; ``time_s`` is the window centre relative to the event and
        ``rate_hz = mean_count / window_s`` is the PSTH rate. Empty (with these columns) when
        there are no events.

    Notes
    -----
    ``var_count`` uses ddof = 1, so a single-trial condition gives NaN variance and Fano factor
    (reason "single trial"); a zero mean count gives NaN Fano factor ("zero mean count").
    The loop is over units (vectorised over trials and windows inside), never over spikes.
    """
    if events is None or len(events) == 0 or spikes.n_units == 0:
        return empty_timecourse()
    left = windows.left_edges()
    centre = np.round(left + windows.width_s / 2, 9)
    ev_t = events["time_s"].to_numpy(dtype=float)
    ev_c = events["condition"].astype(str).to_numpy()
    inside = (ev_t + windows.start_s >= recording_s[0]) & \
             (ev_t + left[-1] + windows.width_s <= recording_s[1]) if len(left) else \
        np.zeros(len(ev_t), bool)
    conditions = np.unique(ev_c)
    bounds = spikes.bounds()
    n_units, n_win = spikes.n_units, len(left)
    frames = []
    for cond in conditions:
        sel = (ev_c == cond) & inside
        n_trials = int(sel.sum())
        dropped = int(((ev_c == cond) & ~inside).sum())
        mean = np.full((n_units, n_win), np.nan)
        var = np.full((n_units, n_win), np.nan)
        if n_trials:
            for u in range(n_units):
                counts = trial_counts(spikes.times[bounds[u]:bounds[u + 1]], ev_t[sel], left,
                                      windows.width_s)
                mean[u] = counts.mean(axis=0)
                if n_trials > 1:
                    var[u] = counts.var(axis=0, ddof=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            fano = np.where(mean > 0, var / mean, np.nan)
        if n_trials == 0:
            reason = np.full((n_units, n_win), REASON_NO_TRIALS, dtype=object)
        elif n_trials == 1:
            reason = np.full((n_units, n_win), REASON_ONE_TRIAL, dtype=object)
        else:
            reason = np.where(mean > 0, "", REASON_ZERO_MEAN).astype(object)
        frames.append(pd.DataFrame({
            "unit": np.repeat(spikes.labels.astype(object), n_win),
            "condition": cond,
            "time_s": np.tile(centre, n_units),
            "window_s": windows.width_s,
            "n_trials": np.int64(n_trials),
            "n_trials_dropped": np.int64(dropped),
            "mean_count": mean.ravel(),
            "var_count": var.ravel(),
            "fano": fano.ravel(),
            "rate_hz": mean.ravel() / windows.width_s,
            "fano_reason": reason.ravel(),
        }))
    return pd.concat(frames, ignore_index=True)[COLUMNS]


def empty_timecourse() -> pd.DataFrame:
    dtypes = {"unit": object, "condition": object, "time_s": float, "window_s": float,
              "n_trials": np.int64, "n_trials_dropped": np.int64, "mean_count": float,
              "var_count": float, "fano": float, "rate_hz": float, "fano_reason": object}
    return pd.DataFrame({c: pd.Series(dtype=dtypes[c]) for c in COLUMNS})
