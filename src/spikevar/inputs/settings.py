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
