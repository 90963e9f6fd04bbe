"""Assemble per-session tables into cohort tables, streaming one session at a time."""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import Path

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from spikevar.base.errors import OutputSpaceError, is_disk_full
from spikevar.base.parquet_io import (
    METADATA_KEY,
    OUTPUT_DIR_MODE,
    publish,
    read_parquet_checked,
    read_schema_checked,
    temporary_sibling,
    write_parquet_atomic,
)


def _with_metadata(table: pa.Table, meta: dict[str, str], meta_columns: list[str]) -> pa.Table:
    n = table.num_rows
    if "session" in table.column_names:
        table = table.drop_columns(["session"])
    columns = [pa.array([str(meta.get(c, ""))] * n, pa.string()) for c in meta_columns]
    return pa.Table.from_arrays(columns + table.columns,
                                names=meta_columns + table.column_names)


def _with_included(table: pa.Table, selection: str | os.PathLike | None, *,
                   session: str) -> pa.Table:
    """``table`` with the column ``included`` of its unit from the session's unit_selection
    (a unit the selection does not list is not included)."""
    if selection is None:
        return table
    if "included" in table.column_names:
        table = table.drop_columns(["included"])
    if table.num_rows == 0:
        return table.append_column("included", pa.array([], pa.bool_()))
    chosen = read_parquet_checked(selection, session=session, columns=["unit", "included"])
    keep = {u for u, inc in zip(chosen.column("unit").to_pylist(),
                                chosen.column("included").to_pylist(), strict=True) if inc}
    units = table.column("unit").cast(pa.string())
    flags = pc.is_in(units, value_set=pa.array(sorted(keep), pa.string()))
    return table.append_column("included", pc.fill_null(flags, False))


def _unify(tables: list[pa.Table]) -> pa.Schema:
    """A schema all tables cast to: the first typed (non-null) field of each column wins."""
    fields: dict[str, pa.Field] = {}
    for table in tables:
        for field in table.schema:
            if field.name not in fields or pa.types.is_null(fields[field.name].type):
                fields[field.name] = field
    names = []
    for table in tables:
        names.extend(n for n in table.column_names if n not in names)
    return pa.schema([fields[n].with_type(pa.string()) if pa.types.is_null(fields[n].type)
                      else fields[n] for n in names])


def _conform(table: pa.Table, schema: pa.Schema) -> pa.Table:
    arrays = []
    for field in schema:
        if field.name in table.column_names:
            arrays.append(table.column(field.name).cast(field.type))
        else:
            arrays.append(pa.nulls(table.num_rows, field.type))
    return pa.Table.from_arrays(arrays, schema=schema.remove_metadata())


def assemble_cohort_table(inputs: dict[str, str], metadata: dict[str, dict[str, str]], *,
                          meta_columns: list[str], output: str | os.PathLike,
                          csv_output: str | os.PathLike | None = None,
                          selections: dict[str, str] | None = None) -> int:
    """Concatenate per-session Parquet tables with the sheet's metadata columns in front
    (and, given each session's unit_selection in ``selections``, the column ``included``).

    Only each table's schema is read up front; the rows are then streamed session by session
    into a Parquet writer (and a CSV writer), so memory holds one session's table at a time.
    Both files are written to temporary names and renamed when complete.

    Returns
    -------
    int
        Rows written.
    """
    output = Path(output)
    output.parent.mkdir(parents=True, exist_ok=True)
    sessions = list(inputs)
    schema = _cohort_schema(inputs, metadata, meta_columns, kind="cohort table",
                            selections=selections)
    tmp = temporary_sibling(output)
    tmp_csv = temporary_sibling(Path(csv_output)) if csv_output else None
    rows = 0
    try:
        with pq.ParquetWriter(tmp, schema, compression="zstd") as writer:
            csv_writer = pacsv.CSVWriter(tmp_csv, schema.remove_metadata()) if tmp_csv else None
            for session in sessions:
                table = _session_part(inputs, selections, session)
                table = _conform(_with_metadata(table, metadata[session], meta_columns), schema)
                writer.write_table(table.replace_schema_metadata(schema.metadata))
                if csv_writer is not None:
                    csv_writer.write_table(table)
                rows += table.num_rows
            if csv_writer is not None:
                csv_writer.close()
        publish(tmp, output)
        if tmp_csv is not None:
            publish(tmp_csv, Path(csv_output))
    except OSError as exc:
        if is_disk_full(exc):
            raise OutputSpaceError(output) from None
        raise
    finally:
        tmp.unlink(missing_ok=True)
        if tmp_csv is not None:
            tmp_csv.unlink(missing_ok=True)
    return rows


