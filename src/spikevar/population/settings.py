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


#: default config ``epochs``: named windows relative to each event, seconds
DEFAULT_EPOCHS = {"baseline": (-0.3, 0.0), "response": (0.05, 0.35)}


@dataclass(frozen=True)
class SharedSettings:
    """Config ``shared``: factor analysis of the trial x unit counts (shared variability)."""

    #: largest number of factors the cross-validation tries
    max_factors: int = 10
    #: folds of the cross-validated likelihood that chooses the number of factors
    cv_folds: int = 5
    #: fewer trials than this in a condition: no factor analysis (NaN with a reason)
    min_trials: int = 20
    #: the number of factors used in every window of shared_timecourse: "largest" (the largest
    #: number chosen in any epoch of the condition) or the name of one epoch. An epoch where
    #: the event quenches shared variability chooses 0 factors, and 0 factors would make the
    #: percent shared of every window 0 by construction, so the default is "largest".
    factor_epoch: str = "largest"
    #: also compute the event-aligned shared_timecourse (a factor analysis in every window of
    #: the config timecourse; the gain variance uses those windows either way)
    timecourse: bool = True


def epochs_from(value) -> dict[str, tuple[float, float]]:
    """Config ``epochs`` (name -> [start_s, stop_s]) checked; empty or missing: the defaults."""
    from spikevar.base.errors import SpikevarInputError

    if not value:
        return dict(DEFAULT_EPOCHS)
    if not isinstance(value, dict):
        raise SpikevarInputError("The config key 'epochs' is not a mapping of names to windows.",
                                 fix="write e.g. epochs: {baseline: [-0.3, 0.0], response: "
                                     "[0.05, 0.35]}", where="config")
    out = {}
    for name, window in value.items():
        ok = isinstance(window, (list, tuple)) and len(window) == 2 and all(
            isinstance(v, (int, float)) and not isinstance(v, bool) for v in window)
        if not ok or not window[0] < window[1]:
            raise SpikevarInputError(
                f"The config epoch '{name}' is {window!r}.",
                fix="give [start_s, stop_s] in seconds relative to the event, start before "
                    "stop.", where="config")
        out[str(name)] = (float(window[0]), float(window[1]))
    return out
