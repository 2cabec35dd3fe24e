#!/usr/bin/env python3
"""Parquet files written by pyarrow, for the test that mettle's Parquet
checks (src/data/table/parquet_check.rs) accept valid files of another
writer than polars and read their values as written.

Usage (from the repository root, run by hand, not part of `make test`):

    pip install pyarrow
    python3 tests/reference/pyarrow_parquet_files.py

Writes tests/data/pyarrow/*.parquet and tests/data/pyarrow/expected.csv
(the same table written with Python's csv module, numbers in repr form,
missing cells empty). The files vary what a reader meets in practice:
compression (none, snappy, gzip, zstd, lz4, brotli), data page version
1.0 and 2.0, dictionary and plain encoding, several row groups, many small
pages, statistics on and off, missing values, and integer, float, boolean
and text columns. The table is an arbitrary invented one (formulas below).
"""

import csv
import os

import pyarrow as pa
import pyarrow.parquet as pq

N = 400

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "data", "pyarrow")


def table():
    ids = [f"W{i:04d}" for i in range(N)]
    # a float with a missing value every 7th row
    x = [None if i % 7 == 3 else i * 0.25 - 3.0 for i in range(N)]
    # few distinct values, so dictionary encoding is worth it
    grade = [float((i * 37) % 11) for i in range(N)]
    # 32-bit and 64-bit integers, one with missing values
    n32 = [(i * 7919) % 2003 - 1000 for i in range(N)]
    n64 = [None if i % 13 == 0 else i * 1_000_003 for i in range(N)]
    f32 = [i / 8.0 for i in range(N)]
    flag = [i % 3 == 0 for i in range(N)]
    t = pa.table(
        {
            "id": pa.array(ids, pa.string()),
            "x": pa.array(x, pa.float64()),
            "grade": pa.array(grade, pa.float64()),
            "n32": pa.array(n32, pa.int32()),
            "n64": pa.array(n64, pa.int64()),
            "f32": pa.array(f32, pa.float32()),
            "flag": pa.array(flag, pa.bool_()),
        }
    )
    return t


VARIANTS = {
    # name: keyword arguments of pyarrow.parquet.write_table
    "plain_v1_uncompressed": dict(
        compression="NONE", data_page_version="1.0", use_dictionary=False
    ),
    "dictionary_v1_snappy": dict(compression="SNAPPY", data_page_version="1.0"),
    "dictionary_v2_zstd_groups": dict(
        compression="ZSTD", data_page_version="2.0", row_group_size=150
    ),
    "plain_v2_gzip_small_pages": dict(
        compression="GZIP",
        data_page_version="2.0",
        use_dictionary=False,
        data_page_size=256,
        write_statistics=False,
    ),
    "dictionary_v1_lz4_small_pages": dict(
        compression="LZ4", data_page_version="1.0", data_page_size=512,
        row_group_size=180,
    ),
    "dictionary_v2_brotli": dict(compression="BROTLI", data_page_version="2.0"),
}


def main():
    os.makedirs(OUT, exist_ok=True)
    t = table()
    for name, kw in VARIANTS.items():
        pq.write_table(t, os.path.join(OUT, f"{name}.parquet"), **kw)
    cols = t.column_names
    with open(os.path.join(OUT, "expected.csv"), "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(cols)
        data = [t.column(c).to_pylist() for c in cols]
        for row in zip(*data):
            cells = []
            for v in row:
                if v is None:
                    cells.append("")
                elif isinstance(v, bool):
                    cells.append("1" if v else "0")
                elif isinstance(v, float):
                    cells.append(repr(v))
                else:
                    cells.append(str(v))
            w.writerow(cells)
    print(f"pyarrow {pa.__version__}: wrote {len(VARIANTS)} files and expected.csv to {OUT}")


if __name__ == "__main__":
    main()
