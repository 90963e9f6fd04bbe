"""Readers for raw spike and event tables: delimited text (optionally gzipped), Parquet and NWB.

Every reader returns a :class:`pyarrow.Table` with the file's own column names (NWB tables are
turned into the configured column names). Failures become :class:`SpikevarInputError`.
"""

from __future__ import annotations

import gzip
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from spikevar.base.errors import SpikevarInputError

TEXT_SUFFIXES = {".csv": ",", ".tsv": "\t", ".csv.gz": ",", ".tsv.gz": "\t"}
SUPPORTED = (*TEXT_SUFFIXES, ".parquet", ".nwb")


def table_format(path: str | Path) -> str:
    """The format key of a raw file from its name: one of :data:`SUPPORTED`."""
    name = str(path).lower()
    for suffix in sorted(SUPPORTED, key=len, reverse=True):
        if name.endswith(suffix):
            return suffix
    raise SpikevarInputError(
        "The file type is not supported.",
        fix=f"convert the table to one of {', '.join(SUPPORTED)}.", path=str(path))


def read_text_table(path: str | Path, *, string_columns: tuple[str, ...] = (),
                    float_columns: tuple[str, ...] = ()) -> pa.Table:
    """Read a comma- or tab-separated table (``.gz`` decompressed on the fly).

    ``string_columns`` are read as text whatever they contain (unit ids such as ``007``).
    ``float_columns`` are parsed straight to float64, skipping type inference; if one of them
    holds something that is not a number, the file is read again with inference so that the
    caller can point at the offending rows.
    """
    types = {c: pa.string() for c in string_columns}
    if float_columns:
        try:
            return _read_text_table(path, {**types, **{c: pa.float64() for c in float_columns}})
        except _NotANumber:
            pass
    return _read_text_table(path, types)


class _NotANumber(Exception):
    """A column parsed as float64 holds a value that is not a number."""


def _read_text_table(path: str | Path, column_types: dict[str, pa.DataType]) -> pa.Table:
    fmt = table_format(path)
    delimiter = TEXT_SUFFIXES[fmt]
    if fmt.endswith(".gz"):
        with open(path, "rb") as handle:
            if handle.read(2) != b"\x1f\x8b":
                raise SpikevarInputError(
                    "The file name ends in .gz but the file is not gzip-compressed.",
                    fix="compress it with gzip, or remove the .gz from its name.", path=str(path))
    try:
        table = pacsv.read_csv(
            path,
            parse_options=pacsv.ParseOptions(delimiter=delimiter),
            convert_options=pacsv.ConvertOptions(
                column_types=column_types,
                strings_can_be_null=False),
        )
        names = table.column_names
        if names and names[0].startswith("\ufeff"):  # a byte-order mark the reader kept
            table = table.rename_columns([names[0].lstrip("\ufeff"), *names[1:]])
        return table
    except (pa.ArrowInvalid, OSError, EOFError, gzip.BadGzipFile) as exc:
        message = str(exc).splitlines()[0]
        if "conversion error to double" in message:
            raise _NotANumber(message) from None
        if "Empty CSV file" in message:
            raise SpikevarInputError(
                "The file is empty (no header line).",
                fix="check that the export finished; a spike table needs a header and rows.",
                path=str(path)) from None
        raise SpikevarInputError(
            f"The file could not be read as a {'tab' if delimiter == chr(9) else 'comma'}"
            f"-separated table: {message}",
            fix="check the delimiter, quoting and encoding (UTF-8) of the file.",
            path=str(path)) from None


def read_parquet_table(path: str | Path) -> pa.Table:
    """Read a raw Parquet table."""
    try:
        return pq.read_table(path)
    except (pa.ArrowException, OSError) as exc:
        raise SpikevarInputError(
            f"The file could not be read as Parquet: {str(exc).splitlines()[0]}",
            fix="re-export the table as Parquet, or use CSV/TSV.", path=str(path)) from None


def _open_nwb(path):
    try:
        from pynwb import NWBHDF5IO
    except ImportError as exc:  # pragma: no cover - pynwb is a declared dependency
        raise SpikevarInputError("pynwb is not installed.", fix="pip install pynwb.") from exc
    try:
        io = NWBHDF5IO(str(path), mode="r", load_namespaces=True)
        return io, io.read()
    except Exception as exc:  # noqa: BLE001 - h5py/hdmf raise many types
        raise SpikevarInputError(
            f"The file could not be opened as NWB: {str(exc).splitlines()[0]}",
            fix="check that it is an NWB 2.x file (HDF5).", path=str(path)) from None


def read_nwb_units(path: str | Path, *, unit_column: str, time_column: str) -> pa.Table:
    """Flatten an NWB units table to one row per spike (times are seconds by the NWB standard).

    Unit ids come from a column named ``unit_column`` in the units table if there is one, else
    from the table's ``id``.
    """
    io, nwbfile = _open_nwb(path)
    try:
        units = nwbfile.units
        if units is None or len(units) == 0:
            raise SpikevarInputError(
                "The NWB file has no units table (or it is empty).",
                fix="write the sorted units into nwbfile.units, or export a CSV spike table.",
                path=str(path))
        flat = np.asarray(units["spike_times"].target.data[:], dtype=np.float64)
        ends = np.asarray(units["spike_times"].data[:], dtype=np.int64)
        counts = np.diff(np.concatenate([[0], ends]))
        if unit_column in units.colnames:
            ids = np.asarray([str(v) for v in units[unit_column].data[:]])
        else:
            ids = np.asarray(units.id.data[:]).astype(str)
        return pa.table({unit_column: np.repeat(ids, counts), time_column: flat})
    finally:
        io.close()


