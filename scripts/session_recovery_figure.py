"""Rule session_recovery_figure: ISI densities with fitted models, and KS plots, per unit."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(snakemake.scriptdir).parent / "src"))  # noqa: F821

from spikevar.figures.recovery import draw_session_recovery  # noqa: E402
from spikevar.pipeline.jobs import rule_job  # noqa: E402

with rule_job(snakemake, step="recovery_figure") as sm:  # noqa: F821
    draw_session_recovery(
        session=sm.wildcards.session,
        spikes_path=sm.input.spikes,
        recovery_path=sm.input.recovery,
        output=sm.output.png,
        max_units=int(sm.params.max_units),  # figures.max_units_per_session (schema-checked)
    )
