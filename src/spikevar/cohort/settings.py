"""Config sections ``cohort`` and ``bootstrap``."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class CohortSettings:
    """Config ``cohort``."""

    #: also write CSV copies of the cohort tables
    csv_copies: bool = True


@dataclass(frozen=True)
class BootstrapSettings:
    """Config ``bootstrap``: the hierarchical bootstrap of the group statistics."""

    n_boot: int = 2000
