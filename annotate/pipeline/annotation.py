"""Annotate one chunk file: every record in, exactly one result row out.

Reading problems found by the split become error rows (or warnings on top of
the engine's verdict) here, so the engine only ever sees extractable records.
"""

from __future__ import annotations

import json
import logging
import time
import traceback
from collections import Counter
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
from rdkit import rdBase

import annotate
from annotate.engine import annotate_molblock, annotate_smiles
from annotate.io.atomic import atomic_path
from annotate.io.schema import CHUNK_SCHEMA, annotation_table, input_fields, read_run_metadata, run_metadata
from annotate.results import MoleculeResult
from annotate.ruleset import load_ruleset
from annotate.settings import Settings

log = logging.getLogger(__name__)

Annotator = Callable[..., MoleculeResult]
_ANNOTATORS: dict[str, Annotator] = {"smiles": annotate_smiles, "molblock": annotate_molblock}


def annotate_chunk(chunk: str | Path, out: str | Path, *, settings: Settings) -> None:
    """Annotate ``chunk`` (a split chunk file) into ``out`` (contract columns + input columns)."""
    rdBase.LogToPythonStderr()  # RDKit's own messages belong in this job's log
    started = time.perf_counter()
    # A bad rule file must fail the job, not turn every record into an "internal error" row.
    load_ruleset(settings.user_rules)
    chunk = Path(chunk)
    table = pq.read_table(chunk)
    meta = read_run_metadata(table.schema)
    library = meta["library"]
    annotator = _ANNOTATORS[meta["record_kind"]]
    results = [
        _annotate_record(annotator, record=rec, id=id_, error=err, warning=warn, settings=settings)
        for rec, id_, err, warn in zip(
            *(table.column(c).to_pylist() for c in ("record", "id", "read_error", "read_warning")),
            strict=True,
        )
    ]
    core = annotation_table(
        results,
        library=library,
        input_index=table.column("input_index").to_pylist(),
        ids=table.column("id").to_pylist(),
    )
    carried = input_fields(table.schema, core=CHUNK_SCHEMA)
    source = json.loads(meta["source"])
    metadata = run_metadata(library=library, source=source, settings=settings, version=annotate.__version__)
    out_table = pa.Table.from_arrays(
        [*core.columns, *(table.column(f.name) for f in carried)],
        schema=pa.schema([*core.schema, *carried], metadata=metadata),
    )
    with atomic_path(out) as tmp:
        pq.write_table(out_table, tmp, compression="zstd")
    counts = Counter(r.status for r in results)
    log.info(
        "%s: %d records (ok %d, warning %d, error %d) in %.1f s",
        chunk.name,
        len(results),
        counts["ok"],
        counts["warning"],
        counts["error"],
        time.perf_counter() - started,
    )


def _annotate_record(
    annotator: Annotator,
    *,
    record: str | None,
    id: str,
    error: str | None,
    warning: str | None,
    settings: Settings,
) -> MoleculeResult:
    """One result per record, whatever happens; an engine exception is logged, not fatal."""
    if error is not None or record is None:
        return MoleculeResult(id=id, status="error", messages=(error or "missing structure",))
    try:
        result = annotator(record, id=id, settings=settings)
    except Exception as exc:  # the engine promises not to raise; one bad record must not sink the chunk
        log.error("engine raised on record %r:\n%s", id, traceback.format_exc())
        return MoleculeResult(
            id=id, status="error", messages=(f"internal error: {type(exc).__name__}: {exc}",)
        )
    if warning is None:
        return result
    status = "warning" if result.status == "ok" else result.status
    return replace(result, status=status, messages=(*result.messages, warning))
