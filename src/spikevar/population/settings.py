"""Config section ``population``: mean matching and its resampling."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class MeanMatchSettings:
    """Config ``population``."""

    n_bins: int = 10
    n_repeats: int = 10
    n_boot: int = 200
    min_units: int = 5
