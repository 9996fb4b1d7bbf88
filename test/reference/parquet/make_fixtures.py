#!/usr/bin/env python3
"""Parquet fixtures for Stepwell's parquet reader, written by pyarrow (Apache Arrow's writer).

Invented values (a cold-room log: door openings, compressor duty, temperature, a state label):

- numeric.parquet: float64, float32, int32, int64 and bool feature columns and a float64 target,
  plain (uncompressed), dictionary encoding off, two row groups (row_group_size=4);
- labels-snappy.parquet: float64 features and a string class-label column, snappy, dictionary on;
- labels-v1-pages.parquet: the same table with data page version 1.0 and a nullable column
  without nulls;
- nulls.parquet: a feature column with a null in row 3;
- zstd.parquet, gzip.parquet: the numeric table compressed with codecs the reader refuses;
- timestamp.parquet: a timestamp column (a type the reader refuses as a feature);
- nested.parquet: a list column (refused).

expected.json holds, per file, the columns as pyarrow reads them back (to_pylist), the row count,
each column's physical type and codec, and the library versions and the command.

Run from the repository root with a Python that has pyarrow (not in the export venv; e.g. a
scratch venv: python3 -m venv /tmp/pq && /tmp/pq/bin/pip install pyarrow==26.0.1):

    /tmp/pq/bin/python test/reference/parquet/make_fixtures.py
"""
import datetime
import json
import os
import platform

import pyarrow as pa
import pyarrow.parquet as pq

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "fixtures")
os.makedirs(OUT, exist_ok=True)

numeric = pa.table({
    "door_openings": pa.array([3.0, 0.0, 7.5, 1.25, 2.0, 4.0, 0.5, 6.0], type=pa.float64()),
    "duty": pa.array([0.5, 0.25, 0.75, 0.125, 0.375, 0.625, 0.875, 1.0], type=pa.float32()),
    "hour": pa.array([0, 3, 6, 9, 12, 15, 18, 21], type=pa.int32()),
    "load_kg": pa.array([120, -40, 9007199254740991, 0, 55, 60, 75, 80], type=pa.int64()),
    "defrost": pa.array([False, True, False, False, True, False, True, False], type=pa.bool_()),
    "celsius": pa.array([4.5, 3.75, 6.25, 2.5, 3.0, 4.0, 5.5, 7.0], type=pa.float64()),
})
labels = pa.table({
    "door_openings": pa.array([3.0, 0.0, 7.5, 1.25, 2.0, 4.0], type=pa.float64()),
    "celsius": pa.array([4.5, 3.75, 6.25, 2.5, 3.0, 4.0], type=pa.float64()),
    "state": pa.array(["ok", "cold", "warm", "cold", "ok", "ok"], type=pa.string()),
})
nulls = pa.table({
    "a": pa.array([1.0, 2.0, None, 4.0], type=pa.float64()),
    "b": pa.array([0.5, 1.5, 2.5, 3.5], type=pa.float64()),
})
timestamp = pa.table({
    "at": pa.array([datetime.datetime(2026, 1, 1, h) for h in range(3)], type=pa.timestamp("ms")),
    "celsius": pa.array([4.5, 3.75, 6.25], type=pa.float64()),
})
nested = pa.table({
    "readings": pa.array([[1.0, 2.0], [3.0], [4.0, 5.0]], type=pa.list_(pa.float64())),
    "celsius": pa.array([4.5, 3.75, 6.25], type=pa.float64()),
})

FILES = {
    "numeric.parquet": (numeric, dict(compression="none", use_dictionary=False, row_group_size=4)),
    "labels-snappy.parquet": (labels, dict(compression="snappy", use_dictionary=True)),
    "labels-v1-pages.parquet": (labels, dict(compression="none", data_page_version="1.0")),
    "nulls.parquet": (nulls, dict(compression="none")),
    "zstd.parquet": (numeric, dict(compression="zstd")),
    "gzip.parquet": (numeric, dict(compression="gzip")),
    "timestamp.parquet": (timestamp, dict(compression="none")),
    "nested.parquet": (nested, dict(compression="none")),
}

expected = {}
for name, (table, options) in FILES.items():
    path = os.path.join(OUT, name)
    pq.write_table(table, path, **options)
    back = pq.read_table(path)
    meta = pq.ParquetFile(path).metadata
    rg = meta.row_group(0)
    expected[name] = {
        "rows": back.num_rows,
        "rowGroups": meta.num_row_groups,
        "columns": {c: back.column(c).to_pylist() for c in back.column_names if not isinstance(back.schema.field(c).type, (pa.ListType, pa.TimestampType))},
        "physical": {rg.column(j).path_in_schema: rg.column(j).physical_type for j in range(rg.num_columns)},
        "codec": rg.column(0).compression,
    }

expected["header"] = {
    "made by": "test/reference/parquet/make_fixtures.py",
    "command": "python test/reference/parquet/make_fixtures.py (a Python with pyarrow 26.0.1)",
    "pyarrow": pa.__version__,
    "python": platform.python_version(),
}
with open(os.path.join(HERE, "expected.json"), "w") as fh:
    json.dump(expected, fh, indent=1, sort_keys=True)
print("wrote", len(FILES), "fixtures")
