"""Tests for benchmarks/make_library.py: reproducibility, heavy-atom window and the demo mix.

The module lives outside the package (there is no `benchmarks` package), so it is loaded by path.
"""

import importlib.util
import sys
from pathlib import Path
from types import ModuleType

import pyarrow.parquet as pq
import pytest
from rdkit import Chem, rdBase

SCRIPT = Path(__file__).resolve().parents[1] / "benchmarks" / "make_library.py"
BROKEN_NOTES = {"broken-unparsable", "broken-valence", "broken-aromaticity", "broken-empty"}
NOTES = {"ok-design", "salt", "pre-ionized", "quaternary", "no-site"} | BROKEN_NOTES


def _load_module() -> ModuleType:
    spec = importlib.util.spec_from_file_location("make_library", SCRIPT)
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses and worker pickling look the module up by name
    spec.loader.exec_module(module)
    return module


ml = _load_module()


def _generate(out_dir: Path, *, n: int, seed: int, demo: bool, formats: str = "smi,sdf,parquet") -> Path:
    prefix = out_dir / "library"
    argv = ["--n", str(n), "--seed", str(seed), "--id-prefix", "DEMO", "--format", formats, "--out", str(prefix)]
    assert ml.main(argv + (["--demo"] if demo else [])) == 0
    return prefix


def _smi_rows(prefix: Path) -> list[list[str]]:
    header, *rows = prefix.with_suffix(".smi").read_text().splitlines()
    assert header.split("\t")[:2] == ["smiles", "id"]
    return [row.split("\t") for row in rows]


def _sdf_records(prefix: Path) -> list[str]:
    text = prefix.with_suffix(".sdf").read_text()
    return [block for block in text.split("$$$$\n") if block]


def _sdf_prop(block: str, name: str) -> str | None:
    lines = block.splitlines()
    tag = f">  <{name}>"
    return lines[lines.index(tag) + 1] if tag in lines else None


def _unusable(mol: Chem.Mol | None) -> bool:
    """An empty SMILES or a zero-atom molblock parses to an empty molecule rather than None."""
    return mol is None or mol.GetNumAtoms() == 0


def _charges(mol: Chem.Mol) -> list[int]:
    return [a.GetFormalCharge() for a in mol.GetAtoms() if a.GetFormalCharge()]


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return _generate(tmp_path_factory.mktemp("demo"), n=60, seed=7, demo=True)


def test_same_seed_gives_byte_identical_files(demo: Path, tmp_path: Path) -> None:
    again = _generate(tmp_path, n=60, seed=7, demo=True)
    for suffix in (".smi", ".sdf", ".parquet"):
        assert again.with_suffix(suffix).read_bytes() == demo.with_suffix(suffix).read_bytes(), suffix


def test_different_seed_gives_different_library(tmp_path: Path) -> None:
    first = {row[0] for row in _smi_rows(_generate(tmp_path / "a", n=20, seed=1, demo=False, formats="smi"))}
    second = {row[0] for row in _smi_rows(_generate(tmp_path / "b", n=20, seed=2, demo=False, formats="smi"))}
    assert len(first) == len(second) == 20
    assert first != second


def test_products_parse_and_parents_lie_in_heavy_atom_window(demo: Path) -> None:
    rows = [row for row in _smi_rows(demo) if row[2] not in BROKEN_NOTES]
    assert len(rows) > 40
    for smiles, rid, note in rows:
        mol = Chem.MolFromSmiles(smiles)
        assert not _unusable(mol), rid
        parent = max(Chem.GetMolFrags(mol, asMols=True), key=Chem.Mol.GetNumHeavyAtoms)
        assert 20 <= parent.GetNumHeavyAtoms() <= 35, (rid, note, smiles)


def test_default_blocks_feed_every_reaction() -> None:
    reactions = ml.load_reactions()
    assert [r.name for r in reactions] == list(ml.REACTIONS)
    assert all(len(r.pools[0]) >= 10 and len(r.pools[1]) >= 10 for r in reactions)


