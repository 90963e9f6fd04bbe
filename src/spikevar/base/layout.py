"""The results layout: every path a rule writes, in one place.

The ``.smk`` files build their ``output:`` and ``log:`` paths from :class:`ResultsLayout` (with
``"{session}"`` as the wildcard), and the package reads the same layout when it looks for a
session's outputs or a job's failure record. Names of tables and figures are listed here once.

::

    {results}/sessions/{session}/{table}.parquet      normalised inputs and per-session tables
    {results}/cohort/{table}.parquet (+ .csv)         cohort tables
    {results}/cohort/{dataset}/{session}.parquet      cohort datasets (rows grow with unit pairs
                                                      or windows): one file per session
    {results}/figures/sessions/{session}_recovery.{png,svg}
    {results}/figures/{figure}.{png,svg}              cohort figures
    {results}/handoff/...  {results}/datapackage.json hand-off
    {results}/report/start_page.rst, {table}.html    pages of ``snakemake --report``
    {results}/logs/sessions/{session}/{step}.log      one log per job, and beside it
    {results}/logs/sessions/{session}/{step}.failure.json   the failure record of a failed job
    {results}/logs/cohort/{step}.log (+ .failure.json)
    {results}/benchmarks/...                          Snakemake's time and memory per job
"""

from __future__ import annotations

from dataclasses import dataclass

#: session ids: the sheet refuses others, and the workflow's ``session`` wildcard is constrained
SESSION_ID_PATTERN = r"[A-Za-z0-9][A-Za-z0-9_.-]*"

#: normalised inputs written by ingestion
NORMALISED_TABLES = ("spikes", "events")
#: per-session tables that are concatenated into cohort tables
#: per-session tables of shared variability (rule session_shared)
SHARED_TABLES = ("pair_correlations", "shared_variance", "population_structure",
                 "shared_timecourse", "gain_variance")
#: per-session tables of rule session_metrics
METRIC_TABLES = ("units", "count_fano", "unit_blocks")
SESSION_TABLES = (*METRIC_TABLES, "unit_selection", "fano_timecourse", "recovery",
                  *SHARED_TABLES)
#: per-unit tables: every unit kept, and their cohort form gains ``included`` from the
#: session's unit_selection (so a change of the inclusion rules reruns no per-unit fit)
PER_UNIT_TABLES = ("units", "count_fano", "unit_blocks", "fano_timecourse", "recovery",
                   "shared_variance", "gain_variance")
#: per-session tables whose rows grow with unit pairs or windows: their cohort form is a
#: partitioned Parquet dataset (a folder with one file per session, readable as one table)
COHORT_DATASETS = ("fano_timecourse", "pair_correlations", "shared_timecourse", "unit_blocks")
#: cohort statistics tables
STATISTICS_TABLES = ("population_fano", "group_summary", "group_differences", "shared_over_time",
                     "r_sc_by_rate")
#: cohort figures (each written as PNG and SVG)
COHORT_FIGURES = ("population_fano", "unit_metrics", "fano_by_window", "tau_vs_cv", "quality",
                  "stability", "r_sc_vs_rate", "shared_over_time", "shared_structure")
FIGURE_FORMATS = ("png", "svg")
#: the report's own pages (rule report_pages): its start page and the group tables as HTML
REPORT_TABLES = ("group_summary", "group_differences")
REPORT_PAGES = ("start_page.rst", *(f"{t}.html" for t in REPORT_TABLES))
#: report categories in the order the start page explains them: (name, what it holds)
REPORT_CATEGORIES = (
    ("Group statistics", "every metric per group, and the group differences, as tables"),
    ("Variability and recovery", "unit variability, Fano factor around events, recovery tau"),
    ("Shared variability", "noise correlations, shared variance over time, dimensions"),
    ("Quality control", "violations, contamination, units left out and why: look here first"),
    ("Recovery fits by session", "ISI densities against the fitted models, goodness of fit"),
)
#: the category of the per-session recovery figures (left out when they are not drawn)
RECOVERY_FIGURE_CATEGORY = "Recovery fits by session"
#: the report category of each cohort figure
FIGURE_CATEGORY = {"quality": "Quality control", "stability": "Quality control",
                   "r_sc_vs_rate": "Shared variability",
                   "shared_over_time": "Shared variability",
                   "shared_structure": "Shared variability"}
