"""Config section ``population``: mean matching and its resampling."""

from __future__ import annotations

from dataclasses import dataclass

MATCH_SCOPES = ("cohort", "group", "series")


@dataclass(frozen=True)
class MeanMatchSettings:
    """Config ``population``."""

    n_bins: int = 10
    n_repeats: int = 10
    n_boot: int = 200
    min_units: int = 5
    #: which series share one common mean-count distribution: "cohort" (every group and
    #: condition: compared series are matched to the same distribution), "group" (the
    #: conditions of each group) or "series" (each group x condition on its own)
    match_across: str = "cohort"

    def __post_init__(self):
        if self.match_across not in MATCH_SCOPES:
            from spikevar.base.errors import SpikevarInputError

            raise SpikevarInputError(
                f"population.match_across is '{self.match_across}'.",
                fix=f"use one of {', '.join(MATCH_SCOPES)}.", where="config")
