"""Config section ``recovery``: which fits to run and how."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class RecoverySettings:
    """Config ``recovery``."""

    min_intervals: int = 50
    slow_rate_bandwidth_s: float = 2.0
    modulated_fit: bool = True
    tau_interval: bool = True
    modulated_tau_interval: bool = False
