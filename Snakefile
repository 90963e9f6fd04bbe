# spikevar workflow: wiring only. All computation lives in src/spikevar; see DEVELOPERS.md.
import os
import sys
from pathlib import Path

from snakemake.utils import min_version, validate

min_version("9.0")

REPO = Path(workflow.basedir)
sys.path.insert(0, str(REPO / "src"))
# each job uses one core; multi-threaded BLAS in parallel jobs only oversubscribes the machine
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")


configfile: str(REPO / "config" / "config.yaml")


validate(config, str(REPO / "workflow" / "schemas" / "config.schema.yaml"))


include: "workflow/rules/common.smk"
include: "workflow/rules/ingest.smk"
include: "workflow/rules/metrics.smk"
include: "workflow/rules/recovery.smk"
include: "workflow/rules/cohort.smk"
include: "workflow/rules/statistics.smk"
include: "workflow/rules/figures.smk"
include: "workflow/rules/handoff.smk"


localrules:
    all,


rule all:
    input:
        expand(
            f"{RESULTS}/sessions/{{session}}/{{table}}.parquet",
            session=SESSIONS,
            table=SESSION_TABLES,
        ),
        expand(f"{RESULTS}/figures/sessions/{{session}}_recovery.png", session=SESSIONS),
        expand(f"{RESULTS}/figures/{{figure}}.png", figure=COHORT_FIGURES),
        f"{RESULTS}/datapackage.json",
    default_target: True


onerror:
    from spikevar.pipeline.failures import write_partial_cohort

    try:
        for failure in write_partial_cohort(RESULTS, SESSIONS, cohort_metadata(SHEET)):
            print(
                f"spikevar: session {failure['session']} failed in {failure['rule']}: "
                f"{failure['reason']}"
            )
    except Exception as err:  # reporting must never hide the original error
        print(f"spikevar: could not assemble the partial cohort: {err}")