def _session_part(inputs: dict[str, str], selections: dict[str, str] | None,
                  session: str) -> pa.Table:
    table = read_parquet_checked(inputs[session], session=session)
    return _with_included(table, selections[session] if selections else None, session=session)


def _cohort_schema(inputs: dict[str, str], metadata: dict[str, dict[str, str]],
                   meta_columns: list[str], *, kind: str,
                   selections: dict[str, str] | None = None) -> pa.Schema:
    """One schema for every session's table with the metadata columns in front (only the
    schemas are read)."""
    probe = [_with_metadata(read_schema_checked(path, session=s).empty_table(), metadata[s],
                            meta_columns) for s, path in inputs.items()]
    if selections:
        probe = [p.drop_columns([c for c in ("included",) if c in p.column_names])
                 .append_column("included", pa.array([], pa.bool_())) for p in probe]
    schema = _unify(probe) if probe else pa.schema([(c, pa.string()) for c in meta_columns])
    return schema.with_metadata({METADATA_KEY: json.dumps({"kind": kind}).encode()})


def assemble_cohort_dataset(inputs: dict[str, str], metadata: dict[str, dict[str, str]], *,
                            meta_columns: list[str], output: str | os.PathLike,
                            selections: dict[str, str] | None = None) -> int:
    """Write a partitioned cohort dataset: ``output/{session}.parquet`` per session.

    Every file has the sheet's metadata columns in front and one common schema, so pyarrow,
    pandas or DuckDB read the folder as one table (``pq.read_table(folder)``). One session is
    in memory at a time; the folder is built under a temporary name and renamed when
    complete, so readers never see a half-written dataset.

    Returns
    -------
    int
        Rows written.
    """
    output = Path(output)
    output.parent.mkdir(parents=True, exist_ok=True)
    sessions = list(inputs)
    schema = _cohort_schema(inputs, metadata, meta_columns, kind="cohort dataset part",
                            selections=selections)
    tmp = Path(tempfile.mkdtemp(prefix=f".{output.name}.", suffix=".tmp", dir=output.parent))
    rows = 0
    try:
        for session in sessions:
            table = _session_part(inputs, selections, session)
            table = _conform(_with_metadata(table, metadata[session], meta_columns), schema)
            part = tmp / f"{session}.parquet"
            pq.write_table(table.replace_schema_metadata(schema.metadata), part,
                           compression="zstd")
            rows += table.num_rows
        os.chmod(tmp, OUTPUT_DIR_MODE)
        if output.exists():
            shutil.rmtree(output)
        os.replace(tmp, output)
    except OSError as exc:
        if is_disk_full(exc):
            raise OutputSpaceError(output) from None
        raise
    finally:
        if tmp.exists():
            shutil.rmtree(tmp, ignore_errors=True)
    return rows


def run_cohort_table(table: str, inputs: dict[str, str], metadata: dict, *,
                     output: str | os.PathLike, csv_output: str | None = None,
                     selections: dict[str, str] | None = None) -> int:
    """Entry of rules cohort_table and cohort_dataset: one per-session table over every
    session, a single file (with its CSV copy) or, for COHORT_DATASETS, a dataset folder.
    Per-unit tables (PER_UNIT_TABLES) gain ``included`` from each session's unit_selection."""
    from spikevar.base.layout import COHORT_DATASETS

    if table in COHORT_DATASETS:
        return assemble_cohort_dataset(inputs, metadata["rows"],
                                       meta_columns=metadata["columns"], output=output,
                                       selections=selections)
    return assemble_cohort_table(inputs, metadata["rows"], meta_columns=metadata["columns"],
                                 output=output, csv_output=csv_output, selections=selections)


FAILED_SCHEMA = pa.schema([("session", pa.string()), ("rule", pa.string()),
                           ("reason", pa.string())])


def write_failed_sessions(rows: list[dict], output) -> None:
    """The ``failed_sessions`` table (empty, with its schema, when nothing failed)."""
    table = pa.Table.from_pylist(rows, schema=FAILED_SCHEMA)
    write_parquet_atomic(table, output, metadata={"kind": "failed sessions"})
