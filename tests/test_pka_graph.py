"""MolGraph: the plain-Python atom data must say exactly what RDKit says."""

from __future__ import annotations

import csv

import pytest
from rdkit import Chem

from annotate.pka.graph import MolGraph
from tests.helpers import DATA

SMILES = [
    "Oc1ccc(cc1)[N+](=O)[O-]",
    "CC(C)Cc1ccc(cc1)C(C)C(=O)OCCN1CCN(CC1)c1ccc(Cl)cc1O",
    "c1ccc2ncccc2c1",
    "C1CC2CCC1CC2N",
    "[2H]OC(=O)C",
    "OC(=O)C1=CC=CN1",
]


def _molecules() -> list[Chem.Mol]:
    with open(DATA / "reference_pka.csv") as handle:
        smiles = SMILES + [row["smiles"] for row in csv.DictReader(handle)][::7]
    return [Chem.MolFromSmiles(s) for s in smiles]


@pytest.mark.parametrize("mol", _molecules(), ids=Chem.MolToSmiles)
def test_atoms_and_neighbours_match_rdkit(mol: Chem.Mol) -> None:
    graph = MolGraph(mol)
    # read in reverse order so atoms are often known first through a neighbour
    for i in reversed(range(mol.GetNumAtoms())):
        atom = mol.GetAtomWithIdx(i)
        neighbours = atom.GetNeighbors()
        assert graph.bonded[i] == (
            tuple(n.GetIdx() for n in neighbours),
            tuple(n.GetAtomicNum() for n in neighbours),
        )
        assert graph.atoms[i] == (atom.GetAtomicNum(), atom.GetIsAromatic(), atom.GetDegree())
        assert graph.element[i] == atom.GetAtomicNum()
        assert graph.rdkit[i].GetIdx() == i


@pytest.mark.parametrize("mol", _molecules(), ids=Chem.MolToSmiles)
def test_rings_and_elements_match_rdkit(mol: Chem.Mol) -> None:
    graph = MolGraph(mol)
    assert graph.rings == mol.GetRingInfo().AtomRings()
    present = {a.GetAtomicNum() for a in mol.GetAtoms()}
    for z in (1, 5, 6, 7, 8, 9, 15, 16, 17, 35, 53):
        assert graph.has_element(z) == (z in present), z


def test_element_known_from_a_neighbour_needs_no_read_of_its_own() -> None:
    graph = MolGraph(Chem.MolFromSmiles("OCC(F)(F)F"))
    assert graph.bonded[2] == ((1, 3, 4, 5), (6, 9, 9, 9))
    assert 3 not in graph.atoms and graph.element[3] == 9
