"""The sheet's optional ``unit_labels`` table: one label (good, mua, noise, ...) per unit id."""

from __future__ import annotations

import logging
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa

from spikevar.base.errors import SpikevarInputError
from spikevar.base.parquet_io import sha256_of_file, write_parquet_atomic
from spikevar.inputs.readers import (
    as_text_column,
    read_parquet_table,
    read_text_table,
    table_format,
)
from spikevar.inputs.settings import UnitLabelColumns

log = logging.getLogger(__name__)


def read_unit_labels(path: str | Path, *, session: str, unit_column: str,
                     label_column: str) -> pd.Series:
    """unit id (text) -> label, from a CSV/TSV (optionally gzipped) or Parquet table.

    A unit listed twice with different labels, or a missing column, is refused with the
    session, file and rows named. Ids are text, as everywhere in spikevar (``7`` == ``"7"``).
    """
    path = Path(path)
    try:
        fmt = table_format(path)
        if fmt == ".nwb":
            raise SpikevarInputError("A unit label table cannot be an NWB file.",
                                     fix="export the labels as a CSV/TSV with a unit and a "
                                     "label column.", path=str(path))
        table = read_parquet_table(path) if fmt == ".parquet" else read_text_table(
            path, string_columns=(unit_column, label_column))
    except SpikevarInputError as err:
        raise err.with_context(session=session, path=str(path)) from None
    missing = [c for c in (unit_column, label_column) if c not in table.column_names]
    if missing:
        raise SpikevarInputError(
            f"The unit label table has no column {', '.join(repr(c) for c in missing)} "
            f"(found: {', '.join(table.column_names)}).",
            fix="set config unit_labels.unit and unit_labels.label to its column names.",
            session=session, path=str(path), where=f"column {missing[0]}")
    units = np.asarray(as_text_column(table.column(unit_column).combine_chunks(),
                                      name=unit_column).to_pylist(), dtype=object)
    labels = np.asarray(as_text_column(table.column(label_column).combine_chunks(),
                                       name=label_column).to_pylist(), dtype=object)
    blank = np.array([u is None or str(u).strip() == "" for u in units])
    if blank.any():
        rows = ", ".join(str(i + 2) for i in np.flatnonzero(blank)[:5])
        raise SpikevarInputError("A row of the unit label table has no unit id.",
                                 fix="give every row a unit id, or delete the row.",
                                 session=session, path=str(path), where=f"rows {rows}")
    frame = pd.DataFrame({"unit": [str(u).strip() for u in units],
                          "label": ["" if v is None else str(v).strip() for v in labels]})
    frame = frame.drop_duplicates()
    clash = frame["unit"].duplicated(keep=False)
    if clash.any():
        first = frame.loc[clash, "unit"].iloc[0]
        raise SpikevarInputError(
            f"Unit {first!r} has two different labels in the unit label table.",
            fix="keep one row per unit.", session=session, path=str(path),
            where=f"column {unit_column}")
    return frame.set_index("unit")["label"]


def run_ingest_unit_labels(*, session: str, path, output, columns: UnitLabelColumns) -> None:
    """Entry of rule ingest_unit_labels: check the raw label table, write it normalised
    (``unit``, ``label`` as text) with the raw file's sha256 in the metadata."""
    labels = read_unit_labels(path, session=session, unit_column=columns.unit,
                              label_column=columns.label)
    table = pa.table({"unit": pa.array(labels.index.tolist(), pa.string()),
                      "label": pa.array(labels.tolist(), pa.string())})
    write_parquet_atomic(table, Path(output), metadata={
        "session": session, "source_path": str(path), "source_sha256": sha256_of_file(path),
        "columns": {"unit": columns.unit, "label": columns.label}})
    log.info("session %s: %d unit labels read from %s", session, len(labels), path)
