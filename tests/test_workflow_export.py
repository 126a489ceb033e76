"""End to end: docking structures and charge filters from the real workflow, by default.

The first run uses a config holding only libraries, ph and outdir, so everything
checked here is what a user gets without asking. The second run adds filters of
its own, one at a pH the user did not list. Literature pKa values are from memory
(textbook values), used only to reason which side of a pH each centre sits
(common practice: a centre is charged when the pH is past its pKa).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import polars as pl
import pytest
import yaml
from rdkit import Chem
from rdkit.Chem import AllChem

from tests.helpers import run_snakemake

pytestmark = pytest.mark.slow

ROOT = Path(__file__).resolve().parents[1]
PH = [7.4, 5.0]
SMILES_LIBRARY = """CC(=O)O acetic
CCN ethylamine
NCC(=O)O glycine
c1ccccc1 benzene
C[N+](C)(C)C.[Cl-] tetramethylammonium
OC(=O)CCC(=O)O succinic
NCCCCCCN hexanediamine
C[C@H](N)C(=O)O l-alanine
CCN(C)CCc1ccccc1 amine
C1CC broken
"""
#: 3D input: (id, SMILES); the amine's N becomes a potential stereocentre when protonated
SHAPES = [("ala-3d", "C[C@H](N)C(=O)O"), ("amine-3d", "CCN(C)CCc1ccccc1"), ("phenol-3d", "Oc1ccccc1")]


def _embedded(id_: str, smiles: str) -> Chem.Mol:
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    params = AllChem.ETKDGv3()
    params.randomSeed = 17
    assert AllChem.EmbedMolecule(mol, params) == 0
    mol.SetProp("_Name", id_)
    mol.SetProp("vendor_code", f"V-{id_}")
    return mol


def snakemake(workdir: Path, *args: str) -> str:
    return run_snakemake(workdir, "--cores", "2", *args).stdout


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    work = tmp_path_factory.mktemp("export")
    (work / "Snakefile").symlink_to(ROOT / "Snakefile")
    (work / "workflow").mkdir()
    for part in ("rules", "scripts", "schemas", "report", "envs"):
        (work / "workflow" / part).symlink_to(ROOT / "workflow" / part)
    (work / "config").mkdir()
    (work / "config" / "config.yaml").write_text((ROOT / "config" / "config.yaml").read_text())
    inputs = work / "inputs"
    inputs.mkdir()
    (inputs / "small.smi").write_text(SMILES_LIBRARY)
    writer = Chem.SDWriter(str(inputs / "shapes.sdf"))
    for id_, smiles in SHAPES:
        writer.write(_embedded(id_, smiles))
    writer.close()
    minimal = {"libraries": {"small": "inputs/small.smi", "shapes": "inputs/shapes.sdf"}, "ph": PH, "outdir": "out"}
    (work / "minimal.yaml").write_text(yaml.safe_dump(minimal, sort_keys=False))
    return work


@pytest.fixture(scope="module")
def default_run(workdir: Path) -> Path:
    snakemake(workdir, "--configfile", "minimal.yaml")
    return workdir / "out"


def _label(ph: float) -> str:
    return f"{ph:g}"


def _smiles_by_id(path: Path) -> dict[str, str]:
    """id -> SMILES of a written SMILES file (header skipped)."""
    rows = [line.split("\t") for line in path.read_text().splitlines()[1:]]
    return {row[1]: row[0] for row in rows}


def _dominant(out: Path, library: str) -> dict[tuple[str, float], tuple[int, str]]:
    """(id, pH) -> (charge, SMILES) of the dominant species, from the annotated Parquet."""
    frame = pl.read_parquet(out / library / "annotated.parquet").filter(pl.col("status") != "error")
    return {
        (row["id"], state["ph"]): (state["charge"], state["smiles"])
        for row in frame.iter_rows(named=True)
        for state in row["ph_states"]
    }


@pytest.mark.parametrize("library", ["small", "shapes"])
def test_every_ph_gets_an_sdf_and_a_smiles_file(default_run: Path, library: str) -> None:
    names = sorted(p.name for p in (default_run / library / "docking").iterdir())
    assert names == sorted(f"ph{_label(ph)}.{ext}" for ph in PH for ext in ("sdf", "smi"))


@pytest.mark.parametrize("library", ["small", "shapes"])
@pytest.mark.parametrize("ph", PH)
def test_sdf_round_trip_with_charges_of_the_annotation(default_run: Path, library: str, ph: float) -> None:
    dominant = _dominant(default_run, library)
    expected_ids = [id_ for id_, p in dominant if p == ph]
    sdf = list(Chem.SDMolSupplier(str(default_run / library / "docking" / f"ph{_label(ph)}.sdf"), removeHs=False))
    assert all(mol is not None for mol in sdf)
    assert [m.GetProp("_Name") for m in sdf] == expected_ids, "one record per annotated molecule, input order"
    for mol in sdf:
        charge, smiles = dominant[(mol.GetProp("_Name"), ph)]
        assert Chem.GetFormalCharge(mol) == int(mol.GetProp("ionotate_charge")) == charge
        assert float(mol.GetProp("ionotate_ph")) == ph and mol.GetProp("ionotate_rank") == "1"
        # a 3D reader perceives stereo from coordinates, also at a protonated N (see the test below)
        isomeric = library == "small"
        written = Chem.MolToSmiles(Chem.RemoveHs(mol), isomericSmiles=isomeric)
        assert written == Chem.MolToSmiles(Chem.MolFromSmiles(smiles), isomericSmiles=isomeric)
        assert mol.GetNumAtoms() == Chem.AddHs(mol).GetNumAtoms(), "every hydrogen explicit"
    header, *rows = (default_run / library / "docking" / f"ph{_label(ph)}.smi").read_text().splitlines()
    assert header.split("\t") == ["smiles", "id", "ph", "charge", "fraction"]
    for row, mol in zip(rows, sdf, strict=True):
        smiles, id_, _, charge, _ = row.split("\t")
        assert id_ == mol.GetProp("_Name")
        assert Chem.GetFormalCharge(Chem.MolFromSmiles(smiles)) == int(charge) == dominant[(id_, ph)][0]


def test_3d_input_keeps_heavy_atom_coordinates_and_properties(default_run: Path, workdir: Path) -> None:
    inputs = {m.GetProp("_Name"): m for m in Chem.SDMolSupplier(str(workdir / "inputs" / "shapes.sdf"), removeHs=False)}
    for ph in PH:
        records = list(
            Chem.SDMolSupplier(str(default_run / "shapes" / "docking" / f"ph{_label(ph)}.sdf"), removeHs=False)
        )
        assert len(records) == len(SHAPES)
        for mol in records:
            source = inputs[mol.GetProp("_Name")]
            heavy_in = [a.GetIdx() for a in source.GetAtoms() if a.GetAtomicNum() > 1]
            heavy_out = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
            xyz_in = source.GetConformer().GetPositions()[heavy_in]
            xyz_out = mol.GetConformer().GetPositions()[heavy_out]
            assert mol.GetConformer().Is3D()
            assert np.abs(xyz_out - xyz_in).max() < 1e-4
            assert mol.GetProp("vendor_code") == source.GetProp("vendor_code")


def test_protonated_amine_gets_no_invented_stereo(default_run: Path) -> None:
    """A tertiary amine (pKaH near 10, common practice) is protonated at 7.4; its N gets no stereo tag.

    From 2D input the SD file and the SMILES file both leave it unspecified. From 3D
    input the SMILES file does; the SD file holds coordinates, from which a reader
    can perceive a configuration (the position of the added H decides it).
    """
    folder = default_run / "small" / "docking"
    records = {m.GetProp("_Name"): m for m in Chem.SDMolSupplier(str(folder / "ph7.4.sdf"))}
    (nitrogen,) = [a for a in records["amine"].GetAtoms() if a.GetSymbol() == "N"]
    assert nitrogen.GetFormalCharge() == 1
    assert nitrogen.GetChiralTag() == Chem.ChiralType.CHI_UNSPECIFIED
    assert "@" in Chem.MolToSmiles(records["l-alanine"]), "the input's stereocentre is kept"
    for library, amine, ala in (("small", "amine", "l-alanine"), ("shapes", "amine-3d", "ala-3d")):
        rows = _smiles_by_id(default_run / library / "docking" / "ph7.4.smi")
        assert "[NH+]" in rows[amine] and "@" not in rows[amine]
        assert "@" in rows[ala]


def test_default_filter_keeps_the_hand_expected_molecules(default_run: Path) -> None:
    expected = {
        "acetic",  # pKa 4.76: carboxylate, -1
        "ethylamine",  # pKaH 10.7: ammonium, +1
        "glycine",  # zwitterion, net 0
        "benzene",  # nothing to ionize
        "tetramethylammonium",  # quaternary N, +1
        "l-alanine",  # zwitterion, net 0
        "amine",  # tertiary amine, pKaH near 10 (common practice): +1
        # out: succinic acid (pKa 4.2 and 5.6) is -2, hexanediamine (pKaH about 10-11) +2, broken is an error
    }
    folder = default_run / "small" / "filters"
    assert set(pl.read_parquet(folder / "charge_-1_to_1_at_7.4.parquet")["id"]) == expected
    assert {m.GetProp("_Name") for m in Chem.SDMolSupplier(str(folder / "charge_-1_to_1_at_7.4.sdf"))} == expected
    qc = pl.read_csv(default_run / "small" / "qc" / "filters.tsv", separator="\t")
    assert qc.select("filter", "ph", "kept", "annotated", "structures").rows() == [
        ("charge_-1_to_1_at_7.4", 7.4, len(expected), 9, len(expected))
    ]
    summary = json.loads((default_run / "small" / "qc" / "summary.json").read_text())
    assert summary["filters"][0]["kept"] == len(expected)


def test_configured_filters_plan_their_own_ph(workdir: Path, default_run: Path) -> None:
    """A filter at a pH the user did not list adds that pH to the run (docking files included)."""
    config = {
        "libraries": {"small": "inputs/small.smi"},
        "ph": [5.0],
        "outdir": "out_filters",
        "docking": {"formats": ["sdf"]},
        "filters": [{"name": "anions_at_7.4", "ph": 7.4, "charge_max": -1}],
    }
    (workdir / "filters.yaml").write_text(yaml.safe_dump(config, sort_keys=False))
    planned = snakemake(workdir, "--dry-run", "--configfile", "filters.yaml")
    for name in ("docking/ph5.sdf", "docking/ph7.4.sdf", "filters/anions_at_7.4.parquet", "filters/anions_at_7.4.sdf"):
        assert f"out_filters/small/{name}" in planned, name
    assert "charge_-1_to_1" not in planned and "docking/ph5.smi" not in planned
