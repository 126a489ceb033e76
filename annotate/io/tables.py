"""Streaming readers for tabular libraries (CSV, TSV, Parquet) as Arrow batches.

Column types are kept as in the input: Parquet's own, or for CSV/TSV what
Polars infers from the whole file (so a late odd value cannot break a chunk).
The structure column of a CSV/TSV is always read as text.
"""

from __future__ import annotations

from collections.abc import Iterator

import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq

from annotate.io.library import LibrarySpec

_BATCH_ROWS = 65_536
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
    schema = _scan_csv(spec, text_columns=text_columns, infer=True).collect_schema()
    return _plain_strings(pl.DataFrame(schema=schema).to_arrow()).schema


def iter_table_batches(spec: LibrarySpec, *, text_columns: tuple[str, ...]) -> Iterator[pa.Table]:
    """Yield the rows in order as Arrow tables of any size; memory stays one batch."""
    if spec.resolved_format == "parquet":
        source = pq.ParquetFile(spec.path)
        for batch in source.iter_batches(batch_size=_BATCH_ROWS):
            yield pa.Table.from_batches([batch])
        return
    frame = _scan_csv(spec, text_columns=text_columns, infer=True)
    for batch in frame.collect_batches(chunk_size=_BATCH_ROWS):
        yield _plain_strings(batch.to_arrow())


def _scan_csv(spec: LibrarySpec, *, text_columns: tuple[str, ...], infer: bool) -> pl.LazyFrame:
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
