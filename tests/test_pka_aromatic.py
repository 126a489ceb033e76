"""Hammett ring handling: ring choice and positions."""

from __future__ import annotations

from rdkit import Chem

from annotate.pka.aromatic import _POSITIONS, site_ring
from annotate.pka.graph import MolGraph


def test_positions_are_the_shorter_way_round_the_ring() -> None:
    assert _POSITIONS[6][1] == _POSITIONS[6][-5] == _POSITIONS[6][5] == (1, "ortho")
    assert _POSITIONS[6][-2] == _POSITIONS[6][4] == (2, "meta")
    assert _POSITIONS[6][3] == _POSITIONS[6][-3] == (3, "para")
    assert _POSITIONS[5][-4] == _POSITIONS[5][1] == (1, "adjacent")
    assert _POSITIONS[5][3] == _POSITIONS[5][-2] == (2, "next-but-one")
    assert sorted(_POSITIONS[6]) == [-5, -4, -3, -2, -1, 1, 2, 3, 4, 5]


def test_site_ring_prefers_the_six_membered_aromatic_ring() -> None:
    # indole: the fusion atom 3a lies in the pyrrole and the benzene ring
    mol = Chem.MolFromSmiles("c1ccc2[nH]ccc2c1")
    fusion = 3
    assert mol.GetRingInfo().NumAtomRings(fusion) == 2
    ring = site_ring(MolGraph(mol), fusion)
    assert ring is not None and len(ring) == 6 and fusion in ring
    assert ring in mol.GetRingInfo().AtomRings()


def test_site_ring_skips_rings_that_are_not_aromatic() -> None:
    # tetralin: the fusion atoms are in the benzene ring and the saturated ring
    mol = Chem.MolFromSmiles("c1ccc2CCCCc2c1")
    graph = MolGraph(mol)
    fusion = 3
    assert mol.GetRingInfo().NumAtomRings(fusion) == 2
    ring = site_ring(graph, fusion)
    assert ring is not None and all(mol.GetAtomWithIdx(i).GetIsAromatic() for i in ring)
    assert site_ring(graph, 5) is None  # a CH2 of the saturated ring
    assert site_ring(MolGraph(Chem.MolFromSmiles("CCO")), 1) is None
