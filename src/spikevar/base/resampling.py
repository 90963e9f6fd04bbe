"""Hierarchical resampling of units: subject > session > unit (Saravanan, Berman & Sober 2020).

Shared by the group statistics and the population Fano intervals: both must resample animals,
then sessions within them, then units within those, because units of one animal or session are
not independent samples.
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
        ``("subject", "session", "unit")`` (resample at every level), ``("subject",)``
        (resample subjects, keep each drawn subject's sessions and units whole: the cluster
        bootstrap) or ``("unit",)`` (the naive unit-level bootstrap, for comparison).

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
    if levels == ("subject",):
        subj = _codes(subject)
        order = np.argsort(subj, kind="stable")
        first = np.flatnonzero(np.r_[True, subj[order][1:] != subj[order][:-1]])
        size = np.diff(np.r_[first, n])
        chosen = rng.integers(0, len(first), size=(n_boot, len(first))).ravel()
        k = size[chosen]
        rep = np.repeat(np.repeat(np.arange(n_boot), len(first)), k)
        start = np.repeat(first[chosen], k)
        offset = np.arange(len(start)) - np.repeat(np.cumsum(k) - k, k)
        return order[start + offset], rep
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
