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


# --- acid groups that were one fixed value: measured orderings within each series ---


def test_sulfonylurea_heteroaryl_sets_acidity() -> None:
    """The Pesticide Manual (from memory): chlorsulfuron (methoxy-methyl-triazinyl) 3.4,
    chlorimuron-ethyl (chloro-methoxy-pyrimidinyl) 4.2, sulfometuron-methyl (dimethylpyrimidinyl) 5.2."""
    order = [
        "COc1nc(C)nc(NC(=O)NS(=O)(=O)c2ccccc2Cl)n1",
        "CCOC(=O)c1ccccc1S(=O)(=O)NC(=O)Nc1nc(Cl)cc(OC)n1",
        "COC(=O)c1ccccc1S(=O)(=O)NC(=O)Nc1nc(C)cc(C)n1",
    ]
    values = [_pka(s, "acid") for s in order]
    assert values == sorted(values)
    assert values[-1] - values[0] > 1.0


def test_sulfapyrimidines_weaken_with_each_methyl() -> None:
    """Bell & Roblin, J. Am. Chem. Soc. 1942 (from memory): sulfadiazine 6.48, sulfamerazine 7.06;
    Clarke's Analysis of Drugs and Poisons (from memory): sulfamethazine 7.4."""
    order = [
        "Nc1ccc(S(=O)(=O)Nc2ncccn2)cc1",
        "Cc1ccnc(NS(=O)(=O)c2ccc(N)cc2)n1",
        "Cc1cc(C)nc(NS(=O)(=O)c2ccc(N)cc2)n1",
    ]
    values = [_pka(s, "acid") for s in order]
    assert values == sorted(values)
    assert values[-1] - values[0] > 0.3


def test_n_alkyl_sulfonamide_feels_its_alkyl_group() -> None:
    """Common practice: a 2,2,2-trifluoroethyl group on the sulfonamide N acidifies it
    (inductive withdrawal), so the row can no longer give one value for every N-alkyl group."""
    assert _pka("FC(F)(F)CNS(=O)(=O)c1ccccc1", "acid") < _pka("CCNS(=O)(=O)c1ccccc1", "acid") - 1.0


def test_uracils_follow_their_5_substituent() -> None:
    """CRC Handbook (from memory): 5-nitrouracil 5.3 < 5-fluorouracil 8.0 < uracil 9.45 < thymine 9.94."""
    order = [
        "O=c1[nH]cc([N+](=O)[O-])c(=O)[nH]1",
        "O=c1[nH]cc(F)c(=O)[nH]1",
        "O=c1cc[nH]c(=O)[nH]1",
        "Cc1c[nH]c(=O)[nH]c1=O",
    ]
    values = [_pka(s, "acid") for s in order]
    assert values == sorted(values)


def test_phenyl_on_c5_acidifies_a_barbiturate() -> None:
    """Clarke's Analysis of Drugs and Poisons (from memory): phenobarbital 7.4, barbital 7.9."""
    assert _pka("CCC1(c2ccccc2)C(=O)NC(=O)NC1=O", "acid") < _pka("CCC1(CC)C(=O)NC(=O)NC1=O", "acid") - 0.2


def test_extra_ring_nitrogen_acidifies_a_lactam() -> None:
    """Albert & Phillips 1956 (from memory): 2-pyridone 11.65 > pyridazin-3(2H)-one 10.46 >
    pyrimidin-4(3H)-one 8.59."""
    values = [_pka(s, "acid") for s in ("O=c1cccc[nH]1", "O=c1cccn[nH]1", "O=c1ccnc[nH]1")]
    assert values == sorted(values, reverse=True)


def test_new_acid_sites_explain_themselves() -> None:
    """Each site's pKa is the sum of its shown terms, the first naming the parent compound."""
    for smiles in (
        "COc1nc(C)nc(NC(=O)NS(=O)(=O)c2ccccc2Cl)n1",  # sulfonylurea
        "FC(F)(F)CNS(=O)(=O)c1ccccc1",  # N-alkyl sulfonamide
        "O=c1[nH]cnc2ccccc12",  # lactam
        "CC(=O)Nc1nccs1",  # acylamino-heteroaryl
        "O=C(CCCCCCC(=O)Nc1ccccc1)NO",  # hydroxamic acid
    ):
        acids = [s for s in annotate_smiles(smiles).sites if s.kind == "acid"]
        assert acids, smiles
        for site in acids:
            assert abs(sum(t.value for t in site.terms) - site.pka) < 2e-3
            assert "(parent " in site.terms[0].label
