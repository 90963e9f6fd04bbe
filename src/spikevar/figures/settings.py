"""Config section ``figures``."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FigureSettings:
    """Config ``figures``."""

    #: draw the per-session recovery figure (false: not drawn; the cohort figures still are)
    session_recovery: bool = True
    #: units drawn per session in the recovery figure (the first ones by unit id)
    max_units_per_session: int = 12
