"""Docking-ready structures from the workflow: one table per chunk, then one file per pH and format.

Data flow per library: input chunk -> ``export_chunk_structures`` (one job per
chunk, beside ``annotate_chunk``) -> ``chunks/docking/{chunk}.parquet`` ->
``export_docking_structures`` -> ``docking/ph{ph}.sdf`` and ``.smi``.
Structures are rebuilt from the chunk's own records, so 3D input coordinates
come straight from its molblocks.
"""

from __future__ import annotations

import json
import logging
import os
import time
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

import pyarrow.parquet as pq
from rdkit import Chem, rdBase

from annotate.export.docking_table import DOCKING_SCHEMA, StructureFile, docking_table, write_structure_files
from annotate.export.structures import Which, docking_records
from annotate.io.atomic import atomic_path
from annotate.io.schema import CHUNK_SCHEMA, META_PREFIX, NOTICE, input_fields, read_run_metadata
from annotate.parse import mol_from_molblock, mol_from_smiles
from annotate.settings import Settings

log = logging.getLogger(__name__)

_PARSERS = {"smiles": mol_from_smiles, "molblock": mol_from_molblock}
#: records built before a batch is written out, bounding a job's memory
_BATCH_RECORDS = 256


@dataclass(frozen=True, slots=True)
class DockingOptions:
    """How records are built, from the ``docking`` section of the config; defaults match the schema.

    The section's ``formats`` is left out: it picks the files the workflow joins,
    not the records, so changing it must not rebuild every chunk.
    """

    species: Which = "dominant"
    max_per_molecule: int = 4
    embed_3d: bool = False
    seed: int = 1

    @classmethod
    def from_config(cls, section: Mapping[str, Any]) -> DockingOptions:
        return cls(
            species=section["species"],
            max_per_molecule=int(section["max_per_molecule"]),
            embed_3d=bool(section["embed_3d"]),
            seed=int(section["seed"]),
        )


def ph_label(ph: float) -> str:
    """The pH as written in file names: shortest text that reads back to the same number."""
    return repr(float(ph)).removesuffix(".0")


def export_chunk_structures(
    chunk: str | os.PathLike[str], out: str | os.PathLike[str], *, settings: Settings, options: DockingOptions
) -> int:
    """Write the docking records of every record of ``chunk`` at every pH of ``settings``; returns the count.

    A record that was unreadable, or whose structures cannot be built, gets none
    (the reason is in this job's log; its annotated row says the same).
    """
    rdBase.LogToPythonStderr()
    started = time.perf_counter()
    chunk = Path(chunk)
    source = pq.ParquetFile(chunk)
    kind = read_run_metadata(source.schema_arrow)["record_kind"]
    carried = [f.name for f in input_fields(source.schema_arrow, core=CHUNK_SCHEMA)]
    metadata = {
        META_PREFIX + "notice": NOTICE,
        META_PREFIX + "docking": json.dumps(asdict(options), sort_keys=True),
        META_PREFIX + "ph": json.dumps(list(settings.ph)),
    }
    written = molecules = without = 0
    with atomic_path(out) as tmp, pq.ParquetWriter(tmp, DOCKING_SCHEMA.with_metadata(metadata)) as writer:
        for batch in source.iter_batches(batch_size=_BATCH_RECORDS):
            pairs = []
            for row in batch.to_pylist():
                molecules += 1
                records = _records_of(row, kind=kind, carried=carried, settings=settings, options=options)
                without += not records
                pairs.extend((row["input_index"], mol) for mol in records)
            table = docking_table(pairs)
            writer.write_table(table)
            written += table.num_rows
    log.info(
        "%s: %d structures from %d records (%d without structures) in %.1f s",
        chunk.name,
        written,
        molecules,
        without,
        time.perf_counter() - started,
    )
    return written


def _records_of(
    row: Mapping[str, Any], *, kind: str, carried: Sequence[str], settings: Settings, options: DockingOptions
) -> list[Chem.Mol]:
    if row["read_error"] is not None or row["record"] is None:
        return []
    mol, _ = _PARSERS[kind](row["record"])
    if mol is None:
        return []
    for name, value in _input_properties(row, carried=carried):
        mol.SetProp(name, value)
    return docking_records(
        mol,
        id=row["id"],
        settings=settings,
        which=options.species,
        max_per_molecule=options.max_per_molecule,
        embed_3d=options.embed_3d,
        seed=options.seed,
    )


def _input_properties(row: Mapping[str, Any], *, carried: Sequence[str]) -> Iterator[tuple[str, str]]:
    """Carried input columns as SD properties; the structure column itself is the record, not a property."""
    for name in carried:
        value = row[name]
        if value is not None and value != row["record"]:
            yield name, str(value)


def export_docking_structures(
    docking_chunks: Sequence[str | os.PathLike[str]], outputs: Sequence[str | os.PathLike[str]], *, phs: Sequence[float]
) -> dict[str, int]:
    """Join a library's chunk tables into ``outputs`` (``.sdf`` or ``.smi``), ``outputs[k]`` at ``phs[k]``."""
    if len(outputs) != len(phs):
        raise ValueError(f"{len(outputs)} outputs for {len(phs)} pH values; give one pH per output")
    files = [StructureFile(Path(path), ph=float(ph)) for path, ph in zip(outputs, phs, strict=True)]
    counts = write_structure_files(docking_chunks, files)
    for target, count in zip(files, counts, strict=True):
        log.info("%s: %d structures at pH %g", target.path, count, target.ph)
    return {str(f.path): n for f, n in zip(files, counts, strict=True)}
