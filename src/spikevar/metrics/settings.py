"""Config sections ``metrics`` and ``timecourse``: parameters of the per-unit measures."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class MetricSettings:
    """Config ``metrics``. The only place these defaults are written in the code."""

    #: refractoriness constant R of LvR, seconds (Shinomoto et al. 2009, PLoS Comput Biol)
    lvr_refractory_s: float = 0.005
    #: ISIs shorter than this count as refractory-period violations, seconds
    refractory_threshold_s: float = 0.0015
    #: the sorter's censored period after each spike, seconds (Hill et al. 2011 tC)
    censored_period_s: float = 0.0
    #: counting windows of the count Fano factor, seconds
    counting_windows_s: tuple[float, ...] = (0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0)


@dataclass(frozen=True)
class SlidingWindows:
    """Config ``timecourse``: counting windows ``[start + k step, start + k step + width)``.

    Windows are laid from ``start_s`` while they end at or before ``stop_s``.
    """

    start_s: float = -0.5
    stop_s: float = 1.0
    width_s: float = 0.1
    step_s: float = 0.025

    def left_edges(self) -> np.ndarray:
        n = int(np.floor((self.stop_s - self.start_s - self.width_s) / self.step_s + 1e-9)) + 1
        return self.start_s + self.step_s * np.arange(max(n, 0))


@dataclass(frozen=True)
class StabilitySettings:
    """Config ``stability``: blocks of the recording and the drift test's level."""

    #: length of the consecutive blocks of unit_blocks and of the drift test, seconds
    block_s: float = 60.0
    #: sub-windows of the within-block count Fano factor, seconds
    subwindow_s: float = 1.0
    #: a unit is ``stable`` when its rate_drift_pvalue is at least this
    alpha: float = 0.01


@dataclass(frozen=True)
class InclusionSettings:
    """Config ``inclusion``: which units the population and group statistics use. Every
    default keeps every unit."""

    #: fewest spikes in the recording (0: no limit)
    min_spikes: int = 0
    #: lowest mean rate over the recording span, Hz (0: no limit)
    min_rate_hz: float = 0.0
    #: largest fraction of ISIs shorter than metrics.refractory_threshold_s (null: no limit)
    max_violation_fraction: float | None = None
    #: largest contamination estimate, contamination_hill (Hill et al. 2011; null: no limit)
    max_contamination: float | None = None
    #: accepted labels of the sheet's unit_labels tables, e.g. [good] (null: every unit)
    labels: tuple[str, ...] | None = None
    #: fewest trials of every condition while the unit was recorded (0: no limit)
    min_trials_per_condition: int = 0
    #: leave out units whose rate drifts over the session (units.stable false)
    require_stable: bool = False
