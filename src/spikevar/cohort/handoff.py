"""The hand-off package: data dictionary, Data Package descriptor and run manifest."""

from __future__ import annotations

import json
import platform
import subprocess
from datetime import UTC, datetime
from importlib import metadata as importlib_metadata
from pathlib import Path

import pyarrow as pa

from spikevar import __version__
from spikevar.base.parquet_io import (
    dataset_parts,
    read_metadata,
    table_schema,
    write_with_temporary,
)
from spikevar.cohort.data_dictionary import describe, to_markdown


def _frictionless_type(arrow_type: pa.DataType) -> str:
    if pa.types.is_integer(arrow_type):
        return "integer"
    if pa.types.is_floating(arrow_type):
        return "number"
    if pa.types.is_boolean(arrow_type):
        return "boolean"
    return "string"


def write_atomic_text(path: Path, text: str) -> None:
    write_with_temporary(path, lambda tmp: tmp.write_text(text))


def write_data_dictionary(tables: dict[str, str], *, markdown: Path, json_path: Path,
                          factors: tuple[str, ...] = ()) -> None:
    """Data dictionary (Markdown + JSON) for the columns of the Parquet ``tables`` given
    (files or dataset folders); ``factors``: the condition's factor columns."""
    columns = {name: table_schema(path).names for name, path in tables.items()}
    entries = {name: {c: dict(zip(("meaning", "unit", "method"), describe(name, c, factors),
                                  strict=True)) for c in cols} for name, cols in columns.items()}
    write_atomic_text(markdown, to_markdown(columns, factors))
    write_atomic_text(json_path, json.dumps(entries, indent=2))


def _fields(name: str, schema: pa.Schema, factors: tuple[str, ...] = ()) -> list[dict]:
    out = []
    for f in schema:
        meaning, unit, _ = describe(name, f.name, factors)
        out.append({"name": f.name, "type": _frictionless_type(f.type), "description": meaning,
                    **({"unit": unit} if unit else {})})
    return out


def write_datapackage(tables: dict[str, str], *, root: Path, path: Path,
                      dataset_schemas: dict[str, Path] | None = None,
                      factors: tuple[str, ...] = ()) -> None:
    """A Frictionless Data Package descriptor listing each table with its schema.

    A cohort dataset (a folder of per-session Parquet files) is one resource per file, named
    ``{table}-{session}`` and marked ``"dataset": table``; its Table Schema is written once to
    ``dataset_schemas[table]`` and referenced by path. (A Data Package "multipart" path would
    mean byte concatenation, which is not how Parquet files combine.)
    """
    resources = []
    taken: set[str] = set()
    dataset_schemas = dataset_schemas or {}
    for name, table_path in tables.items():
        schema = {"fields": _fields(name, table_schema(table_path), factors)}
        if not Path(table_path).is_dir():
            resources.append({"name": name.replace("_", "-"),
                              "path": str(Path(table_path).resolve().relative_to(root.resolve())),
                              "format": "parquet", "mediatype": "application/vnd.apache.parquet",
                              "schema": schema})
            continue
        schema_path = Path(dataset_schemas[name])
        write_atomic_text(schema_path, json.dumps(schema, indent=2))
        schema_ref = str(schema_path.resolve().relative_to(root.resolve()))
        for part in dataset_parts(table_path):
            resource_name = f"{name}-{part.stem}".replace("_", "-").lower()
            while resource_name in taken:  # session ids differing only in case
                resource_name += "-x"
            taken.add(resource_name)
            resources.append({"name": resource_name,
                              "dataset": name,
                              "path": str(part.resolve().relative_to(root.resolve())),
                              "format": "parquet",
                              "mediatype": "application/vnd.apache.parquet",
                              "schema": schema_ref})
    descriptor = {"name": "spikevar-cohort", "title": "spikevar cohort tables",
                  "description": "Spike-train variability and refractory-recovery estimates per "
                  "unit, session and group. Statistical estimates: validity depends on spike "
                  "sorting quality and recording stationarity. Resources with a 'dataset' "
                  "property are the per-session files of one table.",
                  "resources": resources}
    write_atomic_text(path, json.dumps(descriptor, indent=2))


def _git_commit(repo: Path) -> str:
    try:
        out = subprocess.run(["git", "-C", str(repo), "rev-parse", "HEAD"], capture_output=True,
                             text=True, timeout=10, check=False)
        dirty = subprocess.run(["git", "-C", str(repo), "status", "--porcelain"],
                               capture_output=True, text=True, timeout=10, check=False)
        commit = out.stdout.strip() or "unknown"
        return commit + ("+uncommitted" if dirty.stdout.strip() else "")
    except (OSError, subprocess.SubprocessError):
        return "unknown"


def write_manifest(*, sheet: list[dict], normalised: list[str], config: dict, repo: Path,
                   path: Path) -> None:
    """Inputs with sha256, the resolved config, package versions, version/commit, run time.

    The sha256 of each raw file is the one ingestion computed from the bytes it read, taken from
    the metadata of the session's normalised tables (``normalised``: their paths), so the raw
    files are not read again and the manifest names exactly what the results came from.
    """
    recorded = {(Path(p).parent.name, Path(p).stem): p for p in normalised}
    inputs, seen = [], set()
    for row in sheet:
        for column in ("spikes", "events", "unit_labels"):
            value = row.get(column)
            if value and (row["session"], value) not in seen:  # an NWB file may hold both
                seen.add((row["session"], value))
                sha = read_metadata(recorded[(row["session"], column)])["source_sha256"]
                files = sha.items() if isinstance(sha, dict) else [(None, sha)]
                for name, digest in files:  # a folder of spike arrays: each of its files
                    inputs.append({"session": row["session"], "role": column,
                                   "path": f"{value}/{name}" if name else value,
                                   "sha256": digest})
    versions = {}
    for package in ("snakemake", "numpy", "scipy", "pandas", "pyarrow", "matplotlib", "seaborn",
                    "pynwb"):
        try:
            versions[package] = importlib_metadata.version(package)
        except importlib_metadata.PackageNotFoundError:
            versions[package] = "not installed"
    manifest = {"spikevar_version": __version__, "spikevar_commit": _git_commit(repo),
                "run_finished_utc": datetime.now(UTC).isoformat(timespec="seconds"),
                "python": platform.python_version(), "packages": versions, "config": config,
                "inputs": inputs}
    write_atomic_text(path, json.dumps(manifest, indent=2, default=str))
