"""Hierarchical bootstrap over subject > session > unit (Saravanan, Berman & Sober 2020).

Units recorded from the same animal (and the same session) share its state, genotype, probe
placement and sorting quality, so they are not independent samples; resampling units as if they
were understates the uncertainty of a group statistic. Here each bootstrap replicate resamples
subjects with replacement, then sessions within each drawn subject, then units within each drawn
session, and computes the statistic on the pooled units of the replicate.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def _codes(values) -> np.ndarray:
    return pd.factorize(pd.Series(values), sort=True)[0]


def hierarchical_resample_indices(subject, session, *, n_boot: int, rng: np.random.Generator,
                                  levels: tuple[str, ...] = ("subject", "session", "unit")):
    """Row indices of ``n_boot`` hierarchical resamples, vectorised across replicates.

    Parameters
    ----------
    subject, session
        One label per unit (row).
    levels
        ``("subject", "session", "unit")`` (hierarchical) or ``("unit",)`` (the naive
        unit-level bootstrap, for comparison).

    Returns
    -------
    rows, replicate : ndarray
        Concatenated resampled row indices and the replicate each belongs to.
    """
    subject, session = np.asarray(subject), np.asarray(session)
    n = len(subject)
    if levels == ("unit",):
        rows = rng.integers(0, n, size=(n_boot, n))
        return rows.ravel(), np.repeat(np.arange(n_boot), n)
    if levels != ("subject", "session", "unit"):
        raise ValueError(f"unsupported resampling levels {levels}")
    subj = _codes(subject)
    sess = _codes(pd.Series(subject).astype(str) + "\x00" + pd.Series(session).astype(str))
    order = np.lexsort((sess, subj))
    subj, sess = subj[order], sess[order]
    # sessions of each subject and units of each session, as contiguous ranges
    sess_first_row = np.flatnonzero(np.r_[True, sess[1:] != sess[:-1]])
    sess_n_units = np.diff(np.r_[sess_first_row, n])
    sess_subject = subj[sess_first_row]
    subj_first_sess = np.flatnonzero(np.r_[True, sess_subject[1:] != sess_subject[:-1]])
    subj_n_sess = np.diff(np.r_[subj_first_sess, len(sess_first_row)])
    n_subj = len(subj_first_sess)
    # level 1: subjects
    chosen_subj = rng.integers(0, n_subj, size=(n_boot, n_subj))
    rep1 = np.repeat(np.arange(n_boot), n_subj)
    chosen_subj = chosen_subj.ravel()
    # level 2: sessions within each chosen subject
    k_sess = subj_n_sess[chosen_subj]
    rep2 = np.repeat(rep1, k_sess)
    base = np.repeat(subj_first_sess[chosen_subj], k_sess)
    draw = np.floor(rng.random(len(base)) * np.repeat(k_sess, k_sess)).astype(np.int64)
    chosen_sess = base + draw
    # level 3: units within each chosen session
    k_unit = sess_n_units[chosen_sess]
    rep3 = np.repeat(rep2, k_unit)
    base_u = np.repeat(sess_first_row[chosen_sess], k_unit)
    draw_u = np.floor(rng.random(len(base_u)) * np.repeat(k_unit, k_unit)).astype(np.int64)
    rows = order[base_u + draw_u]
    return rows, rep3


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
