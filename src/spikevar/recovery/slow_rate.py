"""A unit's slowly varying firing rate, estimated from its own spike train by kernel smoothing."""

from __future__ import annotations

import numpy as np
from scipy.ndimage import gaussian_filter1d

from spikevar.recovery import hazard_models


def kernel_rate(times: np.ndarray, *, span_s: tuple[float, float], bandwidth_s: float):
    """Gaussian-kernel rate estimate (Hz) on a grid of ``bandwidth_s / 10`` steps.

    Edges are corrected by dividing by the kernel mass inside the recording, so the estimate
    does not sag at the start and end.

    Returns
    -------
    grid_s, rate_hz : ndarray
        Bin centres and the smoothed rate.
    """
    start, stop = span_s
    step = bandwidth_s / 10.0
    n_bins = max(int(np.ceil((stop - start) / step)), 1)
    counts = np.bincount(np.clip(((times - start) / step).astype(np.int64), 0, n_bins - 1),
                         minlength=n_bins).astype(float)
    sigma = bandwidth_s / step
    smoothed = gaussian_filter1d(counts, sigma, mode="constant")
    mass = gaussian_filter1d(np.ones(n_bins), sigma, mode="constant")
    return start + step * (np.arange(n_bins) + 0.5), smoothed / mass / step


def interval_weights(times: np.ndarray, *, span_s: tuple[float, float], bandwidth_s: float,
                     tau_s: float | None = None, dead_time_s: float = 0.0,
                     smoothed: tuple[np.ndarray, np.ndarray] | None = None):
    """Relative slow rate during each interval and during the censored last interval.

    The rate is read at each interval's midpoint and held constant within the interval
    (the intervals are much shorter than the bandwidth). Weights are scaled to mean 1 over
    the intervals, so the fitted rate stays the unit's average asymptotic rate.

    With ``tau_s`` given, the smoothed output rate is first converted to the asymptotic (free)
    rate of the exponential-recovery model with that ``tau_s`` and ``dead_time_s``: refractoriness
    compresses output-rate changes, and the multiplicative model modulates the free rate.

    ``smoothed``: the :func:`kernel_rate` of the same train, when already computed (it does
    not depend on ``tau_s`` or ``dead_time_s``).

    Returns
    -------
    weights, censored_weight : ndarray, float
    """
    grid, rate = (kernel_rate(times, span_s=span_s, bandwidth_s=bandwidth_s)
                  if smoothed is None else smoothed)
    floor = max(rate.max() * 1e-3, 1e-9)
    rate = np.maximum(rate, floor)
    if tau_s is not None:
        free = hazard_models.exp_recovery_free_rate(rate, tau_s=tau_s, dead_time_s=dead_time_s)
        rate = np.where(np.isfinite(free), free, np.nanmax(free) if np.isfinite(free).any()
                        else rate)
    mids = 0.5 * (times[1:] + times[:-1])
    w = np.interp(mids, grid, rate)
    last = 0.5 * (times[-1] + span_s[1]) if len(times) else span_s[1]
    wc = float(np.interp(last, grid, rate))
    scale = w.mean() if len(w) else 1.0
    return w / scale, wc / scale
