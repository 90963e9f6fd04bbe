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
    #: the condition column, or a list of factor columns (the condition label combines them:
    #: ``contrast=high; side=left``, and each factor stays its own column)
    event_condition: str | tuple[str, ...] = "condition"

    @classmethod
    def from_config(cls, columns: dict | None) -> ColumnNames:
        names = settings_from(cls, columns, section="columns")
        if not isinstance(names.event_condition, str):
            factors = tuple(names.event_condition)
            if not factors or not all(isinstance(f, str) and f for f in factors):
                from spikevar.base.errors import SpikevarInputError

                raise SpikevarInputError(
                    "columns.event_condition must be one column name or a list of them.",
                    fix="write e.g. event_condition: condition, or event_condition: "
                        "[contrast, side].", where="config")
            names = ColumnNames(unit=names.unit, time=names.time,
                                event_time=names.event_time, event_condition=factors)
        return names


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
