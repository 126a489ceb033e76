"""Streaming SDF reader (V2000 and V3000, plain or gzipped), one record at a time.

Records are cut at ``$$$$`` lines without parsing chemistry; RDKit only sees
the molblock later, in the annotating job. A record without an ``M  END`` line
is unreadable (truncated or not a molfile) and becomes an error; a last record
that lacks its ``$$$$`` terminator is kept with a warning.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path

from annotate.io.records import NO_MOLBLOCK_END, TextRecord, decode, open_binary

_TERMINATOR = b"$$$$"
_END = b"M  END"
_PROPERTY_HEADER = re.compile(rb"^>.*?<([^>]*)>")


def iter_sdf(path: Path, *, gzipped: bool = False) -> Iterator[TextRecord]:
    """Yield every record of an SDF in file order, holding one record in memory."""
    with open_binary(path, gzipped=gzipped) as handle:
        lines: list[bytes] = []
        for raw in handle:
            if raw.rstrip() == _TERMINATOR:
                yield parse_record(lines, terminated=True)
                lines = []
            else:
                lines.append(raw.rstrip(b"\r\n"))
        if any(line.strip() for line in lines):
            yield parse_record(lines, terminated=False)


def parse_record(lines: list[bytes], *, terminated: bool) -> TextRecord:
    """Split one record into molblock, title and data items."""
    if not any(raw.strip() for raw in lines):
        return TextRecord(text=None, error="unreadable record: empty")
    warnings: list[str] = []
    title = decode(lines[0], what="the title", warnings=warnings).strip() or None
    end = next((i for i, raw in enumerate(lines) if raw.rstrip() == _END), None)
    if end is None:
        return TextRecord(text=None, title=title, error=NO_MOLBLOCK_END)
    molblock = decode(b"\n".join(lines[1 : end + 1]) + b"\n", what="the molblock", warnings=warnings)
    molblock = (title or "") + "\n" + molblock
    properties = _properties(lines[end + 1 :], warnings=warnings)
    if not terminated:
        warnings.append("last record has no '$$$$' terminator")
    return TextRecord(text=molblock, title=title, properties=properties, warnings=tuple(warnings))


def _properties(lines: list[bytes], *, warnings: list[str]) -> dict[str, str]:
    """Data items: a ``> <name>`` header, value lines, then a blank line."""
    properties: dict[str, str] = {}
    ignored = 0
    i = 0
    while i < len(lines):
        header = _PROPERTY_HEADER.match(lines[i])
        if header is None:
            ignored += bool(lines[i].strip())
            i += 1
            continue
        name = decode(header.group(1), what="a property name", warnings=warnings)
        i += 1
        values: list[bytes] = []
        while i < len(lines) and lines[i].strip():
            values.append(lines[i])
            i += 1
        value = decode(b"\n".join(values), what=f"property {name!r}", warnings=warnings)
        if name in properties:
            warnings.append(f"property {name!r} given twice; kept the first value")
        else:
            properties[name] = value
    if ignored:
        warnings.append(f"{ignored} line(s) after 'M  END' outside any data item ignored")
    return properties
