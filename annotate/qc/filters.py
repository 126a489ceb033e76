"""QC of the charge filters: what each filter asked for and how many molecules it kept.

One row per configured filter, written by the filtering job and read back into
``summary.json``, so the headline numbers and the table cannot disagree.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence

import polars as pl

from annotate.export.filters import FilterSpec
from annotate.io.atomic import atomic_path

#: columns of ``qc/filters.tsv``; ``annotated`` counts the library's non-error rows,
#: ``structures`` the records of the filter's SD file (more than ``kept`` with several species)
FILTER_COUNTS_SCHEMA: dict[str, pl.DataType] = {
    "filter": pl.String(),
    "ph": pl.Float64(),
    "charge_min": pl.Int64(),
    "charge_max": pl.Int64(),
    "classes": pl.String(),
    "min_neutral_fraction": pl.Float64(),
    "kept": pl.Int64(),
    "annotated": pl.Int64(),
    "structures": pl.Int64(),
}


def filter_counts(
    specs: Sequence[FilterSpec],
    *,
    kept: Mapping[str, int],
    structures: Mapping[str, int],
    annotated: int,
) -> pl.DataFrame:
    """The QC table, in config order; an empty ``classes`` is written as ``any``."""
    rows = [
        {
            "filter": spec.name,
            "ph": spec.ph,
            "charge_min": spec.charge_min,
            "charge_max": spec.charge_max,
            "classes": ",".join(sorted(spec.classes)) or "any",
            "min_neutral_fraction": spec.min_neutral_fraction,
            "kept": kept[spec.name],
            "annotated": annotated,
            "structures": structures[spec.name],
        }
        for spec in specs
    ]
    return pl.DataFrame(rows, schema=FILTER_COUNTS_SCHEMA)


def write_filter_counts(table: pl.DataFrame, path: str | os.PathLike[str]) -> None:
    with atomic_path(path) as tmp:
        table.write_csv(tmp, separator="\t")


def read_filter_counts(path: str | os.PathLike[str]) -> pl.DataFrame:
    return pl.read_csv(path, separator="\t", schema=FILTER_COUNTS_SCHEMA)
