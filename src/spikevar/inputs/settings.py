"""Config section ``columns``: the names of the raw columns."""

from __future__ import annotations

from dataclasses import dataclass

from spikevar.base.settings import settings_from


@dataclass(frozen=True)
class ColumnNames:
    """Names of the raw columns (config ``columns``)."""

    unit: str = "unit"
    time: str = "time"
    event_time: str = "time"
    event_condition: str = "condition"

    @classmethod
    def from_config(cls, columns: dict | None) -> ColumnNames:
        return settings_from(cls, columns, section="columns")


@dataclass(frozen=True)
class UnitLabelColumns:
    """Config ``unit_labels``: column names of the sheet's unit label tables."""

    #: the unit id column (ids as in the spike table)
    unit: str = "unit"
    #: the label column (e.g. good, mua, noise)
    label: str = "label"


@dataclass(frozen=True)
class SpikeArrayFiles:
    """Config ``spike_arrays``: file names inside a sheet ``spikes`` folder of NumPy arrays."""

    #: every spike's time (or sample index, with time_unit samples), one value per spike
    times: str = "times.npy"
    #: every spike's unit id (integers or text), same length as times
    units: str = "units.npy"
