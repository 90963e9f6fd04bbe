"""Straightforward loop implementations, written independently of the package, for agreement
tests. They are deliberately simple and slow: one unit / window / trial at a time."""

import numpy as np


def unit_metrics_loop(times, *, R=0.005, threshold=0.0015):
    isi = np.diff(np.sort(times))
    out = {"violations": sum(1 for x in isi if x < threshold)}
    if len(isi) < 2:
        return dict(out, cv=np.nan, cv2=np.nan, lv=np.nan, lvr=np.nan)
    if np.mean(isi) == 0:
        return dict(out, cv=np.nan, cv2=np.nan, lv=np.nan, lvr=np.nan)
    out["cv"] = np.std(isi, ddof=1) / np.mean(isi)
    cv2, lv, lvr = [], [], []
    for i in range(len(isi) - 1):
        a, b = isi[i], isi[i + 1]
        if a + b == 0:
            continue
        cv2.append(2 * abs(b - a) / (a + b))
        lv.append(((a - b) / (a + b)) ** 2)
        lvr.append((1 - 4 * a * b / (a + b) ** 2) * (1 + 4 * R / (a + b)))
    if not lv:
        return dict(out, cv2=np.nan, lv=np.nan, lvr=np.nan)
    out["cv2"] = np.mean(cv2)
    out["lv"] = 3 * np.sum(lv) / len(lv)
    out["lvr"] = 3 * np.sum(lvr) / len(lvr)
    return out


def count_fano_loop(times, *, start, stop, window):
    n = int(np.floor((stop - start) / window + 1e-9))
    counts = []
    for k in range(n):
        lo = start + window * k
        hi = start + window * (k + 1)
        counts.append(sum(1 for t in times if lo <= t < hi))
    counts = np.array(counts, dtype=float)
    mean = counts.mean() if n else np.nan
    var = counts.var(ddof=1) if n > 1 else np.nan
    return n, mean, var


def trial_counts_loop(times, events, left_edges, width):
    out = np.zeros((len(events), len(left_edges)), dtype=int)
    for i, e in enumerate(events):
        for j, left in enumerate(left_edges):
            lo = e + left
            hi = e + (left + width)  # package convention: window [e + l, e + (l + w))
            out[i, j] = sum(1 for t in times if lo <= t < hi)
    return out
