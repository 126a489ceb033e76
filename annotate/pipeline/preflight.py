"""Checks run while Snakemake reads the workflow, before any job starts.

A wrong path, format, column or rule file would otherwise surface as a failed
job whose reason sits in a log file, possibly after hours of other work. Here
every problem of the run is collected and raised at once, each naming the
library or file it concerns, and nothing has been written yet.
"""

from __future__ import annotations

import zlib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq

from annotate.io.chunks import is_text_type
from annotate.io.library import LibrarySpec, find_column, structure_column
from annotate.io.schema import carried_names
from annotate.io.tables import parquet_batches, table_columns, table_schema
from annotate.pipeline.config import nan_settings
from annotate.pipeline.manifest import MANIFEST_NAME
from annotate.ruleset import load_ruleset
from annotate.tables import RuleFileError

_GZIP_MAGIC = b"\x1f\x8b"
_READ_BLOCK = 1 << 20


class RunCheckError(ValueError):
    """The run cannot start; the message lists every problem found."""


def check_run(
    libraries: Mapping[str, LibrarySpec],
    *,
    config: Mapping[str, Any],
    chunk_dirs: Mapping[str, Path],
) -> None:
    """Raise :class:`RunCheckError` naming each unusable setting, library or rule file.

    ``config`` has passed the schema already. ``chunk_dirs`` are the split outputs
    per library: a gzipped or Parquet input is read to its end (the only way to
    find a truncated gzip or a damaged page) only while its split is still to do,
    so that reruns and dry runs stay quick.
    """
    problems = [f"{at} is NaN; give a number" for at in nan_settings(config)]
    problems += [
        problem
        for name, spec in libraries.items()
        if (problem := library_problem(spec, read_whole=_split_pending(spec.path, chunk_dirs[name])))
    ]
    user_rules = config.get("user_rules")
    if rules_problem := rule_file_problem(Path(user_rules) if user_rules else None):
        problems.append(rules_problem)
    if problems:
        listed = "\n".join(f"  - {p}" for p in problems)
        raise RunCheckError(f"Ionotate cannot start this run; nothing was done:\n{listed}")


def library_problem(spec: LibrarySpec, *, read_whole: bool) -> str | None:
    """Why ``spec`` cannot be read, or None; ``read_whole`` also reads a gzip or Parquet file to its end."""
    where = f"library {spec.name!r}: {str(spec.path)!r}"
    if not spec.path.exists():
        return f"{where} does not exist"
    if not spec.path.is_file():
        return f"{where} is not a file"
    try:
        fmt, gzipped = spec.resolved_format, spec.gzipped
        if gzipped:
            return _gzip_problem(spec.path, where=where, read_whole=read_whole)
        if fmt == "parquet":
            pq.ParquetFile(spec.path).close()  # the footer: a truncated file has none
            if read_whole and (problem := _parquet_data_problem(spec.path, where=where)):
                return problem
        if fmt in ("csv", "tsv", "parquet"):
            return _table_problem(spec, where=where)
        with open(spec.path, "rb") as handle:
            handle.read(1)
    except OSError as exc:
        return f"{where} cannot be read ({exc.strerror or exc})"
    except (pa.ArrowException, pl.exceptions.PolarsError) as exc:
        return f"{where} is not a readable {spec.resolved_format} file (truncated or corrupt?): {exc}"
    except ValueError as exc:
        message = str(exc)  # the library's own checks name the library already; others get the prefix
        return message if message.startswith(f"library {spec.name!r}") else f"{where}: {message}"
    return None


def rule_file_problem(user_rules: Path | None) -> str | None:
    """Why the rule tables cannot be used, or None; the packaged ones first, to blame the right file."""
    try:
        load_ruleset(None)
    except RuleFileError as exc:
        return f"packaged rule tables (a broken installation): {exc}"
    if user_rules is None:
        return None
    try:
        load_ruleset(user_rules)
    except RuleFileError as exc:
        return f"user_rules: {exc}"
    return None


def _split_pending(source: Path, chunk_dir: Path) -> bool:
    """Whether Snakemake will (re)run the split: no finished chunks, or an input newer than them."""
    manifest = chunk_dir / MANIFEST_NAME
    if not manifest.is_file() or not source.is_file():
        return True
    return source.stat().st_mtime > manifest.stat().st_mtime


def _gzip_problem(path: Path, *, where: str, read_whole: bool) -> str | None:
    with open(path, "rb") as handle:
        magic = handle.read(2)
        if not magic:
            return None  # an empty file is an empty library, as the reader sees it
        if magic != _GZIP_MAGIC:
            return f"{where} is not gzip-compressed, although its name ends in .gz"
        if not read_whole:
            return None
        handle.seek(0)
        inflater = zlib.decompressobj(wbits=zlib.MAX_WBITS | 16)
        try:
            while block := handle.read(_READ_BLOCK):
                inflater.decompress(block, 0)
                while inflater.eof and inflater.unused_data:  # a gzip file may hold several members
                    rest = inflater.unused_data
                    inflater = zlib.decompressobj(wbits=zlib.MAX_WBITS | 16)
                    inflater.decompress(rest, 0)
        except zlib.error as exc:
            return f"{where} is a corrupt gzip file ({exc})"
        if not inflater.eof:
            return f"{where} is a truncated gzip file (its compressed data ends early)"
    return None


def _parquet_data_problem(path: Path, *, where: str) -> str | None:
    """Decode every page once: a damaged page is only found by reading it (in small batches, so
    Snakemake's own process does not grow with the file)."""
    try:
        for _ in parquet_batches(path):
            pass
    except (OSError, pa.ArrowException) as exc:
        return f"{where} is a corrupt Parquet file ({exc})"
    return None


def _table_problem(spec: LibrarySpec, *, where: str) -> str | None:
    names = table_columns(spec)
    if not names:
        return None  # an empty file is an empty library
    structure, kind = structure_column(spec, names)
    find_column(names, spec.id_column)
    carried_names(names)
    if spec.resolved_format != "parquet":
        return None  # CSV/TSV structure columns are always read as text
    column_type = table_schema(spec, text_columns=(structure,)).field(structure).type
    if not is_text_type(column_type):
        label = "SMILES" if kind == "smiles" else "molblock"
        return (
            f"{where}: the {label} column {structure!r} holds {column_type} values, not text; "
            f"set '{kind}_column' to the column that holds the structures"
        )
    return None
