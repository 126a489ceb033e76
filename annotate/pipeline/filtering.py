"""Charge filters from the workflow: subsets of a library as Parquet and SD files, with their QC counts.

The Parquet subsets come from the annotated file (annotate.export.filters); the
SD subsets are the same molecules' docking records at the filter's pH, copied
from the per-chunk docking tables ``annotate_chunk`` wrote. Both passes stream:
memory does not grow with the library.
"""

from __future__ import annotations

import logging
import os
from collections.abc import Iterator, Mapping, Sequence
from contextlib import ExitStack
from pathlib import Path
from typing import Any, TextIO

import numpy as np
import polars as pl
import pyarrow as pa

from annotate.export.filters import FilterSpec, apply_filters
from annotate.io.atomic import atomic_path
from annotate.io.tables import parquet_batches
from annotate.settings import PH_TOLERANCE
from annotate.qc.filters import filter_counts, write_filter_counts

log = logging.getLogger(__name__)

#: docking rows read at a time; an SD record is about 5 KB, so this is about 5 MB of text
_DOCKING_BATCH_ROWS = 1_024


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
    parquet: Sequence[str | os.PathLike[str]],
    sdf: Sequence[str | os.PathLike[str]],
    qc_table: str | os.PathLike[str],
) -> dict[str, int]:
    """Write each filter's rows to its ``parquet`` path and SD records to its ``sdf`` path, and the QC table.

    The paths come from the rule (one per spec, in spec order), so the job writes
    exactly the outputs Snakemake expects. Returns kept counts per filter.
    """
    kept = apply_filters(annotated, specs, parquet)
    targets = [(Path(s), spec.ph, Path(p)) for spec, p, s in zip(specs, parquet, sdf, strict=True)]
    structures = dict(zip([s.name for s in specs], write_filtered_structures(docking_chunks, targets), strict=True))
    annotated_rows = sum(
        int((pl.from_arrow(batch)["status"] != "error").sum())
        for batch in parquet_batches(annotated, columns=["status"])
    )
    write_filter_counts(filter_counts(specs, kept=kept, structures=structures, annotated=annotated_rows), qc_table)
    for spec in specs:
        name = spec.name
        log.info(
            "filter %s: kept %d of %d molecules, %d structures", name, kept[name], annotated_rows, structures[name]
        )
        if structures[name] < kept[name]:
            log.warning("filter %s: fewer structures than kept molecules; see the annotate_chunk logs", name)
    return kept


def write_filtered_structures(
    docking_chunks: Sequence[str | os.PathLike[str]], targets: Sequence[tuple[Path, float, Path]]
) -> list[int]:
    """Per ``(sdf, ph, filtered_parquet)``: the SD records at ``ph`` of the molecules the filter kept.

    One pass over the docking tables, a batch at a time. The filtered Parquet and
    the docking tables are both in input order, so each filter's kept positions
    are read alongside the docking rows (a merge) and never held as a whole set.
    Every file is written atomically: all of them appear, or none does.
    """
    counts = [0] * len(targets)
    with ExitStack() as stack:
        outs = [_open_text(stack, sdf) for sdf, _, _ in targets]
        kept = [SortedPositions(parquet_batches(filtered, columns=["input_index"])) for _, _, filtered in targets]
        for chunk in docking_chunks if targets else ():
            for batch in parquet_batches(chunk, columns=["input_index", "ph", "sdf"], batch_rows=_DOCKING_BATCH_ROWS):
                rows = pl.from_arrow(batch)
                index = rows["input_index"].to_numpy()
                for k, (_, ph, _) in enumerate(targets):
                    at_ph = (rows["ph"] - ph).abs() < PH_TOLERANCE
                    selected = rows["sdf"].filter(at_ph & pl.Series(kept[k].contains(index)))
                    outs[k].writelines(selected.to_list())
                    counts[k] += selected.len()
    return counts


def _open_text(stack: ExitStack, final: Path) -> TextIO:
    tmp = stack.enter_context(atomic_path(final))
    return stack.enter_context(open(tmp, "w", encoding="utf-8", newline="\n"))


class SortedPositions:
    """Membership in an ascending stream of input positions, asked with ascending positions.

    Holds the stream's values from the last position asked onwards, about one
    batch, instead of the set of all of them (which grows with the library).
    """

    def __init__(self, batches: Iterator[pa.RecordBatch]) -> None:
        self._batches = batches
        self._held = np.empty(0, dtype=np.int64)
        self._asked = -1  # rows out of order would be dropped silently by the merge, so they fail

    def contains(self, index: np.ndarray) -> np.ndarray:
        """Which of ``index`` (ascending, not below any earlier query) are in the stream."""
        if not index.size:
            return np.zeros(0, dtype=bool)
        if index[0] < self._asked or np.any(np.diff(index) < 0):
            raise ValueError("docking rows are not in input order; rerun the chunks that wrote them")
        self._asked = int(index[-1])
        self._read_through(index[-1])
        where = np.minimum(np.searchsorted(self._held, index), max(self._held.size - 1, 0))
        found = self._held[where] == index if self._held.size else np.zeros(index.size, dtype=bool)
        self._held = self._held[np.searchsorted(self._held, index[-1]) :]  # the next query may repeat index[-1]
        return found

    def _read_through(self, position: int) -> None:
        while not self._held.size or self._held[-1] < position:
            batch = next(self._batches, None)
            if batch is None:
                return
            self._held = np.concatenate([self._held, pl.from_arrow(batch).to_series(0).to_numpy()])
