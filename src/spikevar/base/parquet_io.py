"""Parquet writing that never leaves a half-written file, and reading that detects damage."""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

import pyarrow as pa
import pyarrow.parquet as pq

from spikevar.base.errors import OutputSpaceError, SpikevarInputError, is_disk_full

if TYPE_CHECKING:
    import pandas as pd

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


def _umask() -> int:
    current = os.umask(0)
    os.umask(current)
    return current


#: Permission bits for finished outputs: what ``open()`` would give (temporary files are 0600).
OUTPUT_MODE = 0o666 & ~_umask()
#: the same for finished output folders (temporary folders are 0700)
OUTPUT_DIR_MODE = 0o777 & ~_umask()


def temporary_sibling(path: Path) -> Path:
    """An empty temporary file next to ``path`` (same file system, so renaming is atomic)."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    return Path(tmp)


def publish(tmp: Path, path: Path) -> None:
    """Flush ``tmp`` to disk, give it the usual permissions and rename it over ``path``."""
    with open(tmp, "rb+") as handle:
        os.fsync(handle.fileno())
    os.chmod(tmp, OUTPUT_MODE)
    os.replace(tmp, path)


#: Write options of the normalised spike table. Spike times are high-entropy doubles: zstd saved
#: about 7% of the file at five times the write cost, so they are stored uncompressed; the unit
#: column is dictionary-encoded and compressed (it shrinks to a few kB). Without the stored
#: Arrow schema the dictionary-typed unit column reads back as a plain string column.
SPIKE_TABLE_OPTIONS = {"compression": {"unit": "zstd", "time_s": "none"},
                       "use_dictionary": ["unit"], "write_statistics": ["time_s"],
                       "store_schema": False}


def write_parquet_atomic(table: pa.Table, path: str | os.PathLike, *,
                         metadata: dict | Callable[[], dict], options: dict | None = None) -> None:
    """Write ``table`` to ``path`` with ``metadata`` (JSON) under the key ``spikevar``.

    The table goes to a temporary file in the same folder, which is flushed and then renamed over
    ``path``: readers either see the old file, no file, or the complete new one. ``options`` are
    :class:`pyarrow.parquet.ParquetWriter` options (default: zstd level 1 for every column).
    With ``store_schema=False`` the metadata may be a function: it is called after the rows are
    written (so a checksum computed meanwhile can go in).
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    options = options or {"compression": "zstd", "compression_level": 1}
    late = options.get("store_schema", True) is False

    def pairs() -> dict[bytes, bytes]:
        resolved = metadata() if callable(metadata) else metadata
        return {**(table.schema.metadata or {}),
                METADATA_KEY: json.dumps(resolved, sort_keys=True, default=str).encode()}

    if not late:
        table = table.replace_schema_metadata(pairs())

    def write(tmp: Path) -> None:
        with pq.ParquetWriter(tmp, table.schema, **options) as writer:
            writer.write_table(table)
            if late:  # without the stored Arrow schema the key-value pairs go in by hand
                writer.add_key_value_metadata({k.decode(): v.decode() for k, v in pairs().items()})

    write_with_temporary(path, write)


def _checked(read: Callable, path: str | os.PathLike, session: str | None):
    try:
        return read(path)
    except (pa.ArrowException, OSError) as exc:
        raise SpikevarInputError(
            f"The intermediate file is damaged or not Parquet ({exc}).",
            fix="delete it and run the workflow again; it will be recomputed.",
            session=session, path=str(path)) from None


def read_parquet_checked(path: str | os.PathLike, *, session: str | None = None,
                         columns: list[str] | None = None) -> pa.Table:
    """Read a Parquet file written by spikevar (all or the named ``columns``), refusing
    damaged files with a clear message."""
    return _checked(lambda p: pq.read_table(p, columns=columns), path, session)


def read_schema_checked(path: str | os.PathLike, *, session: str | None = None) -> pa.Schema:
    """The schema of a Parquet file written by spikevar, refusing damaged files clearly."""
    return _checked(pq.read_schema, path, session)


def read_metadata(path: str | os.PathLike) -> dict:
    """The spikevar metadata dictionary stored in a Parquet file's key-value metadata."""
    meta = pq.read_schema(path).metadata or {}
    raw = meta.get(METADATA_KEY)
    return json.loads(raw) if raw else {}


def write_with_temporary(path: str | os.PathLike, write: Callable[[Path], None]) -> None:
    """Call ``write(tmp)`` on a temporary sibling of ``path``, then publish it as ``path``.

    For outputs that are not Parquet (figures, JSON, Markdown): the output appears complete or
    not at all, and a full disk is reported with the output's name.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = temporary_sibling(path)
    try:
        write(tmp)
        publish(tmp, path)
    except BaseException as exc:
        tmp.unlink(missing_ok=True)
        if is_disk_full(exc):
            raise OutputSpaceError(path) from None
        raise


def table_schema(path: str | os.PathLike) -> pa.Schema:
    """The schema of a Parquet file, or of a dataset folder (its first part; all parts share
    one schema)."""
    path = Path(path)
    if path.is_dir():
        parts = sorted(p for p in path.glob("*.parquet") if not p.name.startswith("."))
        if not parts:
            return pa.schema([])
        path = parts[0]
    return read_schema_checked(path)


def dataset_parts(path: str | os.PathLike) -> list[Path]:
    """The files of a dataset folder (or the one file given), in name order."""
    path = Path(path)
    if not path.is_dir():
        return [path]
    return sorted(p for p in path.glob("*.parquet") if not p.name.startswith((".", "_")))


def read_frame(path, columns: list[str] | None = None) -> pd.DataFrame:
    """A checked Parquet read straight to a DataFrame (a file or a dataset folder; all or
    the named ``columns``)."""
    parts = dataset_parts(path)
    if Path(path).is_dir():
        if not parts:
            import pandas as pd  # the cohort-table jobs read and write Arrow only

            return pd.DataFrame()
        return pa.concat_tables([read_parquet_checked(p, columns=columns)
                                 for p in parts]).to_pandas()
    return read_parquet_checked(path, columns=columns).to_pandas()
