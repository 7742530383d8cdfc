"""Write tables and summaries atomically: a failed run never leaves a half-written file.

Every output goes to a temporary file beside the target and is renamed over it
only when complete (``os.replace`` is atomic on one file system).  The finished
file gets the permissions a plainly created file would get (the umask's, or the
replaced file's own), not the temporary file's owner-only ones.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from gnssrel.errors import GnssrelInputError
from gnssrel.io.metadata import CONVENTIONS, TIME_ENCODING, column_attributes

TABLE_SUFFIXES = (".csv", ".parquet", ".nc")


@contextmanager
def atomic_path(path: str | Path):
    """Yield a temporary path next to ``path``; move it over ``path`` on success."""
    path = Path(path)
    if path.parent and not path.parent.exists():
        raise GnssrelInputError("output folder does not exist", path.parent)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent or ".")
    os.close(fd)
    try:
        yield Path(tmp)
        os.chmod(tmp, output_mode(path))    # mkstemp makes it owner-only; outputs follow the umask
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def output_mode(path: str | Path) -> int:
    """The permissions an output gets: an existing file's own, else 0666 less the umask
    (as any program creating a file gets them: 0644 under the usual umask 022)."""
    try:
        return os.stat(path).st_mode & 0o7777
    except OSError:
        pass
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def check_output_suffix(path: str | Path, allowed=TABLE_SUFFIXES) -> Path:
    """Refuse an output name whose format we cannot write, before any work is done."""
    path = Path(path)
    if path.suffix.lower() not in allowed:
        raise GnssrelInputError(f"unknown output format {path.suffix!r}; use one of "
                                f"{', '.join(allowed)}", path)
    return path


def write_table(table, path: str | Path) -> Path:
    """Write a pandas DataFrame (or xarray Dataset) as CSV, Parquet or NetCDF by suffix.

    NetCDF variables and Parquet columns carry CF attributes from their names (units,
    long_name, standard_name where one exists; times: "GPS time", time_scale GPST;
    :mod:`gnssrel.io.metadata`): as variable attributes, and as Parquet field metadata.
    """
    import pandas as pd

    path = check_output_suffix(path)
    suffix = path.suffix.lower()
    with atomic_path(path) as tmp:
        if suffix == ".nc":
            ds = table if hasattr(table, "to_netcdf") and not isinstance(table, pd.DataFrame) \
                else table.to_xarray()
            _with_cf_attributes(_netcdf_safe(ds)).to_netcdf(tmp)
        else:
            df = table if isinstance(table, pd.DataFrame) else table.to_dataframe().reset_index()
            if suffix == ".csv":
                df.to_csv(tmp, index=False, float_format="%.12g")
            else:
                _write_parquet(df, tmp)
    return path


def _is_time(values) -> bool:
    return np.issubdtype(getattr(values, "dtype", np.dtype(object)), np.datetime64)


def _with_cf_attributes(ds):
    """``ds`` with CF attributes on every variable and coordinate (existing attributes win) and
    GPST times encoded as integer nanoseconds since the GPS epoch."""
    ds.attrs.setdefault("Conventions", CONVENTIONS)
    ds.attrs.setdefault("time_scale", "GPST")
    for name in ds.variables:
        var = ds[name]
        is_time = _is_time(var)
        for key, value in column_attributes(name, is_time).items():
            var.attrs.setdefault(key, value)
        if is_time:
            var.attrs.pop("units", None)
            var.attrs.pop("calendar", None)
            var.encoding.update(TIME_ENCODING)
        ds[name].attrs = var.attrs
    return ds


def _write_parquet(df, path) -> None:
    """Parquet with each column's CF attributes as field metadata and the time scale in the schema's."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(df, preserve_index=False)
    fields = []
    for f in table.schema:
        attrs = column_attributes(f.name, pa.types.is_timestamp(f.type))
        fields.append(f.with_metadata({k.encode(): str(v).encode() for k, v in attrs.items()}))
    meta = dict(table.schema.metadata or {})
    meta.update({b"Conventions": CONVENTIONS.encode(), b"time_scale": b"GPST"})
    pq.write_table(table.cast(pa.schema(fields, metadata=meta)), path)


def _netcdf_attr(value):
    if isinstance(value, (str, int, float, np.integer, np.floating)):
        return value
    if isinstance(value, (list, tuple, np.ndarray)) and all(
            isinstance(v, (int, float, np.integer, np.floating)) for v in np.ravel(value)):
        return np.asarray(value)
    return json.dumps(_jsonable(value)) if value is not None else ""


def _netcdf_safe(ds):
    """A copy whose attributes NetCDF can hold: dicts, None and times become JSON text."""
    out = ds.copy()
    out.attrs = {k: _netcdf_attr(v) for k, v in ds.attrs.items()}
    for name in out.variables:
        out[name].attrs = {k: _netcdf_attr(v) for k, v in ds[name].attrs.items()}
    return out


def _jsonable(obj):
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _jsonable(obj.tolist())
    if isinstance(obj, (np.bool_,)):
        return bool(obj)
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        v = float(obj)
        return None if math.isnan(v) or math.isinf(v) else v
    if isinstance(obj, np.datetime64):
        return str(obj.astype("datetime64[ns]"))
    return obj


def to_json_text(summary: dict) -> str:
    """Summary as JSON text: NaN becomes null, numpy scalars become numbers."""
    return json.dumps(_jsonable(summary), indent=2, sort_keys=False)


def write_json(summary: dict, path: str | Path) -> Path:
    """Write a summary dictionary as JSON, atomically."""
    path = Path(path)
    text = to_json_text(summary)
    with atomic_path(path) as tmp:
        tmp.write_text(text + "\n")
    return path
