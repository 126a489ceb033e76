"""Cut a library into chunks of ``chunk_size`` records, streaming, in input order.

A chunk is an Arrow table of :data:`~annotate.io.schema.CHUNK_SCHEMA` (position,
id, structure text, read error/warning) followed by the carried input columns.
Only one chunk (plus one reader batch) is in memory at a time, as Arrow data: text
records are converted a piece at a time, never held as Python objects for a whole
chunk. An empty library still yields one empty, typed chunk so that its schema
reaches the output.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from itertools import islice

import polars as pl
import pyarrow as pa

from annotate.io.library import LibrarySpec, RecordKind, find_column, structure_column
from annotate.io.records import NO_MOLBLOCK_END, TextRecord
from annotate.io.schema import CHUNK_SCHEMA, carried_names
from annotate.io.sdf import iter_sdf
from annotate.io.smi import iter_smi
from annotate.io.tables import iter_table_batches, table_columns, table_schema

#: text records turned into Arrow at a time; a chunk is the concatenation of such pieces
PIECE_RECORDS = 1_000


def record_kind(spec: LibrarySpec) -> RecordKind:
    """What the ``record`` column of this library's chunks holds."""
    fmt = spec.resolved_format
    if fmt == "sdf":
        return "molblock"
    if fmt == "smi":
        return "smiles"
    names = table_columns(spec)
    return structure_column(spec, names)[1] if names else "smiles"


def iter_chunks(spec: LibrarySpec, *, chunk_size: int) -> Iterator[pa.Table]:
    """Yield consecutive chunks of at most ``chunk_size`` records; at least one."""
    if chunk_size < 1:
        raise ValueError(f"chunk_size must be at least 1, got {chunk_size}")
    fmt, gzipped = spec.resolved_format, spec.gzipped  # both fail early on a file we cannot read
    if fmt in ("sdf", "smi"):
        reader = iter_sdf if fmt == "sdf" else iter_smi
        chunks = _text_chunks(reader(spec.path, gzipped=gzipped), spec=spec, chunk_size=chunk_size)
    else:
        chunks = _table_chunks(spec, chunk_size=chunk_size)
    empty = True
    for chunk in chunks:
        empty = False
        yield chunk
    if empty:
        yield _empty_chunk(spec)


def _text_chunks(records: Iterable[TextRecord], *, spec: LibrarySpec, chunk_size: int) -> Iterator[pa.Table]:
    iterator = iter(records)
    first = 0
    while True:
        pieces: list[pa.Table] = []
        names: dict[str, None] = {}
        for records_piece in _pieces(iterator, count=chunk_size):
            names.update(dict.fromkeys(name for r in records_piece for name in r.properties))
            pieces.append(text_chunk(records_piece, first_index=first + _rows(pieces), library=spec.name))
        if not pieces:
            return
        carried_names(list(names))  # a clash must fail even when the two names sit in different pieces
        chunk = pa.concat_tables(pieces, promote_options="default")  # properties stay first seen first
        del pieces
        first += chunk.num_rows
        yield chunk


def _pieces(iterator: Iterator[TextRecord], *, count: int) -> Iterator[list[TextRecord]]:
    """Up to ``count`` records, :data:`PIECE_RECORDS` at a time.

    A whole chunk of Python records costs about four times its text (measured on
    SDF), so a chunk is built from pieces turned into Arrow one after the other.
    """
    done = 0
    while done < count and (records := list(islice(iterator, min(PIECE_RECORDS, count - done)))):
        yield records
        done += len(records)


def _rows(tables: list[pa.Table]) -> int:
    return sum(t.num_rows for t in tables)


def text_chunk(records: list[TextRecord], *, first_index: int, library: str) -> pa.Table:
    """Chunk table of text records; properties become string columns, first seen first.

    Built through Polars: pyarrow's conversion of Python lists imports pandas, 44 MB
    that the split job has no other use for.
    """
    names = list(dict.fromkeys(name for r in records for name in r.properties))
    carried = carried_names(names)
    index = _positions(first_index, len(records))
    columns = [
        index,
        _ids(_texts("given", [r.title for r in records]), index=index, library=library),
        _texts("record", [r.text for r in records]),
        _texts("read_error", [r.error for r in records]),
        _texts("read_warning", [r.warning for r in records]),
        *(_texts(out, [r.properties.get(name) for r in records]) for name, out in zip(names, carried, strict=True)),
    ]
    fields = [*CHUNK_SCHEMA, *(pa.field(n, pa.string()) for n in carried)]
    # column by column: a DataFrame would rename a property with an empty name
    arrays = [series.to_arrow() for series in columns]
    return pa.Table.from_arrays(arrays, names=[f.name for f in fields]).cast(pa.schema(fields))


def _texts(name: str, values: list[str | None]) -> pl.Series:
    return pl.Series(name, values, dtype=pl.String)


def _positions(first_index: int, n: int) -> pl.Series:
    return pl.int_range(first_index, first_index + n, dtype=pl.Int64, eager=True).alias("input_index")


