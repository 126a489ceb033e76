"""Ring-N bases: ring-system parents, position increments, bounds, conjugated exocyclic N.

Check values name their source; "from memory" = recalled handbook value.
"""

from __future__ import annotations

import pytest
from rdkit import Chem

from annotate import Settings, annotate_smiles
from annotate.pka.graph import MolGraph
from annotate.pka.ring_systems import find_parent, load_ring_systems

TABLE = load_ring_systems()
PH = Settings(ph=(7.4,))


def _ring_sites(smiles: str) -> list:
    return [s for s in annotate_smiles(smiles, settings=PH).sites if s.category in ("pyridine_azine", "azole_base")]


def _most_basic(smiles: str):
    return max(_ring_sites(smiles), key=lambda s: s.pka)


def test_table_covers_at_least_sixty_ring_systems() -> None:
    systems = {parent.smiles for parent in TABLE.parents.values()}
    assert len(systems) >= 60
    for parent in TABLE.parents.values():
        assert parent.source and parent.sd > 0


def test_every_row_is_found_as_the_parent_of_its_own_compound() -> None:
    for parent in TABLE.parents.values():
        mol = Chem.MolFromSmiles(parent.smiles)
        graph = MolGraph(mol)
        found = set()
        for atom in mol.GetAtoms():
            if atom.GetIsAromatic() and atom.GetAtomicNum() == 7 and atom.GetDegree() == 2 and not atom.GetTotalNumHs():
                match = find_parent(graph, atom.GetIdx(), TABLE)
                assert match is not None, (parent.name, atom.GetIdx())
                assert match.parent.smiles == parent.smiles, (parent.name, match.parent.name)
                found.add(match.parent.name)
        assert parent.name in found


def test_parent_site_comes_out_at_its_tabulated_value() -> None:
    # quinoline 4.90 (CRC, from memory), as ring_systems.tsv
    (site,) = _ring_sites("c1ccc2ncccc2c1")
    assert site.pka == pytest.approx(4.90)
    assert "quinoline" in site.terms[0].label


def test_substituents_and_no_ring_member_counted_twice() -> None:
    # 4-aminoquinazoline: N1 from the quinazoline row plus one para-amino increment;
    # the other ring N belongs to the parent and gives no term of its own
    site = _most_basic("Nc1ncnc2ccccc12")
    labels = [t.label for t in site.terms]
    assert "quinazoline N1" in labels[0]
    assert any(label.startswith("amino para (increment") for label in labels)
    assert not any(label.startswith("ring N") for label in labels)
    assert site.pka == pytest.approx(sum(t.value for t in site.terms), abs=1e-6)


@pytest.mark.parametrize(
    ("smiles", "measured", "source"),
    [
        # none of these compounds was used to set a constant of the tables
        ("Nc1nc(N)c2nc[nH]c2n1", 5.09, "2,6-diaminopurine, Albert & Serjeant 1984 (from memory)"),
        ("Nc1ccnnc1", 6.65, "4-aminopyridazine, Albert & Serjeant 1984 (from memory)"),
        ("Cc1csc(N)n1", 5.42, "2-amino-4-methylthiazole, Perrin 1965 (from memory)"),
        ("Nc1ccc2cc3ccc(N)cc3nc2c1", 9.5, "proflavine, Perrin 1965 (from memory)"),
        ("Cc1cc(C)nc(N)n1", 4.82, "2-amino-4,6-dimethylpyrimidine, Albert & Serjeant 1984 (from memory)"),
        ("CCc1nc(N)nc(N)c1-c1ccc(Cl)cc1", 7.34, "pyrimethamine, Clarke's Analysis of Drugs and Poisons (from memory)"),
        ("c1cc(ccn1)-c1ccncc1", 4.82, "4,4'-bipyridine, Perrin 1965 (from memory)"),
        ("Cc1ncc[nH]1", 7.86, "2-methylimidazole, CRC (from memory)"),
    ],
)
def test_heteroaromatic_bases_near_measured(smiles: str, measured: float, source: str) -> None:
    basic = _most_basic(smiles).pka  # at its titration point, as the measured value
    assert abs(basic - measured) <= 1.0, f"{smiles}: {basic} vs {measured} ({source})"


def test_chloro_and_alkoxy_lower_an_aminoazine() -> None:
    # 2-aminopyridine 6.86, 2-amino-5-chloropyridine 4.71 (Perrin 1965, from memory):
    # the order must hold and the chloro term must be the difference
    plain = _most_basic("Nc1ccccn1").pka
    chloro = _most_basic("Nc1ccc(Cl)cn1").pka
    methoxy = _most_basic("COc1nc(N)ccc1").pka
    assert chloro < plain - 1.5
    assert methoxy < plain - 1.0


