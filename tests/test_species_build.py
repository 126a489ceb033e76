"""Species structures: valid, charged where the site is, stereo and isotopes kept."""

from __future__ import annotations

import itertools

import pytest
from rdkit import Chem

from annotate import Settings, annotate_smiles
from annotate.engine import annotate_with_parent
from annotate.results import Site
from annotate.species.build import SpeciesSmiles, species_smiles

PH = Settings(ph=(1.0, 7.4, 13.0), min_fraction=0.0, max_species=100)


def _check(smiles: str) -> None:
    result = annotate_smiles(smiles, settings=PH)
    assert result.status == "ok", result.messages
    for state in result.ph_states:
        assert abs(sum(s.fraction for s in state.species) - 1.0) < 1e-6
        for species in state.species:
            mol = Chem.MolFromSmiles(species.smiles)
            assert mol is not None, species.smiles
            assert Chem.GetFormalCharge(mol) == species.charge


def test_species_valid_across_groups() -> None:
    for smiles in ("NCC(=O)O", "c1ccncc1", "OC(=O)c1ccccc1O", "c1nn[nH]n1", "NC(=N)N", "CC(=O)CC(C)=O", "C[N+](C)(C)CC(=O)O"):
        _check(smiles)


def test_stereo_and_isotope_survive_protonation() -> None:
    result = annotate_smiles("C[C@H](N)C(=O)[18OH]", settings=Settings(ph=(7.4,)))
    smiles = result.ph_states[0].dominant.smiles
    assert "@" in smiles and "18O" in smiles


def test_site_atom_indexes_parent_smiles() -> None:
    result = annotate_smiles("OC(=O)CCCN")
    mol = Chem.MolFromSmiles(result.parent_smiles)
    symbols = {(s.kind, mol.GetAtomWithIdx(s.atom).GetSymbol()) for s in result.sites}
    assert symbols == {("acid", "O"), ("base", "N")}


def test_quaternary_ammonium_keeps_its_charge() -> None:
    result = annotate_smiles("C[N+](C)(C)C.[Cl-]", settings=Settings(ph=(7.4,)))
    assert result.ph_states[0].dominant.charge == 1
    assert "[N+]" in result.parent_smiles


def _parent_and_sites(smiles: str) -> tuple[Chem.Mol, tuple[Site, ...]]:
    annotated = annotate_with_parent(Chem.MolFromSmiles(smiles), settings=PH)
    assert annotated.result.status == "ok", annotated.result.messages
    return annotated.parent, annotated.parent_sites


def _site(atom: int, kind: str) -> Site:
    return Site(atom, kind, "test", "test", 7.0, 0.5, ())


@pytest.mark.parametrize(
    "smiles",
    [
        "NCC(=O)O",
        "OC(=O)CC(O)(CC(=O)O)C(=O)O",
        "C1CNCCN1",
        "c1nc[nH]c1",
        "C[C@H](N)C(=O)[18OH]",
        "[2H]C([2H])([2H])[N+](=O)[O-]",  # the proton leaves as a drawn D atom
    ],
)
def test_working_copy_writes_what_a_fresh_copy_writes(smiles: str) -> None:
    """SpeciesSmiles edits one copy and undoes the edits; any order must give species_smiles."""
    parent, sites = _parent_and_sites(smiles)
    patterns = list(itertools.product((False, True), repeat=len(sites)))
    expected = {p: species_smiles(parent, sites, p) for p in patterns}
    for order in (patterns, patterns[::-1], patterns + patterns):
        write = SpeciesSmiles(parent, sites)
        assert {p: write(p) for p in order} == expected
    assert Chem.MolToSmiles(parent) == Chem.MolToSmiles(Chem.MolFromSmiles(smiles)), "parent must stay unedited"


def test_working_copy_with_two_sites_on_one_atom() -> None:
    parent = Chem.MolFromSmiles("CNC")
    sites = (_site(1, "acid"), _site(1, "base"))
    write = SpeciesSmiles(parent, sites)
    for pattern in [(False, True), (True, True), (False, False), (True, False), (False, True)]:
        assert write(pattern) == species_smiles(parent, sites, pattern)
    assert write((False, True)) == "CNC"  # the acid's proton moved to the base: the neutral amine


def test_working_copy_recovers_from_an_impossible_valence() -> None:
    """A protonated quaternary N breaks a valence rule; the next pattern must be unaffected."""
    parent = Chem.MolFromSmiles("C[N+](C)(C)CC(=O)O")
    sites = (_site(1, "base"), _site(7, "acid"))
    write = SpeciesSmiles(parent, sites)
    with pytest.raises(Exception) as fresh:
        species_smiles(parent, sites, (True, False))
    with pytest.raises(type(fresh.value)) as working:
        write((True, False))
    assert str(working.value) == str(fresh.value)
    assert write((False, False)) == species_smiles(parent, sites, (False, False)) == "C[N+](C)(C)CC(=O)[O-]"


@pytest.mark.parametrize("smiles", ["NCC(=O)O", "OC(=O)c1ccccc1O", "c1nc[nH]c1", "C[C@H](N)C(=O)[18OH]", "Oc1ccc(Cl)cc1"])
def test_reference_species_is_the_parent(smiles: str) -> None:
    """The engine reuses the parent SMILES for acids protonated, bases neutral: no edit at all."""
    parent, sites = _parent_and_sites(smiles)
    reference = tuple(s.kind == "acid" for s in sites)
    assert species_smiles(parent, sites, reference) == Chem.MolToSmiles(parent)
