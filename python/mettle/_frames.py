"""Tables from Python values: pandas and polars DataFrames, numpy arrays,
dicts of columns, or a path to a CSV or Parquet file.

Numeric columns travel to the library as float64 (NaN or a null is a missing
cell, as an empty cell of a CSV file); text columns as strings, which the
library parses with the messages it gives for a CSV cell. Nothing is filled in
or dropped here.
"""

from __future__ import annotations

import os
from typing import Any

import numpy as np

from .errors import DataError


def _is_polars(obj: Any) -> bool:
    return type(obj).__module__.split(".")[0] == "polars"


def _is_pandas(obj: Any) -> bool:
    return type(obj).__module__.split(".")[0] == "pandas"


def is_path(obj: Any) -> bool:
    """True for a file name (str or os.PathLike)."""
    return isinstance(obj, (str, os.PathLike))


def _cannot_read(source: str, name: str, dtype: Any) -> DataError:
    # the wording of the library for a Parquet column of an unreadable type
    return DataError(f"{source}: column '{name}' has type {dtype}, which mettle cannot read")


def _text(values, source: str, name: str, dtype: Any) -> list:
    out = []
    for v in values:
        if v is None or (isinstance(v, float) and v != v):
            out.append(None)
        elif isinstance(v, str):
            out.append(v)
        elif isinstance(v, (bool, np.bool_)):
            out.append(str(bool(v)).lower())
        elif isinstance(v, (int, float, np.integer, np.floating)):
            out.append(repr(float(v)) if isinstance(v, (float, np.floating)) else str(int(v)))
        elif isinstance(v, bytes):
            out.append(v.decode("utf-8", errors="replace"))
        else:
            try:
                import pandas as pd

                if v is pd.NA or v is pd.NaT:
                    out.append(None)
                    continue
            except ImportError:  # pragma: no cover
                pass
            raise _cannot_read(source, name, f"{dtype} (a value {type(v).__name__})")
    return out


def _float_column(values: np.ndarray, source: str, name: str) -> np.ndarray:
    if np.iscomplexobj(values):
        raise _cannot_read(source, name, values.dtype)
    return np.ascontiguousarray(values, dtype=np.float64)


def _pandas_columns(df, source: str) -> list:
    import pandas as pd

    cols = []
    for name in df.columns:
        s = df[name]
        if isinstance(s, pd.DataFrame):
            raise DataError(f"{source}: column name '{name}' appears twice (columns must be unique)")
        key = str(name)
        if pd.api.types.is_complex_dtype(s.dtype):
            raise _cannot_read(source, key, s.dtype)
        if pd.api.types.is_bool_dtype(s.dtype) or pd.api.types.is_numeric_dtype(s.dtype):
            cols.append((key, _float_column(s.to_numpy(dtype="float64", na_value=np.nan), source, key)))
        else:
            cols.append((key, _text(s.tolist(), source, key, s.dtype)))
    return cols


def _polars_columns(df, source: str) -> list:
    import polars as pl

    cols = []
    for s in df.get_columns():
        if s.dtype.is_numeric() or s.dtype == pl.Boolean:
            if s.dtype in (pl.Decimal,) or str(s.dtype).startswith("Complex"):
                raise _cannot_read(source, s.name, s.dtype)
            f = s.cast(pl.Float64).fill_null(float("nan")).to_numpy()
            cols.append((s.name, _float_column(f, source, s.name)))
        elif s.dtype == pl.String:
            cols.append((s.name, s.to_list()))
        else:
            try:
                cols.append((s.name, s.cast(pl.String).to_list()))
            except Exception as e:  # noqa: BLE001 - polars raises several kinds
                raise _cannot_read(source, s.name, s.dtype) from e
    return cols


def _array_columns(a: np.ndarray, names, source: str) -> list:
    if a.ndim == 1:
        a = a.reshape(-1, 1)
    if a.ndim != 2:
        raise DataError(f"{source}: an array of {a.ndim} dimensions is not a table (rows x columns)")
    if names is None:
        names = [f"x{j}" for j in range(a.shape[1])]
    names = [str(n) for n in names]
    if len(names) != a.shape[1]:
        raise DataError(f"{source}: {len(names)} column names given for an array of {a.shape[1]} columns")
    cols = []
    for j, name in enumerate(names):
        col = a[:, j]
        if col.dtype.kind in "biuf":
            cols.append((name, _float_column(col, source, name)))
        elif col.dtype.kind == "c":
            raise _cannot_read(source, name, col.dtype)
        else:
            cols.append((name, _text(col.tolist(), source, name, col.dtype)))
    return cols


def columns_of(data: Any, source: str, names=None) -> list:
    """The columns of ``data`` as the extension takes them: (name, float64
    array or list of str/None)."""
    if _is_pandas(data):
        import pandas as pd

        if isinstance(data, pd.Series):
            data = data.to_frame()
        return _pandas_columns(data, source)
    if _is_polars(data):
        import polars as pl

        if isinstance(data, pl.Series):
            data = data.to_frame()
        if isinstance(data, pl.LazyFrame):
            data = data.collect()
        return _polars_columns(data, source)
    if isinstance(data, dict):
        import pandas as pd

        return _pandas_columns(pd.DataFrame(data), source)
    if hasattr(data, "__array__") or isinstance(data, (list, tuple)):
        return _array_columns(np.asarray(data), names, source)
    raise DataError(
        f"{source}: a {type(data).__name__} is not a table; give a pandas or polars "
        "DataFrame, a numpy array, a dict of columns or a path to a CSV or Parquet file"
    )


def source_args(data: Any, source: str | None, names=None) -> dict:
    """The keyword arguments naming the rows for the extension."""
    if is_path(data):
        return {"columns": None, "path": os.fspath(data), "source": os.fspath(data)}
    name = source or "dataframe"
    return {"columns": columns_of(data, name, names), "path": None, "source": name}
