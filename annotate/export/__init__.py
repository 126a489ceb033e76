"""Exports built from annotations: docking-ready structures and charge-filtered subsets.

pKa values and protonation states are estimates; verify decisions that matter
(formulation, safety, dosing) with measurements and qualified review.

Names are loaded on first use, as in :mod:`annotate.pipeline`: the chunk jobs
build docking records and must not pay for the filters' Polars import.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from annotate.lazy import lazy_exports

if TYPE_CHECKING:
    from annotate.export.filters import FilterSpec, apply_filters, filter_expression, ionization_class
    from annotate.export.structures import docking_records, write_sdf, write_smiles

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        "filters": ["FilterSpec", "apply_filters", "filter_expression", "ionization_class"],
        "structures": ["docking_records", "write_sdf", "write_smiles"],
    },
)
