"""One record of a text format (SDF, SMILES file) as read, before any chemistry.

Readers never raise for a bad record: they describe what went wrong in
``error`` (the record cannot be annotated) or ``warning`` (it can, with a caveat),
so that every record becomes exactly one output row.
"""

from __future__ import annotations

import gzip
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

NO_MOLBLOCK_END = "unreadable record: no 'M  END' line (truncated, or not a molfile)"


@dataclass(frozen=True, slots=True)
class TextRecord:
    """A record's structure text, title and properties, or the reason it has none."""

    text: str | None
    title: str | None = None
    properties: Mapping[str, str] = field(default_factory=dict)
    error: str | None = None
    warnings: tuple[str, ...] = ()

    @property
    def warning(self) -> str | None:
        return "; ".join(self.warnings) if self.warnings else None


@contextmanager
def open_binary(path: Path, *, gzipped: bool) -> Iterator[BinaryIO]:
    """Open for streaming line by line; bytes, because a record may not be valid UTF-8."""
    handle = gzip.open(path, "rb") if gzipped else open(path, "rb")
    try:
        yield handle  # type: ignore[misc]
    finally:
        handle.close()


def decode(raw: bytes, *, what: str, warnings: list[str]) -> str:
    """Decode UTF-8, replacing bad bytes and saying where, rather than losing the record."""
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError:
        warnings.append(f"non-UTF-8 bytes replaced in {what}")
        return raw.decode("utf-8", errors="replace")
