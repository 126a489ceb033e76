"""Ionotate: explainable pKa estimates and protonation states for compound libraries.

pKa values are estimates from published substituent-effect equations; verify
decisions that matter (formulation, safety, dosing) with measurements.
"""

from annotate.engine import annotate_many, annotate_mol, annotate_molblock, annotate_smiles
from annotate.results import MoleculeResult, PhState, Site, Species, Term
from annotate.settings import Settings

__all__ = [
    "MoleculeResult",
    "PhState",
    "Settings",
    "Site",
    "Species",
    "Term",
    "annotate_many",
    "annotate_mol",
    "annotate_molblock",
    "annotate_smiles",
]
__version__ = "0.1.0"
