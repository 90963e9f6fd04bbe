"""Stability over the session: per-unit block statistics and a test of one stationary rate.

The recording span is cut into consecutive blocks of ``block_s`` seconds (the last block may
be shorter). Per unit and block: spike count, rate, CV2 of the ISIs inside the block, and the
Fano factor of spike counts in sub-windows of ``subwindow_s`` inside the block.

``rate_drift_pvalue`` tests that the block counts come from one stationary rate. For a
stationary renewal process the count in a long window of length T has mean T/mu and variance
about CV^2 T/mu (Cox 1962, Renewal Theory, ch. 9), so

    X = sum_b (N_b - lambda T_b)^2 / (phi lambda T_b),  lambda = sum N_b / sum T_b,

is approximately chi-squared with B - 1 degrees of freedom, phi = CV^2 of the ISIs. phi is
estimated inside the blocks (each ISI compared with its own block's mean ISI), so a change of
rate between blocks does not inflate it and hide the change. Blocks shorter than half a block
are left out of the test; a unit with fewer than 2 tested blocks or under ``MIN_BLOCK_COUNT``
expected spikes per block is not tested (p-value NaN, reason given, ``stable`` False).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.segments import unit_blocks
from spikevar.metrics.settings import StabilitySettings

#: expected spikes per block below which the chi-squared approximation is not trusted
#: (common practice for chi-squared tests: expected counts of at least 5)
MIN_BLOCK_COUNT = 5.0
#: blocks shorter than this fraction of block_s (the last one) are left out of the test
MIN_BLOCK_FRACTION = 0.5


def block_edges(start_s: float, stop_s: float, block_s: float) -> np.ndarray:
    """Left edges of the blocks and the stop: ``[start, start + b, ..., stop]``."""
    n_full = int(np.floor((stop_s - start_s) / block_s + 1e-9))
    edges = start_s + block_s * np.arange(n_full + 1)
    if stop_s - edges[-1] > 1e-9 * block_s:
        edges = np.append(edges, stop_s)
    return edges


def _block_of(times: np.ndarray, edges: np.ndarray) -> np.ndarray:
    """Block index of each time (the last block includes the stop)."""
    index = np.searchsorted(edges, times, side="right") - 1
    return np.clip(index, 0, len(edges) - 2)


def block_statistics(spikes: SpikeArrays, *, start_s: float, stop_s: float,
                     settings: StabilitySettings) -> tuple[pd.DataFrame, pd.DataFrame]:
    """``unit_blocks`` (one row per unit x block) and the per-unit drift test columns
    (``unit, rate_drift_pvalue, rate_drift_reason, n_blocks_tested``)."""
    edges = block_edges(start_s, stop_s, settings.block_s)
    n_blocks, n_units = len(edges) - 1, spikes.n_units
    lengths = np.diff(edges)
    if n_blocks < 1:
        return empty_blocks(), _untested(spikes.labels, "recording shorter than one block")
    size = n_units * n_blocks
    sums = dict.fromkeys(("n_spikes", "n_isi", "s1", "s2", "n_pairs", "cv2_sum", "sub_s1",
                          "sub_s2"), np.zeros(size))
    offsets = spikes.bounds()
    # units a few million spikes at a time (a cell never spans two units, so every cell's
    # sums come whole from one pass): memory bounded whatever the session's length
    for first, stop in unit_blocks(offsets):
        lo, hi = offsets[first], offsets[stop]
        part = _cell_sums(spikes.times[lo:hi], spikes.codes[lo:hi], edges=edges,
                          size=size, subwindow_s=settings.subwindow_s)
        sums = {key: sums[key] + part[key] for key in sums}
    n_spikes, n_isi = sums["n_spikes"], sums["n_isi"]
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_isi = sums["s1"] / n_isi
        var_isi = (sums["s2"] - n_isi * mean_isi**2) / (n_isi - 1)
        cv_sq = var_isi / mean_isi**2
        cv2 = sums["cv2_sum"] / sums["n_pairs"]
        mm = np.tile(np.floor(lengths / settings.subwindow_s + 1e-9), n_units)
        mean = sums["sub_s1"] / mm
        var = (sums["sub_s2"] - mm * mean**2) / (mm - 1)
        fano = np.where((mm >= 2) & (mean > 0), var / mean, np.nan)

    unit_index = np.repeat(np.arange(n_units), n_blocks)
    block_index = np.tile(np.arange(n_blocks), n_units)
    blocks = pd.DataFrame({
        "unit": spikes.labels[unit_index].astype(object),
        "block": block_index.astype(np.int64),
        "block_start_s": edges[:-1][block_index],
        "block_s": lengths[block_index],
        "n_spikes": n_spikes.astype(np.int64),
        "rate_hz": n_spikes / lengths[block_index],
        "isi_cv2": cv2,
        "fano": fano,
    })
    drift = _drift_test(spikes.labels, n_spikes.reshape(n_units, n_blocks),
                        n_isi.reshape(n_units, n_blocks), cv_sq.reshape(n_units, n_blocks),
                        lengths, block_s=settings.block_s)
    return blocks, drift


def empty_blocks() -> pd.DataFrame:
    """``unit_blocks`` without rows (same columns and types)."""
    return pd.DataFrame({"unit": pd.Series([], dtype=object),
                         "block": pd.Series([], dtype=np.int64),
                         **{c: pd.Series([], dtype=float) for c in ("block_start_s", "block_s")},
                         "n_spikes": pd.Series([], dtype=np.int64),
                         **{c: pd.Series([], dtype=float) for c in ("rate_hz", "isi_cv2",
                                                                    "fano")}})


def _cell_sums(times: np.ndarray, codes: np.ndarray, *, edges: np.ndarray, size: int,
               subwindow_s: float) -> dict[str, np.ndarray]:
    """Per unit x block cell (``code * n_blocks + block``) of the given spikes: spike count;
    count, sum and sum of squares of the ISIs inside the cell; count and sum of the CV2 terms
    of consecutive ISI pairs inside it (Holt et al. 1996); sum and sum of squares of the
    counts in its whole sub-windows of ``subwindow_s``."""
    n_blocks = len(edges) - 1
    block = _block_of(times, edges)
    cell = codes * np.int64(n_blocks) + block
    out = {"n_spikes": np.bincount(cell, minlength=size).astype(float)}
    isi = np.diff(times)
    same = cell[1:] == cell[:-1]
    inner, isi_cell = isi[same], cell[:-1][same]
    out["n_isi"] = np.bincount(isi_cell, minlength=size).astype(float)
    out["s1"] = np.bincount(isi_cell, weights=inner, minlength=size)
    out["s2"] = np.bincount(isi_cell, weights=inner * inner, minlength=size)
    pair = same[1:] & same[:-1]
    a, b = isi[:-1][pair], isi[1:][pair]
    pair_cell = cell[:-2][pair]
    with np.errstate(invalid="ignore", divide="ignore"):
        cv2_terms = 2.0 * np.abs(b - a) / (a + b)
    out["n_pairs"] = np.bincount(pair_cell, minlength=size).astype(float)
    out["cv2_sum"] = np.bincount(pair_cell, weights=np.nan_to_num(cv2_terms), minlength=size)
    # counts in whole sub-windows: runs of equal (cell, sub-window) keys, spikes being sorted
    per_block = np.floor(np.diff(edges) / subwindow_s + 1e-9).astype(np.int64)
    sub = np.floor((times - edges[block]) / subwindow_s + 1e-12).astype(np.int64)
    inside = sub < per_block[block]
    key = (cell * np.int64(max(int(per_block.max()), 1)) + sub)[inside]
    out["sub_s1"], out["sub_s2"] = np.zeros(size), np.zeros(size)
    if len(key):
        starts = np.flatnonzero(np.concatenate([[True], key[1:] != key[:-1]]))
        counts = np.diff(np.concatenate([starts, [len(key)]])).astype(float)
        run_cell = cell[inside][starts]
        out["sub_s1"] = np.bincount(run_cell, weights=counts, minlength=size)
        out["sub_s2"] = np.bincount(run_cell, weights=counts**2, minlength=size)
    return out


def _drift_test(labels: np.ndarray, counts: np.ndarray, n_isi: np.ndarray, cv_sq: np.ndarray,
                lengths: np.ndarray, *, block_s: float) -> pd.DataFrame:
    tested = lengths >= MIN_BLOCK_FRACTION * block_s
    counts, n_isi, cv_sq = counts[:, tested], n_isi[:, tested], cv_sq[:, tested]
    lengths = lengths[tested]
    n_tested = int(tested.sum())
    total = counts.sum(axis=1)
    rate = total / lengths.sum() if n_tested else np.zeros(len(labels))
    expected = rate[:, None] * lengths[None, :]
    # phi: CV^2 inside the blocks, each block weighted by its number of ISIs
    usable = (n_isi >= 2) & np.isfinite(cv_sq)
    weight = np.where(usable, n_isi - 1, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        phi = (weight * np.nan_to_num(cv_sq)).sum(axis=1) / weight.sum(axis=1)
        statistic = ((counts - expected) ** 2 / expected).sum(axis=1) / phi
    # imported here: scipy.special costs the metric, time-course and shared jobs 0.15 s at
    # start-up, and only this line uses it
    from scipy.special import chdtrc

    p = chdtrc(max(n_tested - 1, 1), statistic)
    reason = np.full(len(labels), "", dtype=object)
    low = (expected.min(axis=1) if n_tested else np.zeros(len(labels))) < MIN_BLOCK_COUNT
    reason[low] = f"under {MIN_BLOCK_COUNT:g} expected spikes in a block"
    reason[~np.isfinite(phi) & ~low] = "too few ISIs inside blocks"
    reason[(phi <= 0) & ~low] = "ISIs without variability (CV 0): no count variance to test"
    if n_tested < 2:
        reason[:] = "fewer than 2 blocks of the recording"
    p = np.where(reason == "", p, np.nan)
    return pd.DataFrame({"unit": labels, "rate_drift_pvalue": p,
                         "rate_drift_reason": reason.astype(str),
                         "n_blocks_tested": np.full(len(labels), n_tested, dtype=np.int64)})


def _untested(labels: np.ndarray, reason: str) -> pd.DataFrame:
    return pd.DataFrame({"unit": labels, "rate_drift_pvalue": np.full(len(labels), np.nan),
                         "rate_drift_reason": reason, "n_blocks_tested": 0})


def stable_flags(pvalues: np.ndarray, *, alpha: float) -> np.ndarray:
    """``stable``: the drift test ran and did not reject at ``alpha`` (untested units False)."""
    pvalues = np.asarray(pvalues, dtype=float)
    return np.isfinite(pvalues) & (pvalues >= alpha)
