"""Species structures: valid, charged where the site is, stereo and isotopes kept."""

from __future__ import annotations

from rdkit import Chem

from annotate import Settings, annotate_smiles

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
