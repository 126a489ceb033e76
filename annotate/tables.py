"""One reader for every rule table, so each file follows the same conventions.

Rule tables are tab-separated text: lines starting with ``#`` are comments
(disabled rows stay visible that way), the first non-comment line is the
header, every row must carry a non-empty ``source``. A bad row fails at load
time with its file and line quoted, never later in the middle of a library.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import TypeVar

T = TypeVar("T")


class RuleFileError(ValueError):
    """A rule table that cannot be used; the message names file, line and problem."""


@dataclass(frozen=True, slots=True)
class Row:
    """One table row with its origin, for error messages and provenance."""

    path: str
    line: int
    text: str
    fields: dict[str, str]

    def fail(self, problem: str) -> RuleFileError:
        return RuleFileError(f"{self.path}:{self.line}: {problem}\n    {self.text}")

    def text_field(self, name: str, *, required: bool = True) -> str:
        value = self.fields.get(name, "").strip()
        if required and not value:
            raise self.fail(f"column '{name}' is empty")
        return value

    def float_field(self, name: str, *, default: float | None = None) -> float:
        value = self.fields.get(name, "").strip()
        if not value:
            if default is None:
                raise self.fail(f"column '{name}' is empty")
            return default
        try:
            return float(value)
        except ValueError:
            raise self.fail(f"column '{name}' is not a number: {value!r}") from None

    def optional_float(self, name: str) -> float | None:
        value = self.fields.get(name, "").strip()
        return None if not value else self.float_field(name)


def packaged(name: str) -> Path:
    """Path of a table shipped inside the package (``annotate/data``)."""
    return Path(str(resources.files("annotate") / "data" / name))


def rule_table_checksums(user_rules: Path | None = None) -> dict[str, str]:
    """SHA-256 of every rule table a run reads, so a result names the exact tables that made it.

    Keys are ``data/<name>.tsv`` for each packaged table and ``user_rules/<file name>``
    for a user rule file. The workflow passes this to the annotation jobs as a param,
    so an edited table (packaged or user) reruns them; the jobs write it into the run
    metadata of every annotated file.
    """
    data = Path(str(resources.files("annotate") / "data"))
    sums = {f"data/{path.name}": _sha256(path) for path in sorted(data.glob("*.tsv"))}
    if user_rules is not None:
        sums[f"user_rules/{Path(user_rules).name}"] = _sha256(Path(user_rules))
    return sums


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def read_rows(path: Path, *, required: tuple[str, ...]) -> Iterator[Row]:
    """Yield the rows of a table, checking the header names every required column."""
    header: list[str] | None = None
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise RuleFileError(f"{path}: cannot read rule table ({exc.strerror})") from None
    except UnicodeDecodeError:
        raise RuleFileError(f"{path}: rule table is not UTF-8 text") from None
    for number, raw in enumerate(text.splitlines(), start=1):
        if not raw.strip() or raw.lstrip().startswith("#"):
            continue
        cells = raw.split("\t")
        if header is None:
            header = [c.strip() for c in cells]
            missing = [c for c in required if c not in header]
            if missing:
                raise RuleFileError(f"{path}:{number}: header lacks column(s) {', '.join(missing)}")
            continue
        if len(cells) > len(header):
            raise RuleFileError(f"{path}:{number}: {len(cells)} cells but {len(header)} columns\n    {raw}")
        row = Row(str(path), number, raw, dict(zip(header, cells, strict=False)))
        row.text_field("source")
        yield row
    if header is None:
        raise RuleFileError(f"{path}: rule table has no header line")


def load_table(path: Path, parse: Callable[[Row], T], *, required: tuple[str, ...]) -> tuple[T, ...]:
    """Parse every row of a table with ``parse``; errors keep the row's location."""
    return tuple(parse(row) for row in read_rows(path, required=required))
