"""Docking records built by annotate_chunk, joined by export_docking_structures; docking config defaults."""

from __future__ import annotations

from dataclasses import asdict
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
import yaml
from rdkit import Chem
from rdkit.Chem import AllChem

from annotate import Settings, annotate_smiles
from annotate.export.docking_table import DOCKING_SCHEMA
from annotate.io.library import LibrarySpec
from annotate.io.schema import read_run_metadata
from annotate.pipeline import split_library
from annotate.pipeline import annotate_chunk
from annotate.pipeline.docking import DockingOptions, export_docking_structures, ph_label

ROOT = Path(__file__).resolve().parents[1]
SCHEMA = yaml.safe_load((ROOT / "workflow" / "schemas" / "config.schema.yaml").read_text())
SETTINGS = Settings(ph=(7.4, 2.0))
L_ALANINE = "C[C@H](N)C(=O)O"


def _embedded(smiles: str, title: str, **props: str) -> Chem.Mol:
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    params = AllChem.ETKDGv3()
    params.randomSeed = 5
    assert AllChem.EmbedMolecule(mol, params) == 0
    mol.SetProp("_Name", title)
    for key, value in props.items():
        mol.SetProp(key, value)
    return mol


def _docking(chunk: Path, out: Path, *, settings: Settings, options: DockingOptions | None = DockingOptions()) -> int:
    """Annotate ``chunk`` with its docking records in ``out``; returns how many records were written."""
    annotate_chunk(chunk, out.with_suffix(".annotated.parquet"), settings=settings, docking_out=out, docking=options)
    return pq.read_metadata(out).num_rows


def _split(spec: LibrarySpec, folder: Path) -> Path:
    split_library(spec, folder, chunk_size=100)
    return folder / "000000.parquet"


@pytest.fixture(scope="module")
def sdf_3d(tmp_path_factory: pytest.TempPathFactory) -> tuple[list[Chem.Mol], Path]:
    folder = tmp_path_factory.mktemp("sdf3d")
    mols = [_embedded(L_ALANINE, "ala", vendor="V-1"), _embedded("CCN", "ethylamine", vendor="V-2")]
    writer = Chem.SDWriter(str(folder / "lib.sdf"))
    for mol in mols:
        writer.write(mol)
    writer.close()
    with open(folder / "lib.sdf", "a") as out:
        out.write("broken\n  cut short\n\n  4  3  0  0\n$$$$\n")
    return mols, _split(LibrarySpec(name="lib", path=folder / "lib.sdf"), folder / "chunks")


def _heavy_xyz(mol: Chem.Mol) -> np.ndarray:
    conf = mol.GetConformer()
    return np.array([list(conf.GetAtomPosition(a.GetIdx())) for a in mol.GetAtoms() if a.GetAtomicNum() > 1])


def test_3d_chunk_keeps_coordinates_properties_and_stereo(sdf_3d: tuple[list[Chem.Mol], Path], tmp_path: Path) -> None:
    inputs, chunk = sdf_3d
    out = tmp_path / "docking.parquet"
    written = _docking(chunk, out, settings=SETTINGS)
    table = pq.read_table(out)
    assert table.schema.remove_metadata().equals(DOCKING_SCHEMA) and table.num_rows == written == 4
    assert "Verify" in read_run_metadata(table.schema)["notice"]
    assert table.column("input_index").to_pylist() == [0, 0, 1, 1], "the broken record gets no structure"
    for row in table.to_pylist():
        mol = Chem.MolFromMolBlock(row["sdf"], removeHs=False)
        source = inputs[row["input_index"]]
        assert np.abs(_heavy_xyz(mol) - _heavy_xyz(source)).max() < 1e-4
        supplier = Chem.SDMolSupplier()
        supplier.SetData(row["sdf"], removeHs=False)
        record = next(supplier)
        assert record.GetProp("vendor") == source.GetProp("vendor")
        assert Chem.GetFormalCharge(record) == row["charge"] == int(record.GetProp("ionotate_charge"))
    ala_74 = table.filter(pa.compute.equal(table.column("id"), "ala")).to_pylist()[0]
    assert ala_74["ph"] == 7.4
    assert ala_74["smiles"] == annotate_smiles(L_ALANINE, settings=SETTINGS).ph_states[0].dominant.smiles
    assert "@" in ala_74["smiles"]


