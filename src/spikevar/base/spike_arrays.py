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


def load_spikes(path: str | Path, *, session: str | None = None,
                units: list[str] | None = None) -> SpikeArrays:
    """Read a normalised ``spikes.parquet`` into :class:`SpikeArrays` (no per-row Python).

    ``units``: read only these units' spikes (a Parquet row filter: the other units' times are
    never held in memory). The labels stay those of the whole session, so other units come
    back with no spikes.
    """
    try:
        labels, codes, times = (_read_all(path) if units is None
                                else _read_some(path, [str(u) for u in units]))
    except (pa.ArrowException, OSError) as exc:
        raise SpikevarInputError(
            f"The normalised spike table is damaged or unreadable ({str(exc).splitlines()[0]}).",
            fix="delete it and rerun; spikevar will recreate it from the raw file.",
            session=session, path=str(path)) from None
    if len(times) == 0:
        return SpikeArrays(np.array([], dtype=str), np.zeros(0, np.int64), np.zeros(0))
    order = unit_sort_order(labels)
    if not np.array_equal(order, np.arange(len(labels))):
        rank = np.empty_like(order)
        rank[order] = np.arange(len(order))
        labels, codes = labels[order], rank[codes]
    # compared, not differenced: no int64 temporary the size of the table
    if len(codes) > 1 and np.any(codes[1:] < codes[:-1]):
        raise SpikevarInputError(
            "The normalised spike table is not sorted by unit.",
            fix="delete it and rerun ingestion.", session=session, path=str(path))
    codes = codes.astype(np.int64, copy=False)
    return SpikeArrays(labels=labels, codes=codes, times=times)


def _read_all(path) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Labels (first-seen order), int32 codes and float64 times of every spike, read one row
    group at a time into arrays made once: the peak memory is the arrays plus one row group,
    not the whole Arrow table beside its NumPy copy."""
    file = pq.ParquetFile(path, read_dictionary=["unit"])
    n = file.metadata.num_rows
    times = np.empty(n, dtype=np.float64)
    codes = np.empty(n, dtype=np.int32)
    code_of: dict[str, int] = {}
    pos = 0
    for group in range(file.num_row_groups):
        part = file.read_row_group(group, columns=["unit", "time_s"])
        for chunk in part.column("unit").chunks:
            # each row group has its own dictionary: map its entries (units, not spikes)
            words = chunk.dictionary.to_numpy(zero_copy_only=False).astype(str)
            mapping = np.array([code_of.setdefault(w, len(code_of)) for w in words],
                               dtype=np.int32)
            indices = chunk.indices.to_numpy(zero_copy_only=False)
            codes[pos:pos + len(indices)] = mapping[indices] if len(mapping) else 0
            pos += len(indices)
        column = part.column("time_s")
        times[pos - part.num_rows:pos] = column.to_numpy()
    pa.default_memory_pool().release_unused()  # the row groups' buffers back to the system
    labels = np.array(list(code_of), dtype=str) if code_of else np.array([], dtype=str)
    return labels, codes, times


def _read_some(path, units: list[str]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """As :func:`_read_all` for the spikes of ``units`` only (a Parquet row filter); the labels
    are the whole session's."""
    table = pq.read_table(path, columns=["unit", "time_s"], read_dictionary=["unit"],
                          filters=[("unit", "in", units)]).unify_dictionaries()
    unit = table.column("unit")
    if unit.num_chunks == 0:
        return np.array([], dtype=str), np.zeros(0, np.int32), np.zeros(0)
    labels = unit.chunk(0).dictionary.to_numpy(zero_copy_only=False).astype(str)
    codes = np.concatenate([c.indices.to_numpy(zero_copy_only=False) for c in unit.chunks]
                           ) if table.num_rows else np.zeros(0, np.int32)
    return labels, codes, np.asarray(table.column("time_s").to_numpy(), dtype=np.float64)


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