def read_nwb_trials(path: str | Path, *, time_column: str,
                    condition_column: str | tuple[str, ...]) -> pa.Table:
    """The NWB trials table as events: ``time_column`` (``start_time`` if absent) and condition."""
    io, nwbfile = _open_nwb(path)
    try:
        trials = nwbfile.trials
        if trials is None or len(trials) == 0:
            raise SpikevarInputError(
                "The NWB file has no trials table (or it is empty).",
                fix="add trials to the NWB file, or give an events table in the sheet.",
                path=str(path))
        frame = trials.to_dataframe()
        source = time_column if time_column in frame.columns else "start_time"
        named = [condition_column] if isinstance(condition_column, str) else \
            list(condition_column)
        for name in named:
            if name not in frame.columns:
                raise SpikevarInputError(
                    f"The NWB trials table has no column '{name}' "
                    f"(found: {', '.join(map(str, frame.columns))}).",
                    fix="set config columns.event_condition to the trials column(s) that name "
                    "the condition.", path=str(path), where=f"column {name}")
        frame = frame.rename(columns={source: time_column}).reset_index(drop=True)
        keep = [time_column, *named] + [
            c for c in frame.columns if c not in (time_column, *named)
            and frame[c].map(np.isscalar).all()]
        return pa.Table.from_pandas(frame[keep], preserve_index=False)
    finally:
        io.close()


def as_text_column(column, *, name: str):
    """Unit ids or condition labels as text; refuses a column type that has no text form.

    This is the one place a raw id/label column is converted, so the conversion's own errors
    (a list or struct column, say) become a message naming the column; nothing else is caught.
    """
    if pa.types.is_string(column.type):
        return column
    try:
        return pc.cast(column, pa.string())
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError, pa.ArrowTypeError):
        raise SpikevarInputError(
            f"The column holds {column.type} values, which cannot be read as ids or labels.",
            fix="store unit ids and condition labels as text or integers, one per row.",
            where=f"column {name!r}") from None


def read_spike_array_folder(folder: str | Path, *, times_file: str, units_file: str,
                            unit_column: str, time_column: str) -> pa.Table:
    """A folder of two NumPy arrays (every spike's time or sample index, and its unit id) as a
    spike table with the configured column names. The arrays are memory-mapped, not loaded.

    Refused, naming the file and the config key: a missing file, an array that is not one
    value per spike (1-D, or n x 1), times that are not numbers, unit ids that are not
    integers or text, and arrays of unequal length.
    """
    folder = Path(folder)
    arrays = {}
    for key, name, config_key in (("times", times_file, "spike_arrays.times"),
                                  ("units", units_file, "spike_arrays.units")):
        path = folder / name
        if not path.is_file():
            found = ", ".join(sorted(p.name for p in folder.glob("*.npy"))) or "none"
            raise SpikevarInputError(
                f"The spike folder has no file {name} (.npy files found: {found}).",
                fix=f"set config {config_key} to the file holding every spike's {key}, or "
                    "add the file.", path=str(path))
        try:
            array = np.load(path, mmap_mode="r", allow_pickle=False)
        except (ValueError, OSError) as exc:
            raise SpikevarInputError(
                f"The file could not be read as a NumPy array: {str(exc).splitlines()[0]}",
                fix="save it with numpy.save (no pickled objects).", path=str(path)) from None
        if array.ndim == 2 and array.shape[1] == 1:
            array = array[:, 0]
        if array.ndim != 1:
            raise SpikevarInputError(
                f"The array has shape {array.shape}; one value per spike is needed.",
                fix="save a 1-D array (or n x 1) with one entry per spike.", path=str(path))
        arrays[key] = (array, path)
    times, times_path = arrays["times"]
    units, units_path = arrays["units"]
    if times.dtype.kind not in "iuf":
        raise SpikevarInputError(
            f"The spike times are of type {times.dtype}, not numbers.",
            fix="store times (or sample indices) as integers or floats.", path=str(times_path))
    if units.dtype.kind not in "iuUS":
        raise SpikevarInputError(
            f"The unit ids are of type {units.dtype}; integers or text are needed.",
            fix="store one integer or text id per spike.", path=str(units_path))
    if len(times) != len(units):
        raise SpikevarInputError(
            f"{times_path.name} holds {len(times)} values but {units_path.name} holds "
            f"{len(units)}; both need one entry per spike.",
            fix="export both arrays from the same sorting.", path=str(folder))
    unit_text = pc.cast(pa.array(np.asarray(units)), pa.string())
    return pa.table({unit_column: unit_text, time_column: pa.array(np.asarray(times))})
