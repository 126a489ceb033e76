"""Split one library into chunk files: the work list of the annotating jobs.

One streaming pass over the input writes ``{chunk}.parquet`` files of at most
``chunk_size`` records plus ``manifest.json``, into a temporary directory that
is renamed into place at the end, so an interrupted split leaves nothing behind.
"""

from __future__ import annotations

import json
import logging
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from annotate.io.atomic import atomic_path
from annotate.io.chunks import iter_chunks, record_kind
from annotate.io.library import LibrarySpec
from annotate.io.schema import META_PREFIX
from annotate.pipeline.manifest import ChunkEntry, Manifest, chunk_name

log = logging.getLogger(__name__)


def split_library(spec: LibrarySpec, out_dir: str | Path, *, chunk_size: int) -> Manifest:
    """Write the chunks of ``spec`` into ``out_dir`` and return their manifest."""
    kind = record_kind(spec)
    metadata = {
        META_PREFIX + "library": spec.name,
        META_PREFIX + "record_kind": kind,
        META_PREFIX + "source": json.dumps(spec.source(), sort_keys=True),
    }
    entries: list[ChunkEntry] = []
    with atomic_path(out_dir) as tmp:
        tmp.mkdir(parents=True)
        first = 0
        for number, chunk in enumerate(iter_chunks(spec, chunk_size=chunk_size)):
            entry = ChunkEntry(name=chunk_name(number), first_index=first, records=chunk.num_rows)
            _write_chunk(chunk.replace_schema_metadata(metadata), tmp / f"{entry.name}.parquet")
            entries.append(entry)
            first += chunk.num_rows
            del chunk  # else it stays alive while the next one is built: two chunks in memory
        manifest = Manifest(
            library=spec.name,
            source=spec.source(),
            record_kind=kind,
            chunk_size=chunk_size,
            chunks=tuple(entries),
        )
        manifest.write(tmp)
    log.info(
        "library %s: %d records in %d chunk(s) from %s", spec.name, manifest.records, len(entries), spec.path
    )
    return manifest


def _write_chunk(table: pa.Table, path: Path) -> None:
    pq.write_table(table, path, compression="zstd")
