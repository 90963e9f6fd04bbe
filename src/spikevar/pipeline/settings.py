"""Which settings object reads which config section, and the strict check of a whole config.

Each stage keeps its settings in a light ``settings`` module (dataclasses only, no science imports),
so this check costs the dry run nothing. Called by the Snakefile before anything else, so a typo in
any key stops the run at once with the closest valid key named (the JSON Schema check that follows
would only say "additional properties are not allowed").
"""

from __future__ import annotations

from collections.abc import Mapping

from spikevar.base.errors import SpikevarInputError
from spikevar.base.settings import settings_from, unknown_key_error
from spikevar.cohort.settings import BootstrapSettings, CohortSettings
from spikevar.figures.settings import FigureSettings
from spikevar.inputs.settings import ColumnNames, SpikeArrayFiles, UnitLabelColumns
from spikevar.metrics.settings import (
    InclusionSettings,
    MetricSettings,
    SlidingWindows,
    StabilitySettings,
)
from spikevar.population.settings import MeanMatchSettings, SharedSettings, epochs_from
from spikevar.recovery.settings import RecoverySettings

#: config section -> the one settings dataclass that reads it
SECTIONS = {
    "columns": ColumnNames,
    "spike_arrays": SpikeArrayFiles,
    "metrics": MetricSettings,
    "stability": StabilitySettings,
    "inclusion": InclusionSettings,
    "unit_labels": UnitLabelColumns,
    "timecourse": SlidingWindows,
    "recovery": RecoverySettings,
    "figures": FigureSettings,
    "cohort": CohortSettings,
    "population": MeanMatchSettings,
    "bootstrap": BootstrapSettings,
    "shared": SharedSettings,
}
#: top-level keys that are single values, not sections
TOP_LEVEL = ("sessions", "results", "time_unit", "sampling_rate_hz", "seed", "alignments",
             "epochs", "session_jobs")


def check_config(config: Mapping) -> dict:
    """Refuse unknown keys anywhere in ``config``; return the settings object of each section."""
    valid = (*TOP_LEVEL, *SECTIONS)
    for key in config:
        if key not in valid:
            raise unknown_key_error(key, valid, section=None)
    built = {}
    for name, cls in SECTIONS.items():
        section = config.get(name) or {}
        if not isinstance(section, Mapping):
            raise SpikevarInputError(f"The config section '{name}' is not a mapping of keys.",
                                     fix=f"write '{name}:' followed by indented 'key: value' "
                                         "lines.", where="config")
        built[name] = settings_from(cls, section, section=name)
    built["epochs"] = epochs_from(config.get("epochs"))
    factor_epoch = built["shared"].factor_epoch
    if factor_epoch != "largest" and factor_epoch not in built["epochs"]:
        raise SpikevarInputError(
            f"shared.factor_epoch is '{factor_epoch}', which is not one of the config epochs.",
            fix=f"use 'largest' or one of {', '.join(built['epochs'])}, or add an epoch of "
                "that name.",
            where="config")
    return built
