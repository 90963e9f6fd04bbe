"""Entry points of the cohort-level rules (each reads Parquet, calls the package, writes)."""

from __future__ import annotations

import logging
from pathlib import Path

import pandas as pd
import pyarrow as pa

from spikevar.figures_cohort import draw_cohort_figures
from spikevar.group_stats import group_summary, unit_metric_frame
from spikevar.parquet_io import frame_to_arrow, read_parquet_checked, write_parquet_atomic
from spikevar.population_fano import MeanMatchSettings, population_fano_table

log = logging.getLogger(__name__)

FAILED_SCHEMA = pa.schema([("session", pa.string()), ("rule", pa.string()),
                           ("reason", pa.string())])


def read_frame(path) -> pd.DataFrame:
    return read_parquet_checked(path).to_pandas()


def run_population_fano(*, timecourse_path, output, settings: dict, seed: int) -> None:
    timecourse = read_frame(timecourse_path)
    table = population_fano_table(timecourse, settings=MeanMatchSettings(**settings), seed=seed)
    write_parquet_atomic(frame_to_arrow(table), output,
                         metadata={"settings": settings, "seed": seed})
    log.info("population Fano factor: %d rows", len(table))


def run_group_summary(*, units, count_fano, recovery, summary_out, differences_out,
                      n_boot: int, seed: int) -> None:
    frame = unit_metric_frame(read_frame(units), read_frame(count_fano), read_frame(recovery))
    summary, differences = group_summary(frame, n_boot=n_boot, seed=seed)
    meta = {"n_boot": n_boot, "seed": seed, "levels": "subject > session > unit"}
    write_parquet_atomic(frame_to_arrow(summary), summary_out, metadata=meta)
    write_parquet_atomic(frame_to_arrow(differences), differences_out, metadata=meta)
    log.info("group summary: %d rows; differences: %d rows", len(summary), len(differences))


def run_cohort_figures(*, inputs: dict[str, str], outputs: dict[str, str]) -> None:
    tables = {name: read_frame(path) for name, path in inputs.items()}
    frame = unit_metric_frame(tables["units"], tables["count_fano"], tables["recovery"])
    draw_cohort_figures(tables=tables, frame=frame, summary=tables["group_summary"],
                        outputs=outputs)
    log.info("cohort figures written: %s", ", ".join(Path(p).name for p in outputs.values()))


def write_failed_sessions(rows: list[dict], output) -> None:
    """The ``failed_sessions`` table (empty, with its schema, when nothing failed)."""
    table = pa.Table.from_pylist(rows, schema=FAILED_SCHEMA)
    write_parquet_atomic(table, output, metadata={"kind": "failed sessions"})
