"""Parquet writing that never leaves a half-written file, and reading that detects damage."""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from spikevar.errors import SpikevarInputError

METADATA_KEY = b"spikevar"


def frame_to_arrow(frame) -> pa.Table:
    """pandas -> Arrow with text columns as ``string`` (also all-empty and large-string ones)."""
    table = pa.Table.from_pandas(frame, preserve_index=False)
    fields = [pa.field(f.name, pa.string()) if pa.types.is_null(f.type) or
              pa.types.is_large_string(f.type) else f for f in table.schema]
    return table.cast(pa.schema(fields))


def sha256_of_file(path: str | os.PathLike, *, chunk_bytes: int = 1 << 20) -> str:
    """Hex sha256 of a file, read in chunks (opened read-only)."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        while chunk := handle.read(chunk_bytes):
            digest.update(chunk)
    return digest.hexdigest()


def write_parquet_atomic(table: pa.Table, path: str | os.PathLike, *, metadata: dict) -> None:
    """Write ``table`` to ``path`` with ``metadata`` (JSON) under the key ``spikevar``.

    The table goes to a temporary file in the same folder, which is flushed and then renamed over
    ``path``: readers either see the old file, no file, or the complete new one.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    existing = table.schema.metadata or {}
    merged = {**existing, METADATA_KEY: json.dumps(metadata, sort_keys=True, default=str).encode()}
    table = table.replace_schema_metadata(merged)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        pq.write_table(table, tmp, compression="zstd", compression_level=1)
        with open(tmp, "rb+") as handle:
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def read_parquet_checked(path: str | os.PathLike, *, session: str | None = None) -> pa.Table:
    """Read a Parquet file written by spikevar, refusing damaged files with a clear message."""
    try:
        return pq.read_table(path)
    except (pa.ArrowException, OSError) as exc:
        raise SpikevarInputError(
            f"The intermediate file is damaged or not Parquet ({exc}).",
            fix="delete it and run the workflow again; it will be recomputed.",
            session=session, path=str(path)) from None


def read_metadata(path: str | os.PathLike) -> dict:
    """The spikevar metadata dictionary stored in a Parquet file's key-value metadata."""
    meta = pq.read_schema(path).metadata or {}
    raw = meta.get(METADATA_KEY)
    return json.loads(raw) if raw else {}
