"""Entry points of the cohort statistics rules: group_summary (unit metrics and the shared
metrics of each session, by group) and shared_statistics (shared variability over time and
against rate, from the cohort datasets one session at a time)."""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from spikevar.base.conditions import with_factor_columns
from spikevar.base.parquet_io import (
    dataset_parts,
    frame_to_arrow,
    read_frame,
    write_parquet_atomic,
)
from spikevar.cohort.group_stats import group_summary, unit_metric_frame
from spikevar.cohort.settings import BootstrapSettings

log = logging.getLogger(__name__)

#: strata of the shared metrics; empty for the unit metrics
STRATA = ("alignment", "condition", "epoch")


def run_group_summary(*, units, count_fano, recovery, population_structure, gain_variance,
                      summary_out, differences_out, settings: BootstrapSettings,
                      seed: int, factors: tuple[str, ...] = ()) -> None:
    from spikevar.cohort.shared_stats import shared_group_summary

    frame = unit_metric_frame(read_frame(units), read_frame(count_fano), read_frame(recovery))
    rng = np.random.default_rng(seed)
    summary, differences = group_summary(frame, n_boot=settings.n_boot, rng=rng)
    gain = read_frame(gain_variance)
    if "included" in gain.columns:
        gain = gain[gain["included"].astype(bool)]
    s_sum, s_diff = shared_group_summary(read_frame(population_structure), gain,
                                         n_boot=settings.n_boot, rng=rng)
    summary = _with_strata(summary, s_sum, lead=["metric", "metric_label"])
    differences = _with_strata(differences, s_diff, lead=["metric"])
    summary = with_factor_columns(summary, tuple(factors))
    differences = with_factor_columns(differences, tuple(factors))
    meta = {"n_boot": settings.n_boot, "seed": seed, "levels": "subject > session > unit"}
    write_parquet_atomic(frame_to_arrow(summary), summary_out, metadata=meta)
    write_parquet_atomic(frame_to_arrow(differences), differences_out, metadata=meta)
    log.info("group summary: %d rows; differences: %d rows", len(summary), len(differences))


def _with_strata(units: pd.DataFrame, shared: pd.DataFrame, *, lead: list[str]) -> pd.DataFrame:
    units = units.assign(**{k: "" for k in STRATA})
    frame = pd.concat([units, shared], ignore_index=True) if len(shared) else units
    for k in STRATA:
        frame[k] = frame[k].astype(str)
    order = [*lead, *STRATA]
    return frame[order + [c for c in frame.columns if c not in order]]


def run_shared_statistics(*, timecourse, pairs, over_time_out, by_rate_out,
                          settings: BootstrapSettings, seed: int,
                          factors: tuple[str, ...] = ()) -> None:
    from spikevar.cohort.shared_stats import r_sc_by_rate, shared_over_time

    rng = np.random.default_rng([seed, 13])
    over_time = shared_over_time(dataset_parts(timecourse), n_boot=settings.n_boot, rng=rng)
    by_rate = r_sc_by_rate(dataset_parts(pairs), n_boot=settings.n_boot, rng=rng)
    over_time = with_factor_columns(over_time, tuple(factors))
    by_rate = with_factor_columns(by_rate, tuple(factors))
    meta = {"n_boot": settings.n_boot, "seed": seed,
            "levels": "subject > session (each session summarised first)"}
    write_parquet_atomic(frame_to_arrow(over_time), over_time_out, metadata=meta)
    write_parquet_atomic(frame_to_arrow(by_rate), by_rate_out, metadata=meta)
    log.info("shared variability over time: %d rows; r_sc by rate: %d rows", len(over_time),
             len(by_rate))
