"""Segment arithmetic on arrays laid out unit after unit (the layout of SpikeArrays)."""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np


def segment_sums(values: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """Sum of ``values[offsets[k]:offsets[k + 1]]`` for every k (0 for empty segments).

    ``offsets`` is non-decreasing with ``offsets[-1] == len(values)``.
    """
    n = len(offsets) - 1
    out = np.zeros(n, dtype=np.float64)
    starts = offsets[:-1]
    nonempty = offsets[1:] > starts
    if nonempty.any():
        out[nonempty] = np.add.reduceat(values, starts[nonempty])
    return out


def drop_boundaries(diffs: np.ndarray, offsets: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Remove from ``np.diff(x)`` the entries that straddle two segments of ``x``.

    Returns the within-segment differences and their offsets (segment k of ``x`` with ``m``
    elements contributes ``max(m - 1, 0)`` differences).
    """
    sizes = np.diff(offsets)
    inner = offsets[1:-1]
    inner = inner[(inner > 0) & (inner < len(diffs) + 1)] - 1
    kept = np.delete(diffs, inner) if len(inner) else diffs
    new_sizes = np.maximum(sizes - 1, 0)
    return kept, np.concatenate([[0], np.cumsum(new_sizes)])


def unit_blocks(offsets: np.ndarray, *, max_items: int = 2_000_000) -> Iterator[tuple[int, int]]:
    """Split units into consecutive blocks of about ``max_items`` elements (bounds memory).

    Yields ``(first_unit, stop_unit)``; a unit is never split.
    """
    n_units = len(offsets) - 1
    first = 0
    while first < n_units:
        target = offsets[first] + max_items
        stop = int(np.searchsorted(offsets, target, side="right")) - 1
        stop = min(max(stop, first + 1), n_units)
        yield first, stop
        first = stop