def test_table_input_carries_columns_but_not_the_molblock(tmp_path: Path) -> None:
    mol = Chem.MolFromSmiles("CC(=O)O")
    pq.write_table(
        pa.table({"id": ["a1"], "molblock": [Chem.MolToMolBlock(mol)], "supplier": ["acme"], "n": [3]}),
        tmp_path / "lib.parquet",
    )
    chunk = _split(LibrarySpec(name="t", path=tmp_path / "lib.parquet", structure="molblock"), tmp_path / "chunks")
    _docking(chunk, tmp_path / "d.parquet", settings=Settings(), options=DockingOptions())
    (row,) = pq.read_table(tmp_path / "d.parquet").to_pylist()
    supplier = Chem.SDMolSupplier()
    supplier.SetData(row["sdf"])
    props = next(supplier).GetPropsAsDict()
    assert props["supplier"] == "acme" and int(props["n"]) == 3 and props["input_id"] == "a1"
    assert "molblock" not in props


def test_all_species_with_cap_and_embedding(tmp_path: Path) -> None:
    (tmp_path / "lib.smi").write_text("NCC(=O)O gly\n")
    chunk = _split(LibrarySpec(name="s", path=tmp_path / "lib.smi"), tmp_path / "chunks")
    at_pka = Settings(ph=(2.3,))
    uncapped = DockingOptions(species="all", max_per_molecule=4)
    _docking(chunk, tmp_path / "all.parquet", settings=at_pka, options=uncapped)
    # near the COOH pKa (about 2.3, from memory) glycine has two large species
    assert [r["rank"] for r in pq.read_table(tmp_path / "all.parquet").to_pylist()] == [1, 2]
    options = DockingOptions(species="all", max_per_molecule=1, embed_3d=True, seed=3)
    _docking(chunk, tmp_path / "d.parquet", settings=at_pka, options=options)
    rows = pq.read_table(tmp_path / "d.parquet").to_pylist()
    assert [r["rank"] for r in rows] == [1]
    assert Chem.MolFromMolBlock(rows[0]["sdf"]).GetConformer().Is3D()


def test_join_writes_one_file_per_ph_and_format(sdf_3d: tuple[list[Chem.Mol], Path], tmp_path: Path) -> None:
    _, chunk = sdf_3d
    _docking(chunk, tmp_path / "000000.parquet", settings=SETTINGS, options=DockingOptions())
    outputs = [tmp_path / "ph7.4.sdf", tmp_path / "ph7.4.smi", tmp_path / "ph2.sdf"]
    counts = export_docking_structures([tmp_path / "000000.parquet"], outputs, phs=[7.4, 7.4, 2.0])
    assert counts == {str(p): 2 for p in outputs}
    charges = [m.GetProp("ionotate_charge") for m in Chem.SDMolSupplier(str(tmp_path / "ph2.sdf"))]
    assert charges == ["1", "1"], "alanine and ethylamine are cations at pH 2 (common practice)"
    with pytest.raises(ValueError, match="one pH per output"):
        export_docking_structures([tmp_path / "000000.parquet"], outputs, phs=[7.4])


@pytest.mark.parametrize(("ph", "label"), [(7.4, "7.4"), (5.0, "5"), (7, "7"), (6.25, "6.25")])
def test_ph_label_reads_back_exactly(ph: float, label: str) -> None:
    assert ph_label(ph) == label and float(label) == ph


def test_docking_defaults_match_the_schema() -> None:
    docking = SCHEMA["properties"]["docking"]
    assert DockingOptions.from_config(docking["default"]) == DockingOptions()
    for key, spec in docking["properties"].items():
        assert "description" in spec and spec["default"] == docking["default"][key], key
    assert DockingOptions.from_config(asdict(DockingOptions(species="all", seed=9))).seed == 9
