"""Substituent lookup: the indexed, lazily matched lookup must give what the
table's header defines: the FIRST row whose SMARTS matches with its first atom
on the root, using neither the atom it hangs from nor any atom of the group."""

from __future__ import annotations

import csv

import pytest
from rdkit import Chem

from annotate.pka.substituents import Substituent, SubstituentIndex, SubstituentTable, load_substituents
from tests.helpers import DATA

TABLE = load_substituents()

SMILES = [
    "Oc1ccc(cc1)[N+](=O)[O-]",
    "OC(=O)CC(F)(F)F",
    "CS(=O)(=O)c1ccc(N)cc1",
    "NC(=O)c1ccc(O)cc1C#N",
    "CC(=O)Nc1ccc(OC(C)=O)cc1",
    "OC(=O)c1cccc(S(=O)(=O)N)c1",
    "FC(F)(F)S(=O)(=O)c1ccc(O)cc1",
    "CN(C)CCOc1ccccc1Br",
    "C[N+](C)(C)CC(=O)O",
    "OB(O)c1ccc(cc1)C=CC#C",
    "C[Si](C)(C)CC(=O)O",
    "[O-]C(=O)CC(=O)O",
    "CSc1ccc(cc1)N=[N+]=[N-]",
]


def _molecules() -> list[Chem.Mol]:
    with open(DATA / "reference_pka.csv") as handle:
        smiles = SMILES + [row["smiles"] for row in csv.DictReader(handle)][::5]
    return [Chem.MolFromSmiles(s) for s in smiles]


def _by_definition(mol: Chem.Mol, table: SubstituentTable, root: int, excluded: set[int]) -> Substituent | None:
    for row in table.rows:
        for match in mol.GetSubstructMatches(row.pattern, uniquify=False, maxMatches=10000):
            if match[0] == root and excluded.isdisjoint(match):
                return row
    return None


@pytest.mark.parametrize("mol", _molecules(), ids=Chem.MolToSmiles)
def test_lookup_follows_the_table_definition(mol: Chem.Mol) -> None:
    index = SubstituentIndex(mol, TABLE)
    checked = 0
    for bond in mol.GetBonds():
        ends = (bond.GetBeginAtomIdx(), bond.GetEndAtomIdx())
        for root, came_from in (ends, ends[::-1]):
            far = {a.GetIdx() for a in mol.GetAtomWithIdx(came_from).GetNeighbors()} - {root}
            for group in (frozenset(), frozenset(far)):
                expected = _by_definition(mol, TABLE, root, set(group) | {came_from})
                assert index.lookup(root, came_from, group) is expected, (root, came_from, sorted(group))
                checked += 1
    assert checked == 4 * mol.GetNumBonds()


def test_repeated_lookup_returns_the_same_row() -> None:
    mol = Chem.MolFromSmiles("Oc1ccc(cc1)C(F)(F)F")
    index = SubstituentIndex(mol, TABLE)
    first = index.lookup(7, 4, frozenset({0, 1}))
    assert first is not None and first.name == "trifluoromethyl"
    assert index.lookup(7, 4, frozenset({0, 1})) is first


def test_group_atoms_are_not_used_by_a_match() -> None:
    # the carboxy carbon seen from the ring is "carboxy"; with its OH in the
    # group (an acid site) only the plainer acyl-type rows remain possible
    mol = Chem.MolFromSmiles("OC(=O)c1ccccc1")
    index = SubstituentIndex(mol, TABLE)
    assert index.lookup(1, 3, frozenset()).name == "carboxy"
    assert index.lookup(1, 3, frozenset({0})) is _by_definition(mol, TABLE, 1, {0, 3})


def test_row_fields_used_to_skip_searches() -> None:
    rows = {r.name: r for r in TABLE.rows}
    assert rows["trifluoromethyl"].root_neighbours == ((9, 3),)
    assert rows["trifluoromethylsulfonyl"].distant_elements == frozenset({9})
    assert rows["alkyl"].root_only and rows["aryl"].root_only
    assert not rows["cyano"].root_only
    assert rows["alkyl"].inductive_sigma_star is None
    assert rows["fluoro"].inductive_sigma_star == rows["fluoro"].sigma_star


def test_rows_for_keeps_table_order_and_needs() -> None:
    plan = TABLE.rows_for(6, (8, 8))
    positions = [TABLE.rows.index(r) for r in plan]
    assert positions == sorted(positions)
    assert all(r.root_element in (0, 6) for r in plan)
    assert all(r.neighbours_suffice([8, 8]) for r in plan)
    names = {r.name for r in plan}
    assert "carboxy" in names and "trifluoromethyl" not in names
