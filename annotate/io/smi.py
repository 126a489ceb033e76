"""Streaming SMILES-file reader: one record per line, ``SMILES [name]``.

Blank lines and lines starting with ``#`` are not records. A first line whose
first word is ``smiles`` (any case) is a header, since no valid SMILES reads so.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

from annotate.io.records import TextRecord, decode, open_binary


def iter_smi(path: Path, *, gzipped: bool = False) -> Iterator[TextRecord]:
    """Yield every record of a SMILES file in order, one line in memory."""
    first = True
    with open_binary(path, gzipped=gzipped) as handle:
        for raw in handle:
            stripped = raw.strip()
            if not stripped or stripped.startswith(b"#"):
                continue
            warnings: list[str] = []
            text = decode(stripped, what="the line", warnings=warnings)
            smiles, *name = text.split(None, 1)
            if first and smiles.lower() == "smiles":
                first = False
                continue
            first = False
            title = name[0].strip() if name else None
            yield TextRecord(text=smiles, title=title or None, warnings=tuple(warnings))
