"""Subject-level permutation test of a difference between two groups.

Under the null hypothesis that group labels do not matter, subjects (animals) are exchangeable
between the groups; units are not (they share their animal). So whole subjects, with all their
units, are permuted between the two groups, and the statistic is recomputed each time (Fisher
1935; Good 2005, Permutation, Parametric and Bootstrap Tests of Hypotheses). With few subjects
the arrangements are enumerated exactly; the smallest attainable two-sided p-value is then
``2 / C(n_a + n_b, n_a)`` for equal groups (``1 / C`` otherwise), reported beside the p-value.
"""

from __future__ import annotations

import itertools
import math

import numpy as np

#: enumerate every arrangement up to this many; beyond, draw this many at random
MAX_EXACT = 20_000


def subject_arrangements(n_a: int, n_b: int, *, rng: np.random.Generator) -> tuple[np.ndarray,
                                                                                      bool]:
    """Boolean matrix (arrangements x subjects): True = the subject is in group a.

    The first row is the observed arrangement (the first ``n_a`` subjects in group a). Returns
    the matrix and whether it holds every arrangement (exact) or a random sample.
    """
    n = n_a + n_b
    total = math.comb(n, n_a)
    if total <= MAX_EXACT:
        rows = np.zeros((total, n), dtype=bool)
        for i, chosen in enumerate(itertools.combinations(range(n), n_a)):
            rows[i, list(chosen)] = True
        return rows, True
    rows = np.zeros((MAX_EXACT, n), dtype=bool)
    rows[0, :n_a] = True
    keys = rng.random((MAX_EXACT - 1, n))
    chosen = np.argsort(keys, axis=1)[:, :n_a]
    np.put_along_axis(rows[1:], chosen, True, axis=1)
    return rows, False


def permutation_test_mean(values: np.ndarray, subject_codes: np.ndarray, in_a: np.ndarray, *,
                          rng: np.random.Generator) -> tuple[float, float, bool]:
    """Two-sided permutation p-value of the difference of pooled unit means, subjects permuted.

    Parameters
    ----------
    values
        Unit values (finite) of both groups.
    subject_codes
        Per unit, its subject's index ``0 .. n_subjects - 1``.
    in_a
        Per subject, True if it is observed in group a.

    Returns
    -------
    p, smallest attainable p, exact
        ``p = #(|T*| >= |T_obs|) / #arrangements`` (the observed arrangement included). Works
        on per-subject sums and counts, so memory is arrangements x subjects, not x units.
    """
    order = np.argsort(~in_a, kind="stable")  # group-a subjects first
    n_subjects = len(in_a)
    sums = np.bincount(subject_codes, weights=values, minlength=n_subjects)[order]
    counts = np.bincount(subject_codes, minlength=n_subjects).astype(float)[order]
    n_a = int(in_a.sum())
    n_b = n_subjects - n_a
    rows, exact = subject_arrangements(n_a, n_b, rng=rng)
    sum_a, count_a = rows @ sums, rows @ counts
    t = sum_a / count_a - (sums.sum() - sum_a) / (counts.sum() - count_a)
    observed = abs(t[0])
    # a tolerance so that arrangements with the same statistic count as at least as extreme
    p = float(np.mean(np.abs(t) >= observed - 1e-12 * max(observed, 1.0)))
    smallest = (2.0 if n_a == n_b else 1.0) / math.comb(n_subjects, n_a)
    return p, (smallest if exact else 1.0 / len(rows)), exact
