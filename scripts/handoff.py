"""Rule handoff: data dictionary, datapackage.json, manifest and the failed_sessions table."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.base.layout import COHORT_DATASETS  # noqa: E402
from spikevar.cohort import handoff  # noqa: E402
from spikevar.cohort.tables import write_failed_sessions  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="handoff") as sm:  # noqa: F821
    write_failed_sessions([], sm.output.failed)
    tables = {Path(p).stem: p for p in [*sm.input.tables, sm.output.failed]}
    factors = tuple(sm.params.factors)
    handoff.write_data_dictionary(tables, markdown=Path(sm.output.dictionary_md),
                                  json_path=Path(sm.output.dictionary_json), factors=factors)
    handoff.write_datapackage(tables, root=Path(sm.output.datapackage).parent,
                              path=Path(sm.output.datapackage),
                              dataset_schemas={t: Path(sm.output[f"schema_{t}"])
                                               for t in COHORT_DATASETS}, factors=factors)
    handoff.write_manifest(sheet=sm.params.sheet, normalised=list(sm.input.normalised),
                           config=dict(sm.params.config),
                           repo=Path(sm.params.repo), path=Path(sm.output.manifest))
