"""The neutral parent: the atom scan finds every atom a check is about, and inputs stay untouched."""

from __future__ import annotations

import pytest
from rdkit import Chem

from annotate.standardize import ORGANIC, RecordError, _scan, parent_of

#: records with every kind of atom the scan flags, alone and mixed
ODD = [
    "CCO",
    "[2H]OC(=O)C",
    "[H]C([2H])C[NH3+].[Na].[CH3].[Fe]Cl.*O",
    "[O]",
    "[CH2]C",
    "C[N+](C)(C)C.[Cl-]",
    "[Na+].[O-]C(=O)C",
    "CC[Se]C",
    "B(O)(O)O",
    "[Cu+2]",
    "C[Hg]C",
    "[He]",
    "[Li]C",
    "[Be](C)C",
    "C[Si](C)(C)C",
    "c1ccccc1[N+](=O)[O-]",
    "C[As](C)C",
    "*c1ccccc1",
    "[H][H]",
    "[OH-]",
    "C[Pt](Cl)(Cl)N",
    "FC(F)(F)C(=O)O",
    "Ic1ccc(Br)cc1P(=O)(O)O",
]


def _reference_scan(mol: Chem.Mol) -> tuple:
    """The scan written the plain way: every atom, every property."""
    atoms = list(mol.GetAtoms())
    return (
        any(a.GetAtomicNum() == 0 for a in atoms),
        any(a.GetAtomicNum() == 1 for a in atoms),
        any(a.GetFormalCharge() != 0 for a in atoms),
        any(a.GetNumRadicalElectrons() != 0 for a in atoms),
        tuple(sorted({a.GetSymbol() for a in atoms if a.GetAtomicNum() and a.GetAtomicNum() not in ORGANIC})),
    )


@pytest.mark.parametrize("smiles", ODD)
def test_scan_matches_a_scan_of_every_atom(smiles: str) -> None:
    for mol in (Chem.MolFromSmiles(smiles), Chem.AddHs(Chem.MolFromSmiles(smiles))):
        scan = _scan(mol)
        assert (scan.dummy, scan.hydrogens, scan.charged, scan.radical, scan.unsupported) == _reference_scan(mol)


def test_query_covers_boron_to_fluorine_as_organic() -> None:
    """The query skips B..F (atomic numbers 5-9) as organic; ORGANIC must hold them all."""
    assert set(range(5, 10)) <= ORGANIC


@pytest.mark.parametrize("smiles", ["[2H]OC(=O)c1ccccc1", "CC(=O)[O-].[Na+]", "C[NH3+]", "OCC"])
def test_input_is_not_modified(smiles: str) -> None:
    mol = Chem.MolFromSmiles(smiles)
    before = Chem.MolToMolBlock(mol)
    parent = parent_of(mol)
    assert Chem.MolToMolBlock(mol) == before
    assert parent.mol is not mol


def test_owned_input_gives_the_same_parent() -> None:
    for smiles in ("[2H]OC(=O)c1ccccc1", "CC(=O)[O-].[Na+]", "C[NH3+]", "OCC", "C[C@H](N)C(=O)O"):
        copied = parent_of(Chem.MolFromSmiles(smiles))
        owned = parent_of(Chem.MolFromSmiles(smiles), copy=False)
        assert Chem.MolToSmiles(owned.mol) == Chem.MolToSmiles(copied.mol)
        assert owned.messages == copied.messages and owned.warning == copied.warning


@pytest.mark.parametrize(
    ("smiles", "words"),
    [
        ("*CC", "dummy atom"),
        ("[CH3]", "radical"),
        ("C[Hg]C", "unsupported element(s) in the parent: Hg"),
        ("[H][H]", "no heavy atoms"),
    ],
)
def test_records_that_cannot_be_treated(smiles: str, words: str) -> None:
    with pytest.raises(RecordError, match=words.replace("(", r"\(").replace(")", r"\)")):
        parent_of(Chem.MolFromSmiles(smiles))
