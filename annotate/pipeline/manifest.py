"""The chunk plan of one library, written by the split and checked by the gather.

It is the record count the whole run answers to: the gather fails unless the
annotated rows match it chunk by chunk.
"""

from __future__ import annotations

import json
from dataclasses import asdict, dataclass
from pathlib import Path

from annotate.io.atomic import atomic_path

MANIFEST_NAME = "manifest.json"


@dataclass(frozen=True, slots=True)
class ChunkEntry:
    """One chunk: its file stem, the position of its first record, its record count."""

    name: str
    first_index: int
    records: int


@dataclass(frozen=True, slots=True)
class Manifest:
    library: str
    source: dict[str, str]
    record_kind: str
    chunk_size: int
    chunks: tuple[ChunkEntry, ...]

    @property
    def records(self) -> int:
        return sum(c.records for c in self.chunks)

    @property
    def chunk_names(self) -> list[str]:
        return [c.name for c in self.chunks]

    def write(self, directory: Path) -> None:
        body = {**asdict(self), "records": self.records}
        with atomic_path(directory / MANIFEST_NAME) as tmp:
            tmp.write_text(json.dumps(body, indent=2) + "\n")


def read_manifest(directory: str | Path) -> Manifest:
    """Load the manifest of a chunk directory."""
    body = json.loads((Path(directory) / MANIFEST_NAME).read_text())
    return Manifest(
        library=body["library"],
        source=body["source"],
        record_kind=body["record_kind"],
        chunk_size=body["chunk_size"],
        chunks=tuple(ChunkEntry(**c) for c in body["chunks"]),
    )


def chunk_name(number: int) -> str:
    """File stem of the ``number``-th chunk; zero-padded so listings sort in input order."""
    return f"{number:06d}"
