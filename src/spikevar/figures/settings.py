"""Config section ``figures``."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FigureSettings:
    """Config ``figures``."""

    #: units drawn per session in the recovery figure (the first ones by unit id)
    max_units_per_session: int = 12
