"""Tabular libraries (CSV, TSV, Parquet) as chunks: typed carry-through, ids, unreadable rows."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from rdkit import Chem

from annotate.io.chunks import iter_chunks
from annotate.io.library import LibrarySpec
from annotate.io.records import NO_MOLBLOCK_END
from annotate.io.schema import CHUNK_SCHEMA
from annotate.io.tables import parquet_batches


def read_all(spec: LibrarySpec, chunk_size: int = 1000) -> pa.Table:
    return pa.concat_tables(iter_chunks(spec, chunk_size=chunk_size))


@pytest.mark.parametrize(("suffix", "sep"), [(".csv", ","), (".tsv", "\t")])
def test_csv_and_tsv_columns_are_carried_with_inferred_types(tmp_path: Path, suffix: str, sep: str) -> None:
    path = tmp_path / f"lib{suffix}"
    rows = ["Code,SMILES,weight,flag", "7,CCO,46.07,true", "8,,60.05,false", "9,  CCN  ,,true"]
    path.write_text("\n".join(r.replace(",", sep) for r in rows) + "\n")
    table = read_all(LibrarySpec(name="t", path=path, id_column="code"))
    assert table.schema.names == [*CHUNK_SCHEMA.names, "Code", "SMILES", "weight", "flag"]
    assert table.schema.field("Code").type == pa.int64()
    assert table.schema.field("weight").type == pa.float64()
    assert table.schema.field("flag").type == pa.bool_()
    assert table.column("id").to_pylist() == ["7", "8", "9"]
    assert table.column("record").to_pylist() == ["CCO", None, "CCN"]
    assert table.column("read_error").to_pylist() == [None, "missing SMILES", None]
    assert table.column("weight").to_pylist() == [46.07, 60.05, None]


def test_type_inference_sees_the_whole_file_not_the_first_rows(tmp_path: Path) -> None:
    path = tmp_path / "late.csv"
    path.write_text("smiles,value\n" + "C,1\n" * 300 + "CC,2.5\n")
    table = read_all(LibrarySpec(name="t", path=path), chunk_size=100)
    assert table.schema.field("value").type == pa.float64()
    assert table.num_rows == 301


def test_short_and_long_csv_lines_still_give_one_row_each(tmp_path: Path) -> None:
    path = tmp_path / "ragged.csv"
    path.write_text("smiles,a\nCCO,1\nCCN\nCCC,3,extra\n")
    table = read_all(LibrarySpec(name="t", path=path))
    assert table.column("record").to_pylist() == ["CCO", "CCN", "CCC"]
    assert table.column("a").to_pylist() == [1, None, 3]


def test_missing_id_column_or_cell_falls_back_to_library_and_index(tmp_path: Path) -> None:
    path = tmp_path / "ids.parquet"
    pq.write_table(pa.table({"smiles": ["C", "CC", "CCC"], "ID": ["a", None, " "]}), path)
    assert read_all(LibrarySpec(name="lib", path=path)).column("id").to_pylist() == ["a", "lib:1", "lib:2"]
    pq.write_table(pa.table({"smiles": ["C", "CC"]}), path)
    assert read_all(LibrarySpec(name="lib", path=path)).column("id").to_pylist() == ["lib:0", "lib:1"]


def test_parquet_types_are_kept_exactly(tmp_path: Path) -> None:
    path = tmp_path / "typed.parquet"
    source = pa.table(
        {
            "smiles": pa.array(["CCO", "CCN"], pa.string()),
            "n": pa.array([1, 2], pa.int16()),
            "tags": pa.array([["a"], []], pa.list_(pa.string())),
            "when": pa.array([0, 1], pa.timestamp("ms")),
        }
    )
    pq.write_table(source, path)
    table = read_all(LibrarySpec(name="t", path=path))
    assert table.select(["smiles", "n", "tags", "when"]).equals(source)


@pytest.mark.parametrize(
    "column",
    [
        pa.array(["CCO", None], pa.large_string()),
        pa.array(["CCO", None], pa.string_view()),
        pa.array(["CCO", None]).dictionary_encode(),
    ],
    ids=["large_string", "string_view", "dictionary"],
)
def test_every_arrow_text_type_is_a_structure_column(tmp_path: Path, column: pa.Array) -> None:
    path = tmp_path / "text.parquet"
    pq.write_table(pa.table({"smiles": column}), path)
    table = read_all(LibrarySpec(name="t", path=path))
    assert table.column("record").to_pylist() == ["CCO", None]
    assert table.column("read_error").to_pylist() == [None, "missing SMILES"]


def test_wrong_structure_column_type_makes_every_row_an_error(tmp_path: Path) -> None:
    path = tmp_path / "ints.parquet"
    pq.write_table(pa.table({"smiles": [1, 2]}), path)
    table = read_all(LibrarySpec(name="t", path=path))
    assert table.column("record").to_pylist() == [None, None]
    assert (
        table.column("read_error").to_pylist() == ["SMILES column 'smiles' holds int64 values, not text"] * 2
    )
    assert table.column("smiles").to_pylist() == [1, 2]


def test_parquet_molblock_column_with_a_truncated_block(tmp_path: Path) -> None:
    good = Chem.MolToMolBlock(Chem.MolFromSmiles("CCO"))
    path = tmp_path / "blocks.parquet"
    pq.write_table(pa.table({"Molblock": [good, good[:60], None], "id": ["a", "b", "c"]}), path)
    table = read_all(LibrarySpec(name="t", path=path))
    assert table.column("record").to_pylist() == [good, None, None]
    assert table.column("read_error").to_pylist() == [None, NO_MOLBLOCK_END, "missing molblock"]


def test_input_column_named_like_an_output_column_is_prefixed(tmp_path: Path) -> None:
    path = tmp_path / "clash.csv"
    path.write_text("id,smiles,status\n1,CCO,new\n")
    table = read_all(LibrarySpec(name="t", path=path))
    assert table.schema.names == [*CHUNK_SCHEMA.names, "input_id", "smiles", "input_status"]
    assert table.column("input_id").to_pylist() == [1]
    assert table.column("id").to_pylist() == ["1"]


def test_table_without_a_structure_column_fails_naming_its_columns(tmp_path: Path) -> None:
    path = tmp_path / "none.csv"
    path.write_text("name,mass\nx,1\n")
    with pytest.raises(ValueError, match=r"no column 'smiles' or 'molblock'.*\['name', 'mass'\]"):
        read_all(LibrarySpec(name="t", path=path))


def test_header_only_csv_gives_one_typed_empty_chunk(tmp_path: Path) -> None:
    path = tmp_path / "header.csv"
    path.write_text("id,smiles,mass\n")
    chunks = list(iter_chunks(LibrarySpec(name="t", path=path), chunk_size=10))
    assert len(chunks) == 1 and chunks[0].num_rows == 0
    assert chunks[0].schema.names == [*CHUNK_SCHEMA.names, "input_id", "smiles", "mass"]


def test_polars_reads_chunk_tables(tmp_path: Path) -> None:
    path = tmp_path / "lib.csv"
    path.write_text("smiles\nCCO\n")
    frame = pl.from_arrow(read_all(LibrarySpec(name="t", path=path)))
    assert frame.row(0, named=True)["record"] == "CCO"


def test_parquet_batches_read_every_row_in_order_in_small_batches(tmp_path: Path) -> None:
    path = tmp_path / "t.parquet"
    table = pa.table({"i": pa.array(range(10), pa.int64()), "s": pa.array(list("abcdefghij"), pa.large_string())})
    pq.write_table(table, path, row_group_size=4)
    batches = list(parquet_batches(path, batch_rows=3))
    assert all(b.num_rows <= 3 for b in batches) and len(batches) >= 4
    assert pa.Table.from_batches(batches).equals(table)
    only = list(parquet_batches(path, columns=["s"], batch_rows=3))
    assert only[0].schema.names == ["s"] and only[0].schema.field("s").type == pa.large_string()
