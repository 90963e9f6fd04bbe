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
        Resampling levels; ``("unit",)`` gives the naive unit-level bootstrap.

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
    if "session" not in levels:
        chosen_sess = base + (np.arange(len(base)) - np.repeat(np.cumsum(k_sess) - k_sess,
                                                               k_sess))
    # level 3: units within each chosen session
    k_unit = sess_n_units[chosen_sess]
    rep3 = np.repeat(rep2, k_unit)
    base_u = np.repeat(sess_first_row[chosen_sess], k_unit)
    draw_u = np.floor(rng.random(len(base_u)) * np.repeat(k_unit, k_unit)).astype(np.int64)
    rows = order[base_u + draw_u]
    return rows, rep3


def replicate_stats(values: np.ndarray, rows: np.ndarray, replicate: np.ndarray, n_boot: int):
    """Mean and median of ``values[rows]`` per replicate (vectorised)."""
    x = values[rows]
    count = np.bincount(replicate, minlength=n_boot)
    mean = np.bincount(replicate, weights=x, minlength=n_boot) / np.maximum(count, 1)
    order = np.lexsort((x, replicate))
    xs = x[order]
    start = np.r_[0, np.cumsum(count)[:-1]]
    lo = start + (count - 1) // 2
    hi = start + count // 2
    median = 0.5 * (xs[np.minimum(lo, len(xs) - 1)] + xs[np.minimum(hi, len(xs) - 1)])
    empty = count == 0
    mean[empty] = np.nan
    median[empty] = np.nan
    return mean, median