def _table_chunks(spec: LibrarySpec, *, chunk_size: int) -> Iterator[pa.Table]:
    names = table_columns(spec)
    if not names:
        return
    structure, kind = structure_column(spec, names)
    id_column = find_column(names, spec.id_column)
    text_columns = (structure,)
    first = 0
    for batch in _rebatch(iter_table_batches(spec, text_columns=text_columns), size=chunk_size):
        yield table_chunk(
            batch, first_index=first, library=spec.name, structure=structure, kind=kind, id_column=id_column
        )
        first += batch.num_rows


def table_chunk(
    batch: pa.Table,
    *,
    first_index: int,
    library: str,
    structure: str,
    kind: RecordKind,
    id_column: str | None,
) -> pa.Table:
    """Chunk table of tabular rows: all input columns carried, typed as they came."""
    n = batch.num_rows
    index = _positions(first_index, n)
    record, error = _structure_text(batch.column(structure), kind=kind, name=structure)
    ids = _ids(batch.column(id_column) if id_column else None, index=index, library=library)
    core = pl.DataFrame([index, ids, record, error, pl.Series("read_warning", [None] * n, dtype=pl.String)])
    core_table = core.to_arrow().cast(CHUNK_SCHEMA)
    carried = carried_names(batch.column_names)
    return pa.Table.from_arrays(
        [*core_table.columns, *batch.columns],
        schema=pa.schema(
            [*CHUNK_SCHEMA, *(f.with_name(c) for f, c in zip(batch.schema, carried, strict=True))]
        ),
    )


def _structure_text(column: pa.ChunkedArray, *, kind: RecordKind, name: str) -> tuple[pl.Series, pl.Series]:
    """The structure text of each row, or why there is none (missing, truncated, not text)."""
    n = len(column)
    label = "SMILES" if kind == "smiles" else "molblock"
    if not is_text_type(column.type):
        reason = f"{label} column {name!r} holds {column.type} values, not text"
        return (
            pl.Series("record", [None] * n, dtype=pl.String),
            pl.Series("read_error", [reason] * n, dtype=pl.String),
        )
    text = pl.Series("record", column.cast(pa.large_string()))
    raw = pl.col("record").str.strip_chars() if kind == "smiles" else pl.col("record")
    blank = raw.is_null() | (raw.str.strip_chars() == "")
    truncated = ~raw.str.contains("M  END", literal=True) if kind == "molblock" else pl.lit(False)
    frame = pl.DataFrame([text]).select(
        pl.when(blank | truncated).then(None).otherwise(raw).alias("record"),
        pl.when(blank)
        .then(pl.lit(f"missing {label}"))
        .when(truncated)
        .then(pl.lit(NO_MOLBLOCK_END))
        .otherwise(None)
        .alias("read_error"),
    )
    return frame["record"], frame["read_error"]


def is_text_type(kind: pa.DataType) -> bool:
    """Any Arrow spelling of a text column, dictionary-encoded (categorical) included."""
    if pa.types.is_dictionary(kind):
        return is_text_type(kind.value_type)
    return pa.types.is_string(kind) or pa.types.is_large_string(kind) or pa.types.is_string_view(kind)


def _ids(column: pa.ChunkedArray | pl.Series | None, *, index: pl.Series, library: str) -> pl.Series:
    """The input id as text; a missing or blank one falls back to ``<library>:<index>``."""
    given = (
        pl.Series("given", column).cast(pl.String, strict=False).str.strip_chars()
        if column is not None
        else pl.Series("given", [None] * len(index), dtype=pl.String)
    )
    fallback = pl.lit(f"{library}:") + pl.col("input_index").cast(pl.String)
    usable = pl.col("given").is_not_null() & (pl.col("given") != "")
    frame = pl.DataFrame([index, given]).select(
        pl.when(usable).then(pl.col("given")).otherwise(fallback).alias("id")
    )
    return frame["id"]


def _rebatch(batches: Iterable[pa.Table], *, size: int) -> Iterator[pa.Table]:
    """Regroup tables of any sizes into tables of exactly ``size`` rows (the last may be short)."""
    pending: list[pa.Table] = []
    count = 0
    for batch in batches:
        pending.append(batch)
        count += batch.num_rows
        while count >= size:
            merged = pa.concat_tables(pending)
            yield merged.slice(0, size)
            pending, count = [merged.slice(size)], count - size
    if count:
        yield pa.concat_tables(pending)


def _empty_chunk(spec: LibrarySpec) -> pa.Table:
    """A zero-row chunk carrying the input columns a tabular library declares."""
    if spec.resolved_format in ("sdf", "smi"):
        return text_chunk([], first_index=0, library=spec.name)
    names = table_columns(spec)
    if not names:
        return CHUNK_SCHEMA.empty_table()
    structure, _ = structure_column(spec, names)
    schema = table_schema(spec, text_columns=(structure,))
    carried = carried_names(schema.names)
    fields = [*CHUNK_SCHEMA, *(f.with_name(c) for f, c in zip(schema, carried, strict=True))]
    return pa.schema(fields).empty_table()
