"""annotate_chunk: one row per record; reading problems become errors or warnings."""

from __future__ import annotations

import json
from pathlib import Path

import pyarrow.parquet as pq
import pytest
from rdkit import Chem

import annotate.pipeline.annotation as module
from annotate.io.library import LibrarySpec
from annotate.io.records import NO_MOLBLOCK_END
from annotate.io.schema import ANNOTATION_SCHEMA, read_run_metadata
from annotate.pipeline import annotate_chunk, split_library
from annotate.settings import Settings


def ethanol_record(props: bytes) -> bytes:
    mol = Chem.MolFromSmiles("CCO")
    mol.SetProp("_Name", "ethanol")
    return Chem.MolToMolBlock(mol).encode() + props + b"$$$$\n"


@pytest.fixture
def sdf_chunk(tmp_path: Path) -> Path:
    source = tmp_path / "lib.sdf"
    source.write_bytes(
        ethanol_record(b"> <note>\nok\n\n")
        + b"junk\nno counts line\n$$$$\n"
        + ethanol_record(b"> <note>\nna\xefve\n\n")
    )
    split_library(LibrarySpec(name="lib", path=source), tmp_path / "chunks", chunk_size=10)
    return tmp_path / "chunks" / "000000.parquet"


def test_every_record_gives_one_row_with_the_contract_schema(sdf_chunk: Path, tmp_path: Path) -> None:
    out = tmp_path / "annotated.parquet"
    annotate_chunk(sdf_chunk, out, settings=Settings(ph=(7.4, 3.0)))
    table = pq.read_table(out)
    assert table.schema.remove_metadata().names == [*ANNOTATION_SCHEMA.names, "note"]
    assert table.select(ANNOTATION_SCHEMA.names).schema.remove_metadata().equals(ANNOTATION_SCHEMA)
    assert table.column("input_index").to_pylist() == [0, 1, 2]
    assert table.column("id").to_pylist() == ["ethanol", "junk", "ethanol"]
    assert table.column("note").to_pylist() == ["ok", None, "na\ufffdve"]
    states = table.column("ph_states").to_pylist()[0]
    assert [s["ph"] for s in states] == [7.4, 3.0]


def test_unreadable_record_is_an_error_row_with_its_reason(sdf_chunk: Path, tmp_path: Path) -> None:
    out = tmp_path / "annotated.parquet"
    annotate_chunk(sdf_chunk, out, settings=Settings())
    row = pq.read_table(out).slice(1, 1).to_pylist()[0]
    assert (row["status"], row["message"], row["parent_smiles"], row["sites"]) == (
        "error",
        NO_MOLBLOCK_END,
        None,
        None,
    )


def test_reading_warning_is_added_to_the_engine_verdict(sdf_chunk: Path, tmp_path: Path) -> None:
    out = tmp_path / "annotated.parquet"
    annotate_chunk(sdf_chunk, out, settings=Settings())
    row = pq.read_table(out).slice(2, 1).to_pylist()[0]
    assert row["status"] == "warning"
    assert row["message"].endswith("non-UTF-8 bytes replaced in property 'note'")
    assert row["parent_smiles"] is not None


def test_run_settings_are_recorded_in_the_file(sdf_chunk: Path, tmp_path: Path) -> None:
    out = tmp_path / "annotated.parquet"
    annotate_chunk(sdf_chunk, out, settings=Settings(ph=(5.0,), max_species=2))
    meta = read_run_metadata(pq.read_schema(out))
    assert json.loads(meta["settings"])["ph"] == [5.0]
    assert json.loads(meta["settings"])["max_species"] == 2
    assert json.loads(meta["source"])["format"] == "sdf"


def test_a_parser_exception_costs_one_row_not_the_chunk(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, caplog: pytest.LogCaptureFixture
) -> None:
    source = tmp_path / "lib.smi"
    source.write_text("CCO a\nCCN b\n")
    split_library(LibrarySpec(name="lib", path=source), tmp_path / "chunks", chunk_size=10)

    real = module._PARSERS["smiles"]

    def flaky(smiles: str):
        if smiles == "CCN":
            raise RuntimeError("boom")
        return real(smiles)

    monkeypatch.setitem(module._PARSERS, "smiles", flaky)
    out = tmp_path / "annotated.parquet"
    annotate_chunk(tmp_path / "chunks" / "000000.parquet", out, settings=Settings())
    rows = pq.read_table(out).to_pylist()
    assert [r["status"] != "error" for r in rows] == [True, False]
    assert rows[1]["message"] == "internal error: RuntimeError: boom"
    assert "parser raised on record 'b'" in caplog.text


def test_a_chunk_is_written_row_group_by_row_group_with_the_same_rows(
    sdf_chunk: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Memory per job must not grow with chunk_size: records are annotated and written a row group at a time."""
    whole = tmp_path / "whole.parquet"
    annotate_chunk(sdf_chunk, whole, settings=Settings())
    monkeypatch.setattr(module, "ROW_GROUP", 2)
    parts = tmp_path / "parts.parquet"
    annotate_chunk(sdf_chunk, parts, settings=Settings())
    assert pq.ParquetFile(whole).num_row_groups == 1
    assert pq.ParquetFile(parts).num_row_groups == 2
    assert pq.read_table(parts).equals(pq.read_table(whole))
    assert pq.read_schema(parts).metadata == pq.read_schema(whole).metadata


def test_an_empty_chunk_gives_an_empty_table_with_the_schema(tmp_path: Path) -> None:
    source = tmp_path / "lib.smi"
    source.write_text("CCO a\n")
    split_library(LibrarySpec(name="lib", path=source), tmp_path / "chunks", chunk_size=10)
    chunk = tmp_path / "chunks" / "000000.parquet"
    table = pq.read_table(chunk)
    pq.write_table(table.slice(0, 0).replace_schema_metadata(table.schema.metadata), chunk)
    out = tmp_path / "annotated.parquet"
    annotate_chunk(chunk, out, settings=Settings())
    written = pq.read_table(out)
    assert written.num_rows == 0
    assert written.schema.remove_metadata().names[: len(ANNOTATION_SCHEMA)] == ANNOTATION_SCHEMA.names
