"""Hierarchical bootstrap over subject > session > unit (Saravanan, Berman & Sober 2020).

Units recorded from the same animal (and the same session) share its state, genotype, probe
placement and sorting quality, so they are not independent samples; resampling units as if they
were understates the uncertainty of a group statistic. Here each bootstrap replicate resamples
subjects with replacement, then sessions within each drawn subject, then units within each drawn
session, and computes the statistic on the pooled units of the replicate.
"""

from __future__ import annotations

import numpy as np

from spikevar.base.resampling import hierarchical_resample_indices


def replicate_stats(values: np.ndarray, rows: np.ndarray, replicate: np.ndarray, n_boot: int):
    """Mean and median of ``values[rows]`` per replicate (vectorised, no sort of the draws).

    Medians use ranks: ``values`` are ranked once, each replicate's draws are counted per rank
    (``bincount``), and the middle order statistics are found from the cumulative counts.
    """
    n = len(values)
    count = np.bincount(replicate, minlength=n_boot)
    x = values[rows]
    mean = np.bincount(replicate, weights=x, minlength=n_boot) / np.maximum(count, 1)
    order = np.argsort(values, kind="stable")
    rank = np.empty(n, dtype=np.int64)
    rank[order] = np.arange(n)
    per_rank = np.bincount(replicate * n + rank[rows], minlength=n_boot * n).reshape(n_boot, n)
    cumulative = np.cumsum(per_rank, axis=1)
    lo_k = (count - 1) // 2  # 0-based order statistics around the middle
    hi_k = count // 2
    lo = np.minimum((cumulative <= lo_k[:, None]).sum(axis=1), n - 1)
    hi = np.minimum((cumulative <= hi_k[:, None]).sum(axis=1), n - 1)
    sorted_values = values[order]
    median = 0.5 * (sorted_values[lo] + sorted_values[hi])
    empty = count == 0
    mean[empty] = np.nan
    median[empty] = np.nan
    return mean, median


def bootstrap_mean_median(values, subject, session, *, n_boot: int, rng: np.random.Generator,
                          levels: tuple[str, ...] = ("subject", "session", "unit"),
                          max_draws: int = 4_000_000):
    """Replicate means and medians, drawn in chunks of replicates to bound memory."""
    values = np.asarray(values, dtype=float)
    per_chunk = max(1, min(n_boot, max_draws // max(len(values), 1)))
    means, medians = [], []
    done = 0
    while done < n_boot:
        b = min(per_chunk, n_boot - done)
        rows, rep = hierarchical_resample_indices(subject, session, n_boot=b, rng=rng,
                                                  levels=levels)
        m, med = replicate_stats(values, rows, rep, b)
        means.append(m)
        medians.append(med)
        done += b
    return np.concatenate(means), np.concatenate(medians)
