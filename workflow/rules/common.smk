# Shared set-up: the checked sessions sheet and small helpers for input functions.
from snakemake.exceptions import WorkflowError

from spikevar.cohort.tables import SESSION_TABLES
from spikevar.base.errors import SpikevarInputError
from spikevar.pipeline.fingerprints import code_fingerprint
from spikevar.inputs.sheet import load_sheet
from spikevar.pipeline.rule_inputs import (
    cohort_metadata,
    ingest_inputs,
    ingest_settings,
    recording_duration,
    sheet_records,
)

RESULTS = config["results"].rstrip("/")
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

wildcard_constraints:
    session="[A-Za-z0-9][A-Za-z0-9_.-]*",

