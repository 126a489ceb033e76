"""Merge a library's annotated chunks into one Parquet file, in input order.

Streams each chunk in batches, so memory depends neither on the library's size
nor on ``chunk_size``, and refuses to write the result unless every input record
came back exactly once, in order.
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from annotate.io.atomic import atomic_path
from annotate.io.schema import ANNOTATION_SCHEMA, META_PREFIX, input_fields, output_schema, read_run_metadata
from annotate.io.tables import parquet_batches
from annotate.pipeline.manifest import ChunkEntry, Manifest, read_manifest

log = logging.getLogger(__name__)


class RecordCountError(RuntimeError):
    """The annotated rows do not account for every input record exactly once."""


def gather_annotations(chunk_dir: str | Path, annotated: Sequence[str | Path], out: str | Path) -> None:
    """Write ``out`` from the annotated chunks of the library split into ``chunk_dir``."""
    manifest = read_manifest(chunk_dir)
    paths = [Path(p) for p in annotated]
    _check_chunk_list(manifest, paths)
    schemas = [pq.read_schema(p) for p in paths]
    schema = output_schema(_carried_fields(schemas), metadata=_shared_metadata(schemas, paths))
    written = 0
    with atomic_path(out) as tmp, pq.ParquetWriter(tmp, schema, compression="zstd") as writer:
        for entry, path in zip(manifest.chunks, paths, strict=True):
            found = 0
            for batch in parquet_batches(path):
                table = pa.Table.from_batches([batch])
                _check_rows(manifest, entry, table, start=found)
                writer.write_table(_conform(table, schema))
                found += table.num_rows
            if found != entry.records:
                raise RecordCountError(_chunk_message(manifest, entry, found))
            written += found
        if written != manifest.records:
            raise RecordCountError(_count_message(manifest, written, detail="rows written"))
    log.info("library %s: %d rows from %d chunk(s) -> %s", manifest.library, written, len(paths), out)


def _check_chunk_list(manifest: Manifest, paths: list[Path]) -> None:
    names = [p.stem for p in paths]
    if names != manifest.chunk_names:
        raise RecordCountError(
            f"library {manifest.library!r}: annotated chunks {names} do not match the split's chunks "
            f"{manifest.chunk_names}; rerun the workflow so every chunk is annotated once"
        )


def _check_rows(manifest: Manifest, entry: ChunkEntry, table: pa.Table, *, start: int) -> None:
    """``table`` holds rows ``start`` onwards of ``entry``: the next input indices, in order."""
    first = entry.first_index + start
    expected = pa.array(range(first, first + table.num_rows), type=pa.int64())
    found = table.column("input_index").combine_chunks().cast(pa.int64())
    if start + table.num_rows > entry.records or not found.equals(expected):
        raise RecordCountError(_chunk_message(manifest, entry, start + table.num_rows))


def _chunk_message(manifest: Manifest, entry: ChunkEntry, found: int) -> str:
    last = entry.first_index + entry.records - 1
    return (
        _count_message(manifest, found, detail=f"rows in chunk {entry.name}")
        + f"; chunk {entry.name} should hold records {entry.first_index}..{last} in order"
    )


def _count_message(manifest: Manifest, found: int, *, detail: str) -> str:
    return (
        f"library {manifest.library!r}: record count mismatch - {found} {detail}, but the split read "
        f"{manifest.records} records from {manifest.source['path']} ({len(manifest.chunks)} chunks). "
        "Nothing was written; delete the library's chunk files and rerun."
    )


def _carried_fields(schemas: list[pa.Schema]) -> list[pa.Field]:
    """Input columns of all chunks, first seen first (SDF properties differ between chunks)."""
    per_chunk = [pa.schema(input_fields(s, core=ANNOTATION_SCHEMA)) for s in schemas]
    return list(pa.unify_schemas(per_chunk)) if per_chunk else []


def _shared_metadata(schemas: list[pa.Schema], paths: list[Path]) -> dict[str, str]:
    """Run metadata; chunks annotated with different settings must not be mixed."""
    found = [read_run_metadata(s) for s in schemas]
    for meta, path in zip(found[1:], paths[1:], strict=True):
        if meta != found[0]:
            raise ValueError(f"{path} was annotated with other settings than {paths[0]}; rerun the workflow")
    return {META_PREFIX + k: v for k, v in found[0].items()}


def _conform(table: pa.Table, schema: pa.Schema) -> pa.Table:
    """Give a chunk the merged column set: absent SDF properties become nulls."""
    columns = [
        (
            table.column(f.name).cast(f.type)
            if f.name in table.column_names
            else pa.nulls(table.num_rows, f.type)
        )
        for f in schema
    ]
    return pa.Table.from_arrays(columns, schema=schema)
