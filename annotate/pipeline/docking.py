"""Docking-ready structures from the workflow: one table per chunk, then one file per pH and format.

Data flow per library: input chunk -> ``annotate_chunk`` (which builds the
chunk's docking records in the same pass as its annotations) ->
``chunks/docking/{chunk}.parquet`` -> ``export_docking_structures`` ->
``docking/ph{ph}.sdf`` and ``.smi``. Structures are built from the chunk's own
records, so 3D input coordinates come straight from its molblocks.
"""

from __future__ import annotations

import logging
import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from annotate.export.docking_table import StructureFile, write_structure_files
from annotate.export.structures import Which

log = logging.getLogger(__name__)


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
