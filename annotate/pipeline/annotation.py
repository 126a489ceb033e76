"""Annotate one chunk file: every record in, exactly one result row out.

Reading problems found by the split become error rows (or warnings on top of
the engine's verdict) here, so the engine only ever sees extractable records.
The same pass can build the chunk's docking records, so each record is parsed
and annotated once however many outputs need it.
"""

from __future__ import annotations

import json
import logging
import os
import time
import traceback
from collections import Counter
from collections.abc import Iterator, Mapping, Sequence
from contextlib import ExitStack
from dataclasses import asdict, replace
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq
from rdkit import Chem, rdBase

import annotate
from annotate.engine import BATCH, Annotated, annotate_batch
from annotate.export.docking_table import DOCKING_SCHEMA, docking_table
from annotate.export.structures import species_records
from annotate.io.atomic import atomic_path
from annotate.io.schema import (
    CHUNK_SCHEMA,
    META_PREFIX,
    NOTICE,
    annotation_table,
    input_fields,
    output_schema,
    read_run_metadata,
    run_metadata,
)
from annotate.io.tables import parquet_batches
from annotate.parse import mol_from_molblock, mol_from_smiles
from annotate.pipeline.docking import DockingOptions
from annotate.results import MoleculeResult
from annotate.ruleset import load_ruleset
from annotate.settings import Settings

log = logging.getLogger(__name__)

_PARSERS = {"smiles": mol_from_smiles, "molblock": mol_from_molblock}
#: records whose docking rows are written together, bounding what a job holds besides its results
_DOCKING_BATCH = 256
#: records read, annotated and written as one Parquet row group: what a job holds at once,
#: whatever the chunk size (a 50,000-record chunk needs no more memory than a 5,000 one)
ROW_GROUP = 8192


def annotate_chunk(
    chunk: str | os.PathLike[str],
    out: str | os.PathLike[str],
    *,
    settings: Settings,
    docking_out: str | os.PathLike[str] | None = None,
    docking: DockingOptions | None = None,
) -> None:
    """Annotate ``chunk`` (a split chunk file) into ``out`` (contract columns + input columns).

    With ``docking_out``, the docking records of every record at every pH of
    ``settings`` (built as ``docking`` says) are written there too, as a
    :data:`~annotate.export.docking_table.DOCKING_SCHEMA` table; ``docking=None``
    writes that table empty (nothing downstream reads it) and skips the work.
    A record that is unreadable or whose structures cannot be built gets none
    (the reason is in the job's log and in its annotated row).
    """
    rdBase.LogToPythonStderr()  # RDKit's own messages belong in this job's log
    started = time.perf_counter()
    # A bad rule file must fail the job, not turn every record into an "internal error" row.
    load_ruleset(settings.user_rules)
    chunk = Path(chunk)
    source_schema = pq.read_schema(chunk)
    meta = read_run_metadata(source_schema)
    library = meta["library"]
    carried = input_fields(source_schema, core=CHUNK_SCHEMA)
    metadata = run_metadata(
        library=library, source=json.loads(meta["source"]), settings=settings, version=annotate.__version__
    )
    schema = output_schema(carried, metadata=metadata)
    counts: Counter[str] = Counter()
    with ExitStack() as stack:
        structures = None
        if docking_out is not None:
            structures = stack.enter_context(_DockingWriter(docking_out, settings=settings, options=docking))
        tmp = stack.enter_context(atomic_path(out))
        writer = stack.enter_context(pq.ParquetWriter(tmp, schema, compression="zstd"))
        for part in parquet_batches(chunk, batch_rows=ROW_GROUP):
            rows = pa.Table.from_batches([part])
            results = list(
                _annotate_rows(rows, kind=meta["record_kind"], carried=carried, settings=settings, structures=structures)
            )
            core = annotation_table(
                results,
                library=library,
                input_index=rows.column("input_index").to_pylist(),
                ids=rows.column("id").to_pylist(),
            )
            writer.write_table(
                pa.Table.from_arrays([*core.columns, *(rows.column(f.name) for f in carried)], schema=schema)
            )
            counts.update(r.status for r in results)
    log.info(
        "%s: %d records (ok %d, warning %d, error %d) in %.1f s",
        chunk.name,
        counts.total(),
        counts["ok"],
        counts["warning"],
        counts["error"],
        time.perf_counter() - started,
    )
    if structures is not None:
        log.info("%s: %d docking structures (%d records without)", chunk.name, structures.written, structures.without)


