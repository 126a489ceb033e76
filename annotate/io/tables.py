"""Streaming readers for tabular libraries (CSV, TSV, Parquet) as Arrow batches.

Column types are kept as in the input: Parquet's own, or for CSV/TSV what
Polars infers from the whole file (so a late odd value cannot break a chunk).
The structure column of a CSV/TSV is always read as text.

:func:`parquet_batches` is also how the whole-library jobs (gather, filters, QC)
read Parquet: in small batches, so their memory does not grow with the file.
"""

from __future__ import annotations

import os
from collections.abc import Iterator, Sequence
from typing import TYPE_CHECKING

import pyarrow as pa
import pyarrow.parquet as pq

from annotate.io.library import LibrarySpec

if TYPE_CHECKING:
    import polars as pl

#: rows per batch when reading a whole file: a few MB of Arrow data even for wide
#: annotated rows, and small enough that the allocator's leftovers stay small too
BATCH_ROWS = 8_192
_SEPARATORS = {"csv": ",", "tsv": "\t"}


def table_columns(spec: LibrarySpec) -> list[str]:
    """Column names, read from the header or footer only."""
    if spec.resolved_format == "parquet":
        return list(pq.read_schema(spec.path).names)
    return _scan_csv(spec, text_columns=(), infer=False).collect_schema().names()


def table_schema(spec: LibrarySpec, *, text_columns: tuple[str, ...]) -> pa.Schema:
    """The Arrow schema batches will have, known even when there are no rows."""
    if spec.resolved_format == "parquet":
        return pq.read_schema(spec.path).remove_metadata()
    import polars as pl  # here, not at the top: the chunk jobs read Parquet through this module

    schema = _scan_csv(spec, text_columns=text_columns, infer=True).collect_schema()
    return _plain_strings(pl.DataFrame(schema=schema).to_arrow()).schema


def iter_table_batches(spec: LibrarySpec, *, text_columns: tuple[str, ...]) -> Iterator[pa.Table]:
    """Yield the rows in order as Arrow tables of any size; memory stays one batch."""
    if spec.resolved_format == "parquet":
        for batch in parquet_batches(spec.path):
            yield pa.Table.from_batches([batch])
        return
    frame = _scan_csv(spec, text_columns=text_columns, infer=True)
    for batch in frame.collect_batches(chunk_size=BATCH_ROWS):
        yield _plain_strings(batch.to_arrow())


def parquet_batches(
    path: str | os.PathLike[str], *, columns: Sequence[str] | None = None, batch_rows: int = BATCH_ROWS
) -> Iterator[pa.RecordBatch]:
    """The rows of a Parquet file in order, ``batch_rows`` at a time, with its exact Arrow types.

    Memory is one row group's compressed column data plus one batch, whatever the
    file's size: no pre-buffering and no read-ahead threads (measured: both let
    the resident size creep up with the number of row groups read).
    """
    with pq.ParquetFile(path, pre_buffer=False) as source:
        yield from source.iter_batches(batch_size=batch_rows, columns=columns, use_threads=False)


def _scan_csv(spec: LibrarySpec, *, text_columns: tuple[str, ...], infer: bool) -> pl.LazyFrame:
    import polars as pl

    return pl.scan_csv(
        spec.path,
        separator=_SEPARATORS[spec.resolved_format],
        infer_schema=infer,
        infer_schema_length=None,
        schema_overrides={c: pl.String for c in text_columns} or None,
        truncate_ragged_lines=True,
        encoding="utf8-lossy",
        raise_if_empty=False,
    )


def _plain_strings(table: pa.Table) -> pa.Table:
    """Polars exports large/view strings; plain strings keep the output schema simple."""
    fields = [
        (
            pa.field(f.name, pa.string())
            if pa.types.is_large_string(f.type) or pa.types.is_string_view(f.type)
            else f
        )
        for f in table.schema
    ]
    return table.cast(pa.schema(fields))
