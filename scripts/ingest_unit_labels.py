"""Rule ingest_unit_labels: a session's unit label table, checked and normalised."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.settings import settings_from  # noqa: E402
from spikevar.inputs.settings import UnitLabelColumns  # noqa: E402
from spikevar.inputs.unit_labels import run_ingest_unit_labels  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="unit_labels") as sm:  # noqa: F821
    run_ingest_unit_labels(session=sm.wildcards.session, path=sm.input.labels,
                           output=sm.output[0],
                           columns=settings_from(UnitLabelColumns, sm.params.columns,
                                                 section="unit_labels"))