DEFAULT_FIGURE_CATEGORY = "Variability and recovery"
#: the cohort tables each cohort statistics or figure rule reads (its whole input contract)
COHORT_RULE_INPUTS = {
    "population_fano": ("fano_timecourse",),
    "group_summary": ("units", "count_fano", "recovery", "population_structure",
                      "gain_variance"),
    "shared_statistics": ("shared_timecourse", "pair_correlations"),
    "cohort_figures": ("units", "unit_selection", "unit_blocks", "count_fano", "recovery",
                       "population_fano", "group_summary", "population_structure",
                       "shared_over_time", "r_sc_by_rate"),
}

#: per-session steps in pipeline order: (rule, step name used for its log, first output)
SESSION_STEPS = (
    ("ingest_session", "ingest", "spikes"),
    ("session_metrics", "metrics", "units"),
    ("session_selection", "selection", "unit_selection"),
    ("session_timecourse", "timecourse", "fano_timecourse"),
    ("session_shared", "shared", "pair_correlations"),
    ("session_recovery", "recovery", "recovery"),
    ("session_recovery_figure", "recovery_figure", None),
)
FAILURE_SUFFIX = ".failure.json"


@dataclass(frozen=True)
class ResultsLayout:
    """Paths under one results folder. Pass ``"{session}"`` to get a wildcard pattern."""

    root: str

    def __post_init__(self):
        object.__setattr__(self, "root", str(self.root).rstrip("/") or ".")

    # per session
    def session_table(self, session: str, table: str) -> str:
        return f"{self.root}/sessions/{session}/{table}.parquet"

    def recovery_figure(self, session: str, fmt: str = "png") -> str:
        return f"{self.root}/figures/sessions/{session}_recovery.{fmt}"

    def session_log(self, session: str, step: str) -> str:
        return f"{self.root}/logs/sessions/{session}/{step}.log"

    def session_benchmark(self, session: str, rule: str) -> str:
        return f"{self.root}/benchmarks/sessions/{session}/{rule}.tsv"

    # cohort
    def cohort_table(self, table: str, fmt: str = "parquet") -> str:
        return f"{self.root}/cohort/{table}.{fmt}"

    def cohort_dataset(self, table: str) -> str:
        """The folder of a cohort dataset (one ``{session}.parquet`` per session)."""
        return f"{self.root}/cohort/{table}"

    def cohort_part(self, table: str, session: str) -> str:
        return f"{self.cohort_dataset(table)}/{session}.parquet"

    def cohort_output(self, table: str) -> str:
        """Where a cohort table lives: its dataset folder or its single file."""
        return self.cohort_dataset(table) if table in COHORT_DATASETS else \
            self.cohort_table(table)

    def cohort_inputs(self, rule: str) -> dict[str, str]:
        """Input name -> path of every cohort table a cohort rule reads (COHORT_RULE_INPUTS)."""
        return {table: self.cohort_output(table) for table in COHORT_RULE_INPUTS[rule]}

    def cohort_figure(self, figure: str, fmt: str = "png") -> str:
        return f"{self.root}/figures/{figure}.{fmt}"

    def cohort_log(self, step: str) -> str:
        return f"{self.cohort_log_folder()}/{step}.log"

    def cohort_log_folder(self) -> str:
        return f"{self.root}/logs/cohort"

    def cohort_benchmark(self, rule: str) -> str:
        return f"{self.root}/benchmarks/cohort/{rule}.tsv"

    def handoff_file(self, name: str) -> str:
        return f"{self.root}/handoff/{name}"

    def dataset_schema(self, table: str) -> str:
        """The Table Schema file the resources of one cohort dataset share."""
        return self.handoff_file(f"schemas/{table}.schema.json")

    def report_page(self, name: str) -> str:
        """The report's start page (``start_page.rst``) or a group table page (``{table}.html``)."""
        return f"{self.root}/report/{name}"

    def datapackage(self) -> str:
        return f"{self.root}/datapackage.json"

    def partial_cohort(self) -> str:
        return f"{self.root}/cohort_partial"

    # the log pair of one job: the log itself and the failure record beside it
    def session_logs(self, session: str, step: str) -> dict[str, str]:
        log = self.session_log(session, step)
        return {"log": log, "failure": failure_record_path(log)}

    def cohort_logs(self, step: str) -> dict[str, str]:
        log = self.cohort_log(step)
        return {"log": log, "failure": failure_record_path(log)}


def failure_record_path(log_path: str) -> str:
    """Where the job wrapper writes the failure record of the job logging to ``log_path``."""
    return str(log_path).removesuffix(".log") + FAILURE_SUFFIX
