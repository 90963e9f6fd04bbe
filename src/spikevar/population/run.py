"""Entry point of the population_fano rule: read the cohort time course, compute, write."""

from __future__ import annotations

import logging
from dataclasses import asdict

from spikevar.base.conditions import with_factor_columns
from spikevar.base.parquet_io import frame_to_arrow, read_frame, write_parquet_atomic
from spikevar.population.fano import population_fano_table
from spikevar.population.settings import MeanMatchSettings

log = logging.getLogger(__name__)

#: below this many time-course rows the resamples run in one process (a second worker's start
#: would cost more than it saves)
PARALLEL_MIN_CELLS = 200_000


def run_population_fano(*, timecourse_path, output, settings: MeanMatchSettings,
                        seed: int, factors: tuple[str, ...] = (), workers: int = 1) -> None:
    """``workers``: processes sharing the subject resamples, used from
    ``PARALLEL_MIN_CELLS`` unit-window rows on (the table is the same for any number)."""
    timecourse = read_frame(timecourse_path)
    if "included" in timecourse.columns:  # the cohort dataset: included units only
        timecourse = timecourse[timecourse["included"].astype(bool)]
    workers = workers if len(timecourse) >= PARALLEL_MIN_CELLS else 1
    table = with_factor_columns(population_fano_table(timecourse, settings=settings, seed=seed,
                                                      workers=workers),
                                tuple(factors))
    write_parquet_atomic(frame_to_arrow(table), output,
                         metadata={"settings": asdict(settings), "seed": seed})
    log.info("population Fano factor: %d rows", len(table))

