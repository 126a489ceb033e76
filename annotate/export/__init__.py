"""Exports built from annotations: docking-ready structures and charge-filtered subsets.

pKa values and protonation states are estimates; verify decisions that matter
(formulation, safety, dosing) with measurements and qualified review.
"""

from annotate.export.filters import FilterSpec, apply_filters, filter_expression, ionization_class
from annotate.export.structures import docking_records, write_sdf, write_smiles

__all__ = [
    "FilterSpec",
    "apply_filters",
    "docking_records",
    "filter_expression",
    "ionization_class",
    "write_sdf",
    "write_smiles",
]
