"""The in-memory form of one session's spikes: unit labels, per-spike unit codes, times."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from spikevar.base.errors import SpikevarInputError
from spikevar.base.unit_order import unit_sort_order


@dataclass(frozen=True)
class SpikeArrays:
    """Spikes sorted by unit then time.

    Attributes
    ----------
    labels
        Unit ids (strings), in sorted order; ``labels[codes[i]]`` is spike i's unit.
    codes
        int64 unit index per spike, non-decreasing.
    times
        float64 spike times in seconds, increasing within each unit.
    """

    labels: np.ndarray
    codes: np.ndarray
    times: np.ndarray

    @property
    def n_units(self) -> int:
        return len(self.labels)

    def bounds(self) -> np.ndarray:
        """``(n_units + 1)`` offsets: unit k's spikes are ``times[b[k]:b[k + 1]]``."""
        return np.searchsorted(self.codes, np.arange(self.n_units + 1), side="left")

    @classmethod
    def from_arrays(cls, units, times) -> SpikeArrays:
        """Build from unsorted unit ids and times (used by tests and simulations)."""
        units = np.asarray(units).astype(str)
        times = np.asarray(times, dtype=np.float64)
        labels, codes = np.unique(units, return_inverse=True)
        order = unit_sort_order(labels)
        rank = np.empty(len(order), dtype=np.int64)
        rank[order] = np.arange(len(order))
        labels, codes = labels[order], rank[codes]
        order = np.lexsort((times, codes))
        return cls(labels=labels, codes=codes[order].astype(np.int64), times=times[order])


def load_spikes(path: str | Path, *, session: str | None = None) -> SpikeArrays:
    """Read a normalised ``spikes.parquet`` into :class:`SpikeArrays` (no per-row Python)."""
    try:
        table = pq.read_table(path, columns=["unit", "time_s"], read_dictionary=["unit"])
    except (pa.ArrowException, OSError) as exc:
        raise SpikevarInputError(
            f"The normalised spike table is damaged or unreadable ({str(exc).splitlines()[0]}).",
            fix="delete it and rerun; spikevar will recreate it from the raw file.",
            session=session, path=str(path)) from None
    table = table.unify_dictionaries()
    unit = table.column("unit")
    if unit.num_chunks == 0 or table.num_rows == 0:
        return SpikeArrays(np.array([], dtype=str), np.zeros(0, np.int64), np.zeros(0))
    labels = unit.chunk(0).dictionary.to_numpy(zero_copy_only=False).astype(str)
    codes = np.concatenate([c.indices.to_numpy(zero_copy_only=False) for c in unit.chunks])
    times = table.column("time_s").to_numpy()
    order = unit_sort_order(labels)
    if not np.array_equal(order, np.arange(len(labels))):
        rank = np.empty_like(order)
        rank[order] = np.arange(len(order))
        labels, codes = labels[order], rank[codes]
    codes = codes.astype(np.int64, copy=False)
    if len(codes) > 1 and np.any(np.diff(codes) < 0):
        raise SpikevarInputError(
            "The normalised spike table is not sorted by unit.",
            fix="delete it and rerun ingestion.", session=session, path=str(path))
    return SpikeArrays(labels=labels, codes=codes, times=np.asarray(times, dtype=np.float64))


def recording_span(spikes: SpikeArrays, declared: tuple[float, float] | None
                   ) -> tuple[float, float]:
    """The session's one span: the declared ``(start_s, start_s + duration_s)`` from the
    sheet, else first to last spike of the session (all units).

    Every rate, count window, censored interval and event-window check uses this span.
    Ingestion has already refused spikes and events outside a declared span.
    """
    if declared is not None:
        return float(declared[0]), float(declared[1])
    if len(spikes.times) == 0:
        return 0.0, 0.0
    return float(spikes.times.min()), float(spikes.times.max())
