"""Docking tables: typed rows, and per-pH SD/SMILES files joined from them in one pass."""

from __future__ import annotations

from pathlib import Path

import pyarrow.parquet as pq
import pytest
from rdkit import Chem

from annotate import Settings
from annotate.export.docking_table import (
    DOCKING_SCHEMA,
    StructureFile,
    docking_table,
    write_structure_files,
)
from annotate.export.structures import SMILES_HEADER, docking_records

SETTINGS = Settings(ph=(7.4, 2.0))
#: (input position, id, SMILES); glycine changes charge between pH 2 and 7.4
MOLECULES = [(0, "acetic", "CC(=O)O"), (1, "glycine", "NCC(=O)O"), (2, "benzene", "c1ccccc1")]


def _records(index: int, id: str, smiles: str) -> list[tuple[int, Chem.Mol]]:
    mols = docking_records(
        Chem.MolFromSmiles(smiles),
        id=id,
        settings=SETTINGS,
        which="dominant",
        max_per_molecule=4,
        embed_3d=False,
        seed=1,
    )
    return [(index, mol) for mol in mols]


@pytest.fixture(scope="module")
def chunks(tmp_path_factory: pytest.TempPathFactory) -> list[Path]:
    """Two chunk tables (first two molecules, then the last) as the export job writes them."""
    folder = tmp_path_factory.mktemp("docking")
    paths = []
    for name, part in (("000000", MOLECULES[:2]), ("000001", MOLECULES[2:])):
        pairs = [pair for molecule in part for pair in _records(*molecule)]
        pq.write_table(docking_table(pairs), folder / f"{name}.parquet")
        paths.append(folder / f"{name}.parquet")
    return paths


def test_table_is_typed_and_ordered(chunks: list[Path]) -> None:
    table = pq.read_table(chunks[0])
    assert table.schema.remove_metadata().equals(DOCKING_SCHEMA)
    assert table.column("id").to_pylist() == ["acetic", "acetic", "glycine", "glycine"]
    assert table.column("ph").to_pylist() == [7.4, 2.0, 7.4, 2.0]
    assert docking_table([]).schema.equals(DOCKING_SCHEMA) and docking_table([]).num_rows == 0


def test_files_per_ph_round_trip_through_rdkit(chunks: list[Path], tmp_path: Path) -> None:
    files = [
        StructureFile(tmp_path / "ph7.4.sdf", ph=7.4),
        StructureFile(tmp_path / "ph7.4.smi", ph=7.4),
        StructureFile(tmp_path / "ph2.sdf", ph=2.0),
    ]
    assert write_structure_files(chunks, files) == [3, 3, 3]
    back = list(Chem.SDMolSupplier(str(tmp_path / "ph7.4.sdf"), removeHs=False))
    assert [m.GetProp("_Name") for m in back] == ["acetic", "glycine", "benzene"]
    for mol in back:
        assert Chem.GetFormalCharge(mol) == int(mol.GetProp("ionotate_charge"))
        assert mol.GetProp("ionotate_ph") == "7.4"
    # glycine: net +1 at pH 2 (COOH pKa about 2.3, from memory), net 0 zwitterion at 7.4
    at_2 = {m.GetProp("_Name"): Chem.GetFormalCharge(m) for m in Chem.SDMolSupplier(str(tmp_path / "ph2.sdf"))}
    assert at_2["glycine"] == 1 and at_2["acetic"] == 0
    header, *rows = (tmp_path / "ph7.4.smi").read_text().splitlines()
    assert tuple(header.split("\t")) == SMILES_HEADER
    for row, mol in zip(rows, back, strict=True):
        smiles, id_, ph, charge, _ = row.split("\t")
        parsed = Chem.MolFromSmiles(smiles)
        assert id_ == mol.GetProp("_Name") and ph == "7.4"
        assert Chem.GetFormalCharge(parsed) == int(charge) == Chem.GetFormalCharge(mol)


def test_empty_chunks_give_empty_typed_files(tmp_path: Path) -> None:
    empty = tmp_path / "000000.parquet"
    pq.write_table(docking_table([]), empty)
    files = [StructureFile(tmp_path / "ph7.4.sdf", ph=7.4), StructureFile(tmp_path / "ph7.4.smi", ph=7.4)]
    assert write_structure_files([empty], files) == [0, 0]
    assert (tmp_path / "ph7.4.sdf").read_text() == ""
    assert (tmp_path / "ph7.4.smi").read_text() == "\t".join(SMILES_HEADER) + "\n"


def test_unknown_suffix_writes_nothing(chunks: list[Path], tmp_path: Path) -> None:
    files = [StructureFile(tmp_path / "ph7.4.sdf", ph=7.4), StructureFile(tmp_path / "ph7.4.mol2", ph=7.4)]
    with pytest.raises(ValueError, match="end in .sdf or .smi"):
        write_structure_files(chunks, files)
    assert list(tmp_path.iterdir()) == []
