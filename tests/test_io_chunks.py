"""Chunk planning: exact sizes, contiguous positions, one empty chunk for an empty library."""

from __future__ import annotations

from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from annotate.io.chunks import _rebatch, _text_chunks, iter_chunks, text_chunk
from annotate.io.library import LibrarySpec
from annotate.io.records import TextRecord
from annotate.io.schema import CHUNK_SCHEMA


def sizes_and_starts(spec: LibrarySpec, chunk_size: int) -> list[tuple[int, int]]:
    return [
        (c.num_rows, c.column("input_index")[0].as_py() if c.num_rows else -1)
        for c in iter_chunks(spec, chunk_size=chunk_size)
    ]


@pytest.mark.parametrize("fmt", ["smi", "csv", "parquet"])
def test_seven_records_in_chunks_of_three(tmp_path: Path, fmt: str) -> None:
    smiles = ["C" * (i + 1) for i in range(7)]
    path = tmp_path / f"lib.{fmt}"
    if fmt == "parquet":
        pq.write_table(pa.table({"smiles": smiles}), path, row_group_size=2)
    else:
        path.write_text(("smiles\n" if fmt == "csv" else "") + "\n".join(smiles) + "\n")
    spec = LibrarySpec(name="lib", path=path)
    assert sizes_and_starts(spec, 3) == [(3, 0), (3, 3), (1, 6)]
    chunks = list(iter_chunks(spec, chunk_size=3))
    assert pa.concat_tables(c.select(["record"]) for c in chunks).column("record").to_pylist() == smiles


def test_sdf_chunks_carry_the_properties_each_chunk_has(tmp_path: Path) -> None:
    records = [
        TextRecord(text="x", title="a", properties={"p": "1"}),
        TextRecord(text="x", title=None, properties={"q": "2", "p": "3"}),
    ]
    table = text_chunk(records, first_index=10, library="lib")
    assert table.schema.names[-2:] == ["p", "q"]
    assert table.column("id").to_pylist() == ["a", "lib:11"]
    assert table.column("input_index").to_pylist() == [10, 11]
    assert table.column("q").to_pylist() == [None, "2"]


@pytest.mark.parametrize(
    ("name", "content"), [("empty.sdf", ""), ("empty.smi", "# nothing\n"), ("empty.csv", "")]
)
def test_empty_library_gives_one_empty_typed_chunk(tmp_path: Path, name: str, content: str) -> None:
    path = tmp_path / name
    path.write_text(content)
    chunks = list(iter_chunks(LibrarySpec(name="e", path=path), chunk_size=5))
    assert [c.num_rows for c in chunks] == [0]
    assert chunks[0].schema.field("input_index").type == pa.int64()


def test_chunk_size_must_be_positive(tmp_path: Path) -> None:
    path = tmp_path / "a.smi"
    path.write_text("C\n")
    with pytest.raises(ValueError, match="chunk_size must be at least 1, got 0"):
        list(iter_chunks(LibrarySpec(name="e", path=path), chunk_size=0))


def test_properties_that_collide_after_prefixing_are_refused() -> None:
    records = [TextRecord(text="x", properties={"id": "1", "input_id": "2"})]
    with pytest.raises(ValueError, match="'id' and 'input_id' would both be written as 'input_id'"):
        text_chunk(records, first_index=0, library="lib")


@settings(max_examples=50, deadline=None)
@given(batch_sizes=st.lists(st.integers(min_value=0, max_value=9), max_size=12), size=st.integers(1, 7))
def test_rebatch_keeps_every_row_in_order_in_full_chunks(batch_sizes: list[int], size: int) -> None:
    start = 0
    batches = []
    for n in batch_sizes:
        batches.append(pa.table({"i": pa.array(range(start, start + n), pa.int64())}))
        start += n
    out = list(_rebatch(batches, size=size))
    assert [t.num_rows for t in out[:-1]] == [size] * (len(out) - 1)
    assert all(0 < t.num_rows <= size for t in out)
    flat = [v for t in out for v in t.column("i").to_pylist()]
    assert flat == list(range(start))


def test_compressed_table_is_refused_before_reading(tmp_path: Path) -> None:
    path = tmp_path / "lib.csv.gz"
    path.write_bytes(b"not even gzip")
    with pytest.raises(ValueError, match="gzip is supported for SDF and SMILES files only"):
        list(iter_chunks(LibrarySpec(name="e", path=path), chunk_size=5))


def test_text_chunk_built_in_pieces_equals_one_piece(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    # properties first seen in later pieces still come after earlier ones, nulls where a record lacks one
    titles = [f"m{i}" if i % 3 else "" for i in range(7)]
    properties = [{"p": "1"}, {}, {"q": "2"}, {"p": "3", "r": "4"}, {}, {"q": "5"}, {"s": "6"}]
    path = tmp_path / "lib.sdf"
    block = "\n  test\n\n  1  0  0  0  0  0  0  0  0  0999 V2000\n    0.0000    0.0000    0.0000 C   0  0\nM  END\n"
    path.write_text(
        "".join(
            t + block + "".join(f"> <{k}>\n{v}\n\n" for k, v in p.items()) + "$$$$\n"
            for t, p in zip(titles, properties, strict=True)
        )
    )
    spec = LibrarySpec(name="lib", path=path)
    whole = list(iter_chunks(spec, chunk_size=5))
    monkeypatch.setattr("annotate.io.chunks.PIECE_RECORDS", 2)
    pieces = list(iter_chunks(spec, chunk_size=5))
    assert [c.num_rows for c in pieces] == [5, 2]
    for one, built in zip(whole, pieces, strict=True):
        assert built.equals(one)
    assert pieces[0].schema.names[-3:] == ["p", "q", "r"]
    assert pieces[0].column("id").to_pylist() == ["lib:0", "m1", "m2", "lib:3", "m4"]


def test_properties_that_collide_in_different_pieces_are_refused(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr("annotate.io.chunks.PIECE_RECORDS", 1)
    records = [TextRecord(text="x", properties={"id": "1"}), TextRecord(text="y", properties={"input_id": "2"})]
    spec = LibrarySpec(name="lib", path=Path("unused.sdf"))
    with pytest.raises(ValueError, match="'id' and 'input_id' would both be written as 'input_id'"):
        list(_text_chunks(records, spec=spec, chunk_size=10))


def test_property_names_that_are_empty_or_reserved_keep_their_own_columns() -> None:
    records = [TextRecord(text="C", title=" t ", properties={"": "x", "record": "y"}), TextRecord(text=None, error="e")]
    table = text_chunk(records, first_index=5, library="lib")
    assert table.schema.names == [*CHUNK_SCHEMA.names, "", "input_record"]
    assert table.to_pylist()[0] == {
        "input_index": 5,
        "id": "t",
        "record": "C",
        "read_error": None,
        "read_warning": None,
        "": "x",
        "input_record": "y",
    }
    assert table.column("id").to_pylist() == ["t", "lib:6"]
