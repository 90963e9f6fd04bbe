"""Rule report_pages: the report's start page and the group tables as HTML pages."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.cohort.report_pages import run_report_pages  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="report_pages") as sm:  # noqa: F821
    run_report_pages(units=sm.input.units, summary=sm.input.group_summary,
                     differences=sm.input.group_differences, sessions=list(sm.params.sessions),
                     alignment=sm.params.alignment, categories=list(sm.params.categories),
                     start_out=sm.output.start, summary_out=sm.output.group_summary,
                     differences_out=sm.output.group_differences)
