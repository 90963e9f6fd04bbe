# spikevar workflow: wiring only. All computation lives in src/spikevar; see DEVELOPERS.md.
import os
import sys
from pathlib import Path

from snakemake.exceptions import WorkflowError
from snakemake.utils import min_version, validate

min_version("9.0")

REPO = Path(workflow.basedir)
sys.path.insert(0, str(REPO / "src"))
# each job uses one core; multi-threaded BLAS in parallel jobs only oversubscribes the machine
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")


configfile: str(REPO / "config" / "config.yaml")


from spikevar.base.errors import SpikevarInputError
from spikevar.pipeline.settings import check_config

try:  # unknown keys first, with the closest valid key named; then types and ranges
    check_config(config)
except SpikevarInputError as err:
    raise WorkflowError(f"spikevar: {err}") from None
validate(config, str(REPO / "workflow" / "schemas" / "config.schema.yaml"))


include: "workflow/rules/common.smk"


# the per-session stages: a job each (a setting reruns only the stages that read it), or one
# job per session (for many small sessions); config session_jobs
if config["session_jobs"] == "by_stage":

    include: "workflow/rules/ingest.smk"
    include: "workflow/rules/metrics.smk"
    include: "workflow/rules/selection.smk"
    include: "workflow/rules/shared.smk"
    include: "workflow/rules/recovery.smk"

else:

    include: "workflow/rules/whole_session.smk"


include: "workflow/rules/unit_labels.smk"
include: "workflow/rules/cohort.smk"
include: "workflow/rules/statistics.smk"
include: "workflow/rules/figures.smk"
include: "workflow/rules/handoff.smk"


# The report's start page summarises the finished run (rule report_pages); before it exists,
# a fixed page says how to get it.
START_PAGE = Path(LAYOUT.report_page("start_page.rst")).resolve()


report: str(START_PAGE) if START_PAGE.exists() else "workflow/report/start_page_pending.rst"


localrules:
    all,


rule all:
    input:
        [LAYOUT.session_table(s, t) for s in SESSIONS for t in SESSION_TABLES],
        [
            LAYOUT.recovery_figure(s, fmt)
            for s in SESSIONS
            for fmt in FIGURE_FORMATS
            if config["figures"]["session_recovery"]
        ],
        [LAYOUT.cohort_figure(f, fmt) for f in COHORT_FIGURES for fmt in FIGURE_FORMATS],
        LAYOUT.datapackage(),
        [LAYOUT.report_page(name) for name in REPORT_PAGES],
    default_target: True


onerror:
    from spikevar.pipeline.failures import failure_line, write_partial_cohort

    try:
        for failure in write_partial_cohort(LAYOUT, SESSIONS, cohort_metadata(SHEET)):
            print(failure_line(failure))
    except Exception as err:  # reporting must never hide the original error
        print(f"spikevar: could not assemble the partial cohort: {err}")
