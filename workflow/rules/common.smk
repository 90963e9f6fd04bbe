# Shared set-up: the checked sessions sheet and small helpers for input functions.

from spikevar.base.layout import (
    COHORT_DATASETS,
    COHORT_FIGURES,
    DEFAULT_FIGURE_CATEGORY,
    RECOVERY_FIGURE_CATEGORY,
    FIGURE_CATEGORY,
    FIGURE_FORMATS,
    METRIC_TABLES,
    NORMALISED_TABLES,
    PER_UNIT_TABLES,
    REPORT_CATEGORIES,
    REPORT_PAGES,
    REPORT_TABLES,
    SESSION_ID_PATTERN,
    SESSION_TABLES,
    SHARED_TABLES,
    STATISTICS_TABLES,
    ResultsLayout,
)
from spikevar.pipeline.fingerprints import code_fingerprint
from spikevar.inputs.sheet import load_sheet
from spikevar.pipeline.rule_inputs import (
    cohort_metadata,
    cohort_statistics_params,
    handoff_normalised_inputs,
    condition_factors,
    ingest_inputs,
    selection_inputs,
    unit_labels_input,
    ingest_settings,
    declared_span,
    has_unit_labels,
    primary_alignment,
    raw_spikes_mb,
    recovery_threads,
    workflow_cores,
    report_categories,
    sheet_records,
)

# every path a rule writes comes from this one layout (spikevar.base.layout)
LAYOUT = ResultsLayout(config["results"])
RESULTS = LAYOUT.root
try:
    SHEET = load_sheet(
        config["sessions"],
        default_time_unit=config["time_unit"],
        default_sampling_rate_hz=config["sampling_rate_hz"],
    )
except SpikevarInputError as err:
    raise WorkflowError(f"spikevar: {err}") from None
validate(SHEET, str(REPO / "workflow" / "schemas" / "sessions.schema.yaml"))
SESSIONS = list(SHEET.index)
# --cores of this run (None on a cluster): how many threads a session's fits take
CORES = workflow_cores(workflow)

wildcard_constraints:
    session=SESSION_ID_PATTERN,

