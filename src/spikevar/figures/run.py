"""Entry point of the cohort_figures rule: read the cohort tables, draw the figure set."""

from __future__ import annotations

import logging
from pathlib import Path

from spikevar.base.parquet_io import read_frame
from spikevar.cohort.group_stats import unit_metric_frame
from spikevar.figures.cohort import draw_cohort_figures

log = logging.getLogger(__name__)

#: the only columns the figures read from the large cohort tables
FIGURE_COLUMNS = {"unit_blocks": ["session", "group", "unit", "block_start_s", "rate_hz"]}


def run_cohort_figures(*, inputs: dict[str, str], outputs: dict[str, str],
                       workers: int = 1) -> None:
    """Read the cohort tables and draw the figure set over ``workers`` processes."""
    tables = {name: read_frame(path, columns=FIGURE_COLUMNS.get(name))
              for name, path in inputs.items()}
    frame = unit_metric_frame(tables["units"], tables["count_fano"], tables["recovery"])
    draw_cohort_figures(tables=tables, frame=frame, summary=tables["group_summary"],
                        outputs=outputs, workers=workers)
    log.info("cohort figures written: %s", ", ".join(Path(p).name for p in outputs.values()))
