"""Hammett ring handling: ring choice and positions."""

from __future__ import annotations

from rdkit import Chem

from annotate.pka.aromatic import positions_in_ring, site_ring
from annotate.pka.graph import MolGraph


def test_positions_are_the_shorter_way_round_the_ring() -> None:
    assert positions_in_ring(6)[1] == positions_in_ring(6)[-5] == positions_in_ring(6)[5] == (1, "ortho")
    assert positions_in_ring(6)[-2] == positions_in_ring(6)[4] == (2, "meta")
    assert positions_in_ring(6)[3] == positions_in_ring(6)[-3] == (3, "para")
    assert positions_in_ring(5)[-4] == positions_in_ring(5)[1] == (1, "adjacent")
    assert positions_in_ring(5)[3] == positions_in_ring(5)[-2] == (2, "next-but-one")
    assert sorted(positions_in_ring(6)) == [-5, -4, -3, -2, -1, 1, 2, 3, 4, 5]


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