def _annotate_rows(
    table: pa.Table,
    *,
    kind: str,
    carried: Sequence[pa.Field],
    settings: Settings,
    structures: _DockingWriter | None,
) -> Iterator[MoleculeResult]:
    parse = _PARSERS[kind]
    names = [f.name for f in carried]
    columns = ["input_index", "record", "id", "read_error", "read_warning", *names]
    rows = table.select(columns).to_pylist()
    for start in range(0, len(rows), BATCH):
        batch = rows[start : start + BATCH]
        for row, annotated in zip(batch, _annotate_batch(parse, batch, settings=settings), strict=True):
            if structures is not None:
                structures.add(row["input_index"], annotated, properties=_input_properties(row, carried=names))
            yield annotated.result


def _annotate_batch(parse: Any, rows: Sequence[Mapping[str, Any]], *, settings: Settings) -> list[Annotated]:
    """One result per record, whatever happens; a parser exception is logged, not fatal.

    Records the split could not read, or that do not parse, reach the engine as
    None with their reason, so the engine writes every row of the batch.
    """
    mols: list[Chem.Mol | None] = []
    reasons: list[str | None] = []
    for row in rows:
        mol, reason = None, None
        if not _was_read(row):
            reason = row["read_error"] or "missing structure"
        else:
            try:
                mol, reason = parse(row["record"])
            except Exception as exc:  # the parsers promise not to raise; one bad record must not sink the chunk
                log.error("parser raised on record %r:\n%s", row["id"], traceback.format_exc())
                reason = f"internal error: {type(exc).__name__}: {exc}"
        mols.append(mol)
        reasons.append(reason)
    ids = [row["id"] for row in rows]
    annotated = annotate_batch(mols, ids=ids, reasons=reasons, settings=settings, owned=True)
    return [
        _with_read_warning(a, row["read_warning"]) if _was_read(row) else a
        for a, row in zip(annotated, rows, strict=True)
    ]


def _was_read(row: Mapping[str, Any]) -> bool:
    return row["read_error"] is None and row["record"] is not None


def _with_read_warning(annotated: Annotated, warning: str | None) -> Annotated:
    """A reading problem the split noted is a warning on top of the engine's verdict."""
    if warning is None:
        return annotated
    result = annotated.result
    status = "warning" if result.status == "ok" else result.status
    return replace(annotated, result=replace(result, status=status, messages=(*result.messages, warning)))


def _input_properties(row: Mapping[str, Any], *, carried: Sequence[str]) -> dict[str, str]:
    """Carried input columns as SD properties; the structure column itself is the record, not a property."""
    return {
        name: str(value)
        for name in carried
        if (value := row[name]) is not None and value != row["record"]
    }


class _DockingWriter:
    """Docking rows of a chunk, written in batches as records are annotated."""

    def __init__(self, path: str | os.PathLike[str], *, settings: Settings, options: DockingOptions | None) -> None:
        self.options = options
        self.written = self.without = 0
        self._path = path
        self._metadata = {
            META_PREFIX + "notice": NOTICE,
            META_PREFIX + "docking": json.dumps(asdict(options) if options else None, sort_keys=True),
            META_PREFIX + "ph": json.dumps(list(settings.ph)),
        }
        self._pending: list[tuple[int, Chem.Mol]] = []
        self._records = 0

    def __enter__(self) -> _DockingWriter:
        self._stack = ExitStack()
        tmp = self._stack.enter_context(atomic_path(self._path))
        self._writer = self._stack.enter_context(pq.ParquetWriter(tmp, DOCKING_SCHEMA.with_metadata(self._metadata)))
        return self

    def add(self, input_index: int, annotated: Annotated, *, properties: Mapping[str, str]) -> None:
        options = self.options
        if options is None:
            return
        records = (
            species_records(
                annotated,
                id=annotated.result.id,
                properties=properties,
                which=options.species,
                max_per_molecule=options.max_per_molecule,
                embed_3d=options.embed_3d,
                seed=options.seed,
            )
            if annotated.parent is not None
            else []
        )
        self.without += not records
        self._pending.extend((input_index, mol) for mol in records)
        self._records += 1
        if self._records % _DOCKING_BATCH == 0:
            self._flush()

    def _flush(self) -> None:
        table = docking_table(self._pending)
        self._writer.write_table(table)
        self.written += table.num_rows
        self._pending = []

    def __exit__(self, *exc_info: object) -> None:
        if exc_info[0] is None:
            self._flush()  # also writes an empty, typed table for an empty chunk
        self._stack.__exit__(*exc_info)