def test_fused_ring_not_in_table_falls_back_to_its_own_ring() -> None:
    # thieno[2,3-b]pyridine is not in the table: the pyridine ring is the parent and
    # the thiophene ring enters as fused-ring terms
    site = _most_basic("c1cnc2sccc2c1")
    assert "pyridine" in site.terms[0].label
    assert any(t.label.startswith("fused ring") for t in site.terms)


def test_unknown_ring_system_uses_the_general_row_and_says_so() -> None:
    result = annotate_smiles("c1c[se]cn1", settings=PH)  # 1,3-selenazole: not tabulated
    assert result.status == "ok"
    (site,) = [s for s in result.sites if s.category == "azole_base"]
    assert any("ring system not in ring_systems.tsv" in t.label for t in site.terms)
    assert site.pka == pytest.approx(sum(t.value for t in site.terms), abs=1e-6)


def test_n_substituted_azole_shares_the_row_of_its_nh_parent() -> None:
    plain = _most_basic("c1c[nH]cn1")
    methyl = _most_basic("Cn1ccnc1")
    assert plain.terms[0].label == methyl.terms[0].label


def test_runaway_sum_is_bounded_with_a_term() -> None:
    # pentafluoropyridine: five halogen terms would sum below -10
    site = _most_basic("Fc1nc(F)c(F)c(F)c1F")
    bound = [t for t in site.terms if t.label.startswith("bound:")]
    assert bound and bound[0].value > 0
    assert site.pka == pytest.approx(-5.0, abs=1e-6)
    assert site.pka == pytest.approx(sum(t.value for t in site.terms), abs=1e-6)


@pytest.mark.parametrize(
    "smiles",
    [
        "Nc1ncccn1",  # 2-aminopyrimidine
        "c1ccc(Nc2ncnc3ccccc23)cc1",  # 4-anilinoquinazoline
        "c1ccc(Nc2ncccn2)cc1",  # 2-anilinopyrimidine
        "Nc1nccs1",  # 2-aminothiazole
        "Nc1nc2ccccc2[nH]1",  # 2-aminobenzimidazole
        "CNc1ccccn1",  # 2-(methylamino)pyridine
        "Nc1ccncc1",  # 4-aminopyridine
        "Nc1cncs1",  # 5-aminothiazole (next-but-one)
    ],
)
def test_exocyclic_n_conjugated_with_a_ring_n_is_not_a_base(smiles: str) -> None:
    # common practice: 2- and 4-amino-azines and amino-azoles protonate on the ring N
    # (2-aminopyridine, 4-aminopyridine: ring-N protonation, Albert & Serjeant 1984)
    result = annotate_smiles(smiles, settings=PH)
    mol = Chem.MolFromSmiles(result.parent_smiles)
    for site in result.sites:
        if site.kind == "base":
            assert mol.GetAtomWithIdx(site.atom).GetIsAromatic(), (smiles, site.group)


def test_aniline_and_diarylamine_stay_bases() -> None:
    for smiles in ("Nc1ccccc1", "c1ccc(Nc2ccccc2)cc1", "Nc1cccnc1"):
        groups = {s.group for s in annotate_smiles(smiles, settings=PH).sites if s.category == "aniline"}
        assert groups, smiles


def test_ring_n_marked_not_a_site_gives_no_site() -> None:
    # ring_systems.tsv marks tetrazole and oxadiazole N "none": not protonated above pH -2
    # (common practice); the tetrazole keeps its NH acid site
    for smiles in ("Cc1nn[nH]n1", "Cc1nc(C)on1", "Cc1nnc(C)o1"):
        sites = annotate_smiles(smiles, settings=PH).sites
        assert not [s for s in sites if s.category == "azole_base"], smiles
    assert any(s.kind == "acid" for s in annotate_smiles("Cc1nn[nH]n1", settings=PH).sites)


def test_untabulated_fused_system_counts_its_other_ring_n() -> None:
    # imidazo[1,2-b]pyridazine is not in the table: the imidazole ring is the parent,
    # and the pyridazine N of the other ring withdraws across the fusion
    (site,) = [s for s in _ring_sites("c1cc2ncc[n]2nc1") if s.category == "azole_base"]
    labels = [t.label for t in site.terms]
    assert "imidazole" in labels[0]
    assert any(label.startswith("ring N across fusion") for label in labels)
    assert any(label.startswith("fused system not in ring_systems.tsv") for label in labels)
    plain = _most_basic("c1ccn2ccnc2c1")  # imidazo[1,2-a]pyridine, tabulated: 6.79
    assert site.pka < plain.pka
