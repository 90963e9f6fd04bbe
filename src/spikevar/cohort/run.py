"""Entry point of the group_summary rule: read the cohort unit tables, compare groups, write."""

from __future__ import annotations

import logging

from spikevar.base.parquet_io import frame_to_arrow, read_frame, write_parquet_atomic
from spikevar.cohort.group_stats import group_summary, unit_metric_frame
from spikevar.cohort.settings import BootstrapSettings

log = logging.getLogger(__name__)


def run_group_summary(*, units, count_fano, recovery, summary_out, differences_out,
                      settings: BootstrapSettings, seed: int) -> None:
    frame = unit_metric_frame(read_frame(units), read_frame(count_fano), read_frame(recovery))
    summary, differences = group_summary(frame, n_boot=settings.n_boot, seed=seed)
    meta = {"n_boot": settings.n_boot, "seed": seed, "levels": "subject > session > unit"}
    write_parquet_atomic(frame_to_arrow(summary), summary_out, metadata=meta)
    write_parquet_atomic(frame_to_arrow(differences), differences_out, metadata=meta)
    log.info("group summary: %d rows; differences: %d rows", len(summary), len(differences))
