"""Docking records: coordinates, charges, stereo and properties survive the SD/SMILES round trip."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from rdkit import Chem
from rdkit.Chem import AllChem

from annotate import Settings, annotate_smiles
from annotate.export.structures import SMILES_HEADER, docking_records, write_sdf, write_smiles
from annotate.tables import RuleFileError

PH74 = Settings(ph=(7.4,))
L_ALANINE = "N[C@@H](C)C(=O)O"
E_CROTONIC_ACID = "C/C=C/C(=O)O"
#: tertiary amine whose N gets four different substituents (H included) when protonated
TERTIARY_AMINE = "CCN(C)CCc1ccccc1"


def _embedded(smiles: str) -> Chem.Mol:
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    params = AllChem.ETKDGv3()
    params.randomSeed = 1
    assert AllChem.EmbedMolecule(mol, params) == 0
    return mol


def _records(mol: Chem.Mol, **options: object) -> list[Chem.Mol]:
    defaults = {"id": "m1", "settings": PH74, "which": "dominant", "max_per_molecule": 4, "embed_3d": False, "seed": 7}
    return docking_records(mol, **(defaults | options))


def _heavy_positions(mol: Chem.Mol) -> tuple[list[str], np.ndarray]:
    conf = mol.GetConformer()
    heavy = [a for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    return [a.GetSymbol() for a in heavy], np.array([list(conf.GetAtomPosition(a.GetIdx())) for a in heavy])


def _sdf_round_trip(records: list[Chem.Mol], path: Path) -> list[Chem.Mol]:
    assert write_sdf(records, path) == len(records)
    back = list(Chem.SDMolSupplier(str(path), removeHs=False))
    assert len(back) == len(records) and all(m is not None for m in back)
    return back


def test_3d_input_keeps_heavy_atom_coordinates(tmp_path: Path) -> None:
    source = _embedded(L_ALANINE)
    source.SetProp("vendor_code", "AX-17")
    before = Chem.MolToMolBlock(source)
    records = _records(source, id="ala")
    assert Chem.MolToMolBlock(source) == before, "input must not be modified"
    assert len(records) == 1
    symbols_in, xyz_in = _heavy_positions(source)
    for mol in [*records, *_sdf_round_trip(records, tmp_path / "ala.sdf")]:
        assert mol.GetConformer().Is3D()
        symbols_out, xyz_out = _heavy_positions(mol)
        assert symbols_out == symbols_in
        assert np.abs(xyz_out - xyz_in).max() < 1e-4
        assert mol.GetNumAtoms() == Chem.AddHs(mol).GetNumAtoms(), "every hydrogen is explicit"


def test_sdf_charges_properties_and_title_match_annotation(tmp_path: Path) -> None:
    source = _embedded(L_ALANINE)
    source.SetProp("vendor_code", "AX-17")
    expected = annotate_smiles(L_ALANINE, settings=PH74)
    (back,) = _sdf_round_trip(_records(source, id="ala"), tmp_path / "ala.sdf")
    dominant = expected.ph_states[0].dominant
    assert back.GetProp("_Name") == "ala" and back.GetProp("ionotate_id") == "ala"
    assert back.GetProp("vendor_code") == "AX-17"
    assert int(back.GetProp("ionotate_charge")) == Chem.GetFormalCharge(back) == dominant.charge
    assert float(back.GetProp("ionotate_fraction")) == pytest.approx(dominant.fraction)
    assert float(back.GetProp("ionotate_ph")) == pytest.approx(7.4)
    assert int(back.GetProp("ionotate_rank")) == 1
    # the stored SMILES is the annotated species and describes the structure written beside it
    assert back.GetProp("ionotate_smiles") == dominant.smiles == Chem.MolToSmiles(Chem.RemoveHs(back))
    macro = [float(v) for v in back.GetProp("ionotate_macro_pka").split()]
    assert macro == pytest.approx(sorted(expected.macro_pka), abs=0.005)
    # glycine-like amino acid at pH 7.4: both centres charged (common practice)
    assert sum(1 for a in back.GetAtoms() if a.GetFormalCharge()) == 2


@pytest.mark.parametrize("smiles", [L_ALANINE, E_CROTONIC_ACID])
@pytest.mark.parametrize("embed_3d", [False, True])
def test_stereo_survives_2d_and_embedded_records(tmp_path: Path, smiles: str, embed_3d: bool) -> None:
    expected = annotate_smiles(smiles, settings=PH74).ph_states[0].dominant.smiles
    assert "@" in expected or "/" in expected
    records = _records(Chem.MolFromSmiles(smiles), embed_3d=embed_3d, seed=3)
    (back,) = _sdf_round_trip(records, tmp_path / "s.sdf")
    assert back.GetConformer().Is3D() == embed_3d
    assert Chem.MolToSmiles(Chem.RemoveHs(back)) == expected
    write_smiles(records, tmp_path / "s.smi")
    assert (tmp_path / "s.smi").read_text().splitlines()[1].split("\t")[0] == expected


def test_protonated_tertiary_amine_gets_no_stereo_tag(tmp_path: Path) -> None:
    records_2d = _records(Chem.MolFromSmiles(TERTIARY_AMINE))
    records_3d = _records(_embedded(TERTIARY_AMINE))
    for mol in [*records_2d, *records_3d]:
        (n,) = [a for a in mol.GetAtoms() if a.GetSymbol() == "N"]
        assert n.GetFormalCharge() == 1, "amine expected protonated at pH 7.4 (pKaH near 10, common practice)"
        assert n.GetChiralTag() == Chem.ChiralType.CHI_UNSPECIFIED
    (back,) = _sdf_round_trip(records_2d, tmp_path / "amine.sdf")
    assert "@" not in Chem.MolToSmiles(back)
    write_smiles([*records_2d, *records_3d], tmp_path / "amine.smi")
    assert "@" not in (tmp_path / "amine.smi").read_text()


def test_embedding_is_seeded() -> None:
    first, second = (_records(Chem.MolFromSmiles(TERTIARY_AMINE), embed_3d=True, seed=11) for _ in range(2))
    assert np.array_equal(first[0].GetConformer().GetPositions(), second[0].GetConformer().GetPositions())


def test_all_species_follow_annotation_and_cap(tmp_path: Path) -> None:
    settings = Settings(ph=(1.0, 7.4), min_fraction=0.01)
    expected = annotate_smiles("NCC(=O)O", settings=settings)
    wanted = [(s.ph, rank, sp.smiles, sp.charge) for s in expected.ph_states for rank, sp in enumerate(s.species, 1)]
    assert len(wanted) > len(expected.ph_states), "test needs a pH with more than one species"
    records = _records(Chem.MolFromSmiles("NCC(=O)O"), settings=settings, which="all", max_per_molecule=10)
    got = [
        (m.GetDoubleProp("ionotate_ph"), m.GetIntProp("ionotate_rank"), Chem.MolToSmiles(Chem.RemoveHs(m)), Chem.GetFormalCharge(m))
        for m in records
    ]
    assert got == wanted
    capped = _records(Chem.MolFromSmiles("NCC(=O)O"), settings=settings, which="all", max_per_molecule=1)
    assert [(m.GetDoubleProp("ionotate_ph"), m.GetIntProp("ionotate_rank")) for m in capped] == [(1.0, 1), (7.4, 1)]
    per_ph = {ph: sum(1 for w in wanted if w[0] == ph) for ph in (1.0, 7.4)}
    two = _records(Chem.MolFromSmiles("NCC(=O)O"), settings=settings, which="all", max_per_molecule=2)
    assert len(two) == sum(min(n, 2) for n in per_ph.values()), "the cap applies per pH, not per molecule"
    dominant = _records(Chem.MolFromSmiles("NCC(=O)O"), settings=settings, which="dominant", max_per_molecule=10)
    assert [m.GetDoubleProp("ionotate_ph") for m in dominant] == [1.0, 7.4]


def test_smiles_file_round_trip(tmp_path: Path) -> None:
    records = [
        *_records(Chem.MolFromSmiles("CC(=O)O"), id="acetic"),
        *_records(Chem.MolFromSmiles("CCN"), id="ethylamine"),
        *_records(_embedded(L_ALANINE), id="ala"),
    ]
    path = tmp_path / "out.smi"
    assert write_smiles(records, path) == 3
    header, *rows = path.read_text().splitlines()
    assert tuple(header.split("\t")) == SMILES_HEADER
    assert [r.split("\t")[1] for r in rows] == ["acetic", "ethylamine", "ala"]
    for row, record in zip(rows, records, strict=True):
        smiles, _, ph, charge, fraction = row.split("\t")
        mol = Chem.MolFromSmiles(smiles)
        assert mol is not None
        assert Chem.GetFormalCharge(mol) == int(charge) == record.GetIntProp("ionotate_charge")
        assert float(ph) == record.GetDoubleProp("ionotate_ph")
        assert float(fraction) == pytest.approx(record.GetDoubleProp("ionotate_fraction"))


def test_failed_record_gives_nothing() -> None:
    assert _records(None) == []
    assert _records(Chem.MolFromSmiles("[Fe]")) == []  # unsupported element: annotation refuses it


def test_interrupted_write_leaves_no_file(tmp_path: Path) -> None:
    def broken() -> object:
        yield from _records(Chem.MolFromSmiles("CCN"))
        raise RuntimeError("interrupted")

    for writer, name in ((write_sdf, "x.sdf"), (write_smiles, "x.smi")):
        with pytest.raises(RuntimeError):
            writer(broken(), tmp_path / name)
        assert list(tmp_path.iterdir()) == []


def test_bad_rule_file_stops_the_export_instead_of_emptying_it(tmp_path: Path) -> None:
    rules = tmp_path / "mine.tsv"
    rules.write_text("name\tkind\tsmarts\n")  # header lacks the required columns
    with pytest.raises(RuleFileError, match="header lacks"):
        _records(Chem.MolFromSmiles("CCN"), settings=Settings(user_rules=rules))


def test_line_breaks_tabs_and_terminators_in_input_text_cannot_break_the_files(tmp_path: Path) -> None:
    source = Chem.MolFromSmiles("CCN")
    source.SetProp("note", "a\n$$$$\n\nb")
    source.SetProp("odd\tname<x>", "v")
    records = _records(source, id="two\nline\tid") + _records(Chem.MolFromSmiles("CCO"), id="next")
    (first, second) = _sdf_round_trip(records, tmp_path / "awkward.sdf")
    assert first.GetProp("_Name") == first.GetProp("ionotate_id") == "two line id"
    assert first.GetProp("note") == "a\n $$$$\nb" and first.GetProp("odd name_x_") == "v"
    assert second.GetProp("_Name") == "next"
    write_smiles(records, tmp_path / "awkward.smi")
    rows = [line.split("\t") for line in (tmp_path / "awkward.smi").read_text().splitlines()[1:]]
    assert [len(row) for row in rows] == [5, 5] and [row[1] for row in rows] == ["two line id", "next"]
