"""Charge filters from the workflow: subsets of a library as Parquet and SD files, with their QC counts.

The Parquet subsets come from the annotated file (annotate.export.filters); the
SD subsets are the same molecules' docking records at the filter's pH, copied
from the chunk tables ``export_chunk_structures`` wrote.
"""

from __future__ import annotations

import logging
import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import polars as pl

from annotate.export.docking_table import StructureFile, kept_positions, write_structure_files
from annotate.export.filters import PH_TOLERANCE, FilterSpec, apply_filters
from annotate.qc.filters import filter_counts, write_filter_counts

log = logging.getLogger(__name__)


def filter_specs(entries: Sequence[Mapping[str, Any]]) -> list[FilterSpec]:
    """The ``filters`` section of the config as specs; a bad or repeated name fails here, before any job."""
    specs = [
        FilterSpec(
            name=str(entry["name"]),
            ph=float(entry["ph"]),
            charge_min=entry.get("charge_min"),
            charge_max=entry.get("charge_max"),
            classes=frozenset(entry.get("classes") or ()),
            min_neutral_fraction=entry.get("min_neutral_fraction"),
        )
        for entry in entries
    ]
    names = [s.name for s in specs]
    repeated = sorted({n for n in names if names.count(n) > 1})
    if repeated:
        raise ValueError(f"filters: names must be unique, repeated: {repeated}")
    return specs


def ph_values_with_filters(ph: Sequence[float], specs: Sequence[FilterSpec]) -> list[float]:
    """The run's pH values: the configured ones, then each filter pH not among them.

    A filter reads the state at its pH from the annotation, so that pH must be
    computed; adding it here lets the default filter work whatever ``ph`` says.
    """
    values = [float(p) for p in ph]
    for spec in specs:
        if not any(abs(spec.ph - p) < PH_TOLERANCE for p in values):
            values.append(spec.ph)
    return values


def filter_library(
    annotated: str | os.PathLike[str],
    docking_chunks: Sequence[str | os.PathLike[str]],
    *,
    specs: Sequence[FilterSpec],
    outdir: str | os.PathLike[str],
    qc_table: str | os.PathLike[str],
) -> dict[str, int]:
    """Write ``{outdir}/{name}.parquet`` and ``.sdf`` per filter and the QC table; returns kept counts."""
    outdir = Path(outdir)
    kept = apply_filters(annotated, specs, outdir)
    files = [
        StructureFile(outdir / f"{spec.name}.sdf", ph=spec.ph, keep=kept_positions(outdir / f"{spec.name}.parquet"))
        for spec in specs
    ]
    structures = dict(zip([s.name for s in specs], write_structure_files(docking_chunks, files), strict=True))
    annotated_rows = pl.scan_parquet(annotated).filter(pl.col("status") != "error").select(pl.len()).collect().item()
    write_filter_counts(filter_counts(specs, kept=kept, structures=structures, annotated=annotated_rows), qc_table)
    for spec in specs:
        name = spec.name
        log.info(
            "filter %s: kept %d of %d molecules, %d structures", name, kept[name], annotated_rows, structures[name]
        )
        if structures[name] < kept[name]:
            log.warning("filter %s: fewer structures than kept molecules; see the export_chunk_structures logs", name)
    return kept