def test_small_block_set_is_deduplicated_then_exhausted(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    blocks = tmp_path / "blocks.tsv"
    rows = [("carboxylic_acid", "OC(=O)c1ccc(Cl)cc1"), ("carboxylic_acid", "OC(=O)c1ccc(F)cc1"),
            ("secondary_amine", "C1COCCN1"), ("secondary_amine", "CN1CCNCC1"), ("aniline", "Nc1ccc(Cl)cc1")]
    blocks.write_text("role\tname\tsmiles\n" + "".join(f"{r}\tbb-{i}\t{s}\n" for i, (r, s) in enumerate(rows)))
    monkeypatch.setattr(ml, "CHUNK_SIZE", 64)
    monkeypatch.setattr(ml, "MAX_BARREN_CHUNKS", 3)
    seen: list[str] = []
    with pytest.raises(RuntimeError, match="exhausted"):
        for product in ml.enumerate_products(seed=1, min_heavy=10, blocks_path=blocks):
            seen.append(product.smiles)
            assert len(seen) < 500, "a handful of blocks cannot give 500 distinct products"
    # Only amide coupling has blocks for both reactants here: 2 acids x 3 amines = 6 distinct amides.
    assert [r.name for r in ml.load_reactions(blocks)] == ["amide_coupling"]
    assert len(seen) == len(set(seen)) == 6


def test_window_is_configurable() -> None:
    products = ml.enumerate_products(seed=3, min_heavy=24, max_heavy=27)
    counts = [Chem.MolFromSmiles(next(products).smiles).GetNumHeavyAtoms() for _ in range(30)]
    assert min(counts) >= 24 and max(counts) <= 27


def test_all_formats_hold_same_ids_in_same_order(demo: Path) -> None:
    smi_ids = [row[1] for row in _smi_rows(demo)]
    sdf_ids = [block.split("\n", 1)[0] for block in _sdf_records(demo)]
    table = pq.read_table(demo.with_suffix(".parquet"))
    assert table.schema.names == ["id", "smiles", "reaction", "mw", "note"]
    assert smi_ids == sdf_ids == table.column("id").to_pylist()
    assert len(smi_ids) == 60 and smi_ids[0] == "DEMO-000001" and smi_ids[-1] == "DEMO-000060"
    assert [row[0] for row in _smi_rows(demo)] == table.column("smiles").to_pylist()


def test_broken_records_are_unparsable_in_every_format(demo: Path) -> None:
    smi_broken = {row[1]: row for row in _smi_rows(demo) if row[2].startswith("broken-")}
    assert {row[2] for row in smi_broken.values()} == BROKEN_NOTES
    table = pq.read_table(demo.with_suffix(".parquet")).to_pylist()
    pq_broken = {row["id"]: row for row in table if row["note"].startswith("broken-")}
    sdf_broken = {b.split("\n", 1)[0]: b for b in _sdf_records(demo) if _sdf_prop(b, "note").startswith("broken-")}
    assert smi_broken.keys() == pq_broken.keys() == sdf_broken.keys()
    with rdBase.BlockLogs():
        for rid, (smiles, _, note) in smi_broken.items():
            assert pq_broken[rid]["smiles"] == smiles and pq_broken[rid]["note"] == note
            assert pq_broken[rid]["reaction"] is None and pq_broken[rid]["mw"] is None
            assert _sdf_prop(sdf_broken[rid], "note") == note
            assert _unusable(Chem.MolFromSmiles(smiles)), rid
            assert _unusable(Chem.MolFromMolBlock(sdf_broken[rid])), rid
            # Only the bad counts line is a format error; the other SDF defects are chemical.
            assert (Chem.MolFromMolBlock(sdf_broken[rid], sanitize=False) is None) == (note == "broken-unparsable")


def test_sdf_reader_recovers_after_each_broken_record(demo: Path) -> None:
    notes = [row[2] for row in _smi_rows(demo)]
    with rdBase.BlockLogs():
        mols = list(Chem.SDMolSupplier(str(demo.with_suffix(".sdf"))))
    assert len(mols) == len(notes)
    for mol, note, rid in zip(mols, notes, (row[1] for row in _smi_rows(demo))):
        if note in BROKEN_NOTES:
            assert _unusable(mol), rid
        else:
            assert mol.GetProp("_Name") == rid and mol.GetProp("note") == note
            assert mol.GetConformer().Is3D() is False and mol.HasProp("scaffold_family")


def test_demo_mix_has_every_note_class_with_matching_chemistry(demo: Path) -> None:
    by_note: dict[str, list[Chem.Mol]] = {}
    with rdBase.BlockLogs():
        for smiles, _, note in _smi_rows(demo):
            by_note.setdefault(note, []).append(Chem.MolFromSmiles(smiles))
    assert set(by_note) == NOTES
    assert all(len(Chem.GetMolFrags(mol)) == 2 for mol in by_note["salt"])
    assert all(len(Chem.GetMolFrags(mol)) == 1 and len(_charges(mol)) == 1 for mol in by_note["pre-ionized"])
    quaternary = Chem.MolFromSmarts("[NX4+;H0]")
    assert all(mol.HasSubstructMatch(quaternary) for mol in by_note["quaternary"])
    amide_n, hydroxyl = Chem.MolFromSmarts("[NX3]C=O"), Chem.MolFromSmarts("[OX2H]")
    for mol in by_note["no-site"]:  # every N is an amide N, no OH, nothing charged
        nitrogens = {a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 7}
        assert nitrogens <= {m[0] for m in mol.GetSubstructMatches(amide_n)}, Chem.MolToSmiles(mol)
        assert not _charges(mol) and not mol.HasSubstructMatch(hydroxyl), Chem.MolToSmiles(mol)
    assert not any(_charges(mol) for mol in by_note["ok-design"])


def test_parquet_is_written_in_row_groups(tmp_path: Path) -> None:
    writer = ml.ParquetWriter(tmp_path / "x.parquet", with_note=False, row_group_size=8)
    for record in ml.library_records(n=20, seed=5, id_prefix="BENCH"):
        writer.write(record)
    writer.close()
    parquet = pq.ParquetFile(tmp_path / "x.parquet")
    assert [parquet.metadata.row_group(i).num_rows for i in range(parquet.num_row_groups)] == [8, 8, 4]
    assert parquet.schema_arrow.field("mw").type == "double"


@pytest.mark.slow
def test_output_does_not_depend_on_worker_count(tmp_path: Path) -> None:
    one = [r.smiles for r in ml.library_records(n=600, seed=9, id_prefix="BENCH", workers=1)]
    two = [r.smiles for r in ml.library_records(n=600, seed=9, id_prefix="BENCH", workers=2)]
    assert one == two
