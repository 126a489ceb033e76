"""Orderings a chemist treats as facts of the trade (common practice)."""

from __future__ import annotations

from annotate import annotate_smiles


def _pka(smiles: str, kind: str) -> float:
    sites = [s for s in annotate_smiles(smiles).sites if s.kind == kind]
    assert sites, f"no {kind} site in {smiles}"
    return min(s.pka for s in sites) if kind == "acid" else max(s.pka for s in sites)


def test_carboxylic_acid_far_stronger_than_alcohol() -> None:
    """Common practice: resonance-stabilised carboxylate, 10+ orders of magnitude."""
    assert _pka("CCO", "acid") - _pka("CC(=O)O", "acid") > 8


def test_haloacetic_acids_strengthen_with_each_halogen() -> None:
    """Common practice: inductive withdrawal adds up (mono < di < tri chloro)."""
    values = [_pka(s, "acid") for s in ("CC(=O)O", "ClCC(=O)O", "ClC(Cl)C(=O)O", "ClC(Cl)(Cl)C(=O)O")]
    assert values == sorted(values, reverse=True)
    assert values[0] - values[-1] > 3


def test_inductive_effect_fades_with_distance() -> None:
    """Common practice: 2- > 3- > 4-chlorobutanoic acid in strength."""
    values = [_pka(s, "acid") for s in ("CCC(Cl)C(=O)O", "CC(Cl)CC(=O)O", "ClCCCC(=O)O")]
    assert values == sorted(values)


def test_para_electron_withdrawing_groups_lower_phenol_pka() -> None:
    """Common practice: p-NO2 < p-CN < p-Cl < H < p-CH3 for phenol pKa."""
    order = ["Oc1ccc(cc1)[N+](=O)[O-]", "Oc1ccc(C#N)cc1", "Oc1ccc(Cl)cc1", "Oc1ccccc1", "Oc1ccc(C)cc1"]
    values = [_pka(s, "acid") for s in order]
    assert values == sorted(values)


def test_anilines_far_weaker_bases_than_aliphatic_amines() -> None:
    """Common practice: the aniline lone pair is delocalised into the ring."""
    assert _pka("NCC1CCCCC1", "base") - _pka("Nc1ccccc1", "base") > 4


def test_larger_atom_holds_proton_less_tightly() -> None:
    """Common practice: thiols are more acidic than alcohols (larger, more polarisable S)."""
    assert _pka("CCS", "acid") < _pka("CCO", "acid") - 3


def test_phenol_more_acidic_than_alcohol() -> None:
    """Common practice: phenoxide is delocalised, alkoxide is not."""
    assert _pka("Oc1ccccc1", "acid") < _pka("OC1CCCCC1", "acid") - 4
