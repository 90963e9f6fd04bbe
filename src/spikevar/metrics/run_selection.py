"""Entry of rule session_selection: apply the inclusion rules to one session's units."""

from __future__ import annotations

import logging
from dataclasses import asdict
from pathlib import Path

from spikevar.base.parquet_io import frame_to_arrow, read_parquet_checked, write_parquet_atomic
from spikevar.metrics.inclusion import label_coverage, select_units, trials_while_recorded
from spikevar.metrics.settings import InclusionSettings

log = logging.getLogger(__name__)

#: how many ids a warning lists before "and N more"
LISTED = 10


def _listed(ids: list[str]) -> str:
    more = f" and {len(ids) - LISTED} more" if len(ids) > LISTED else ""
    return ", ".join(ids[:LISTED]) + more


def run_session_selection(*, session: str, units_path, events_path, labels_path, output,
                          settings: InclusionSettings) -> None:
    """``labels_path``: the session's normalised unit_labels table (rule ingest_unit_labels),
    or None when the sheet gives none."""
    units = read_parquet_checked(units_path, session=session).to_pandas()
    units["unit"] = units["unit"].astype(str)
    events = read_parquet_checked(events_path, session=session).to_pandas()
    labels, unknown, unlabelled = None, [], []
    if labels_path:
        table = read_parquet_checked(labels_path, session=session).to_pandas()
        labels = table.set_index("unit")["label"]
        unknown, unlabelled = label_coverage(labels, units["unit"].tolist())
        if unknown:
            log.warning("session %s: the unit label table %s lists %d unit id(s) with no "
                        "spikes in the session: %s", session, labels_path, len(unknown),
                        _listed(unknown))
        if unlabelled:
            log.warning("session %s: %d unit(s) have no label in %s: %s (label left empty, "
                        "not guessed)", session, len(unlabelled), labels_path,
                        _listed(unlabelled))
    elif settings.labels is not None:
        log.warning("session %s: inclusion.labels is set but the sheet gives no unit_labels "
                    "table for this session, so every unit is left out as 'no label'.", session)
    spans = units[["unit", "first_spike_s", "last_spike_s"]].rename(
        columns={"first_spike_s": "first_s", "last_spike_s": "last_s"})
    trials = trials_while_recorded(units, spans, events)
    frame = select_units(units, settings=settings, labels=labels, trials=trials)
    frame.insert(0, "session", session)
    write_parquet_atomic(frame_to_arrow(frame), Path(output), metadata={
        "session": session, "inclusion": asdict(settings),
        "labels_path": str(labels_path or ""), "unknown_label_ids": unknown,
        "unlabelled_units": unlabelled})
    log.info("session %s: %d of %d units included", session, int(frame["included"].sum()),
             len(frame))
