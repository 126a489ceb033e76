"""Docking records as a typed table: the per-chunk file the per-pH SD and SMILES files are joined from.

A chunk's records are built once (the expensive part, one job per chunk); the SD
text is stored ready to copy, so joining a library's chunks into one file per pH
needs no RDKit and streams one chunk at a time.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Sequence
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path
from typing import Literal, TextIO

import pyarrow as pa
import pyarrow.compute as pc
from rdkit import Chem

from annotate.export.structures import SMILES_HEADER, record_smiles, sdf_text, smiles_line
from annotate.io.atomic import atomic_path
from annotate.io.tables import parquet_batches
from annotate.settings import PH_TOLERANCE

StructureFormat = Literal["sdf", "smi"]
STRUCTURE_FORMATS: dict[str, StructureFormat] = {".sdf": "sdf", ".smi": "smi"}

#: one row per written species; input order, then pH order, then rank
DOCKING_SCHEMA = pa.schema(
    [
        ("input_index", pa.int64()),
        ("id", pa.string()),
        ("ph", pa.float64()),
        ("rank", pa.int32()),
        ("charge", pa.int32()),
        ("fraction", pa.float64()),
        ("smiles", pa.string()),
        ("sdf", pa.string()),
    ]
)


@dataclass(frozen=True, slots=True)
class StructureFile:
    """One file to write: the records at ``ph``."""

    path: Path
    ph: float

    @property
    def format(self) -> StructureFormat:
        """Taken from the suffix, so a file's name and its content cannot disagree."""
        found = STRUCTURE_FORMATS.get(self.path.suffix.lower())
        if found is None:
            raise ValueError(f"{self.path}: structure files end in {' or '.join(STRUCTURE_FORMATS)}")
        return found


def docking_table(records: Iterable[tuple[int, Chem.Mol]]) -> pa.Table:
    """Rows of :data:`DOCKING_SCHEMA` from (input position, labelled record) pairs."""
    rows = [
        {
            "input_index": index,
            "id": mol.GetProp("ionotate_id"),
            "ph": mol.GetDoubleProp("ionotate_ph"),
            "rank": mol.GetIntProp("ionotate_rank"),
            "charge": mol.GetIntProp("ionotate_charge"),
            "fraction": mol.GetDoubleProp("ionotate_fraction"),
            "smiles": record_smiles(mol),
            "sdf": sdf_text(mol),
        }
        for index, mol in records
    ]
    return pa.Table.from_pylist(rows, schema=DOCKING_SCHEMA)


def write_structure_files(chunk_files: Sequence[str | os.PathLike[str]], files: Sequence[StructureFile]) -> list[int]:
    """Join chunk tables into ``files`` in one streaming pass; returns the records written to each.

    Every file is written atomically: all of them appear, or none does.
    """
    counts = [0] * len(files)
    with ExitStack() as stack:
        outs = [_open(stack, f) for f in files]
        for chunk in chunk_files:
            # batch by batch, so the job's memory does not follow the chunk size or the library size
            for batch in parquet_batches(chunk, columns=DOCKING_SCHEMA.names):
                table = pa.Table.from_batches([batch]).cast(DOCKING_SCHEMA)
                for k, (target, out) in enumerate(zip(files, outs, strict=True)):
                    selected = table.filter(_selection(table, target))
                    _write_rows(selected, out, fmt=target.format)
                    counts[k] += selected.num_rows
    return counts


def _open(stack: ExitStack, target: StructureFile) -> TextIO:
    fmt = target.format  # an unknown suffix fails before anything is written
    tmp = stack.enter_context(atomic_path(target.path))
    out = stack.enter_context(open(tmp, "w", encoding="utf-8", newline="\n"))
    if fmt == "smi":
        out.write("\t".join(SMILES_HEADER) + "\n")
    return out


def _selection(table: pa.Table, target: StructureFile) -> pa.ChunkedArray:
    return pc.less(pc.abs(pc.subtract(table.column("ph"), target.ph)), PH_TOLERANCE)


def _write_rows(table: pa.Table, out: TextIO, *, fmt: StructureFormat) -> None:
    if fmt == "sdf":
        out.writelines(table.column("sdf").to_pylist())
        return
    columns = [table.column(name).to_pylist() for name in ("smiles", "id", "ph", "charge", "fraction")]
    for smiles, id_, ph, charge, fraction in zip(*columns, strict=True):
        out.write(smiles_line(smiles=smiles, id=id_, ph=ph, charge=charge, fraction=fraction))
