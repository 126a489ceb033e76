"""gather_annotations: input order, union of columns, and loud failure on lost rows."""

from __future__ import annotations

from functools import partial
from pathlib import Path

import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from annotate.io.library import LibrarySpec
from annotate.io.schema import ANNOTATION_SCHEMA, NOTICE, read_run_metadata
from annotate.io.tables import parquet_batches
from annotate.pipeline import RecordCountError, annotate_chunk, gather_annotations, split_library
from annotate.settings import Settings

SDF_RECORD = (
    "{title}\n  test\n\n  1  0  0  0  0  0  0  0  0  0999 V2000\n"
    "    0.0000    0.0000    0.0000 C   0  0\nM  END\n{props}$$$$\n"
)


def build(tmp_path: Path, sdf: str, *, chunk_size: int) -> tuple[Path, list[Path]]:
    source = tmp_path / "lib.sdf"
    source.write_text(sdf)
    chunk_dir = tmp_path / "chunks"
    manifest = split_library(LibrarySpec(name="lib", path=source), chunk_dir, chunk_size=chunk_size)
    annotated = []
    for name in manifest.chunk_names:
        out = tmp_path / "annotated" / f"{name}.parquet"
        annotate_chunk(chunk_dir / f"{name}.parquet", out, settings=Settings())
        annotated.append(out)
    return chunk_dir, annotated


def sdf(titles_and_props: list[tuple[str, dict[str, str]]]) -> str:
    return "".join(
        SDF_RECORD.format(title=t, props="".join(f"> <{k}>\n{v}\n\n" for k, v in p.items()))
        for t, p in titles_and_props
    )


def test_rows_come_out_in_input_order_with_all_properties(tmp_path: Path) -> None:
    records = [("m0", {"a": "1"}), ("m1", {}), ("m2", {"b": "x"}), ("m3", {"a": "4", "b": "y"}), ("m4", {})]
    chunk_dir, annotated = build(tmp_path, sdf(records), chunk_size=2)
    out = tmp_path / "annotated.parquet"
    gather_annotations(chunk_dir, annotated, out)
    frame = pl.read_parquet(out)
    assert frame["id"].to_list() == ["m0", "m1", "m2", "m3", "m4"]
    assert frame["input_index"].to_list() == [0, 1, 2, 3, 4]
    assert frame.columns == [*ANNOTATION_SCHEMA.names, "a", "b"]
    assert frame["a"].to_list() == ["1", None, None, "4", None]
    assert frame["b"].to_list() == [None, None, "x", "y", None]
    assert pq.ParquetFile(out).metadata.num_row_groups == 3
    assert read_run_metadata(pq.read_schema(out))["notice"] == NOTICE


def test_a_chunk_that_lost_a_row_fails_the_gather_and_writes_nothing(tmp_path: Path) -> None:
    chunk_dir, annotated = build(tmp_path, sdf([(f"m{i}", {}) for i in range(4)]), chunk_size=2)
    short = pq.read_table(annotated[1])
    pq.write_table(short.slice(0, 1), annotated[1])
    out = tmp_path / "annotated.parquet"
    with pytest.raises(RecordCountError, match=r"1 rows in chunk 000001, but the split read 4 records"):
        gather_annotations(chunk_dir, annotated, out)
    assert not out.exists()
    assert not list(tmp_path.glob(".annotated.parquet.partial*"))


def test_rows_out_of_order_fail_the_gather(tmp_path: Path) -> None:
    chunk_dir, annotated = build(tmp_path, sdf([(f"m{i}", {}) for i in range(3)]), chunk_size=3)
    table = pq.read_table(annotated[0])
    pq.write_table(table.take(pa.array([1, 0, 2])), annotated[0])
    with pytest.raises(RecordCountError, match="should hold records 0..2 in order"):
        gather_annotations(chunk_dir, annotated, tmp_path / "annotated.parquet")


def test_a_missing_chunk_fails_the_gather(tmp_path: Path) -> None:
    chunk_dir, annotated = build(tmp_path, sdf([(f"m{i}", {}) for i in range(4)]), chunk_size=2)
    with pytest.raises(RecordCountError, match=r"do not match the split's chunks"):
        gather_annotations(chunk_dir, annotated[:1], tmp_path / "annotated.parquet")


def test_chunks_annotated_with_different_settings_are_not_mixed(tmp_path: Path) -> None:
    chunk_dir, annotated = build(tmp_path, sdf([(f"m{i}", {}) for i in range(4)]), chunk_size=2)
    annotate_chunk(chunk_dir / "000001.parquet", annotated[1], settings=Settings(ph=(2.0,)))
    with pytest.raises(ValueError, match="annotated with other settings"):
        gather_annotations(chunk_dir, annotated, tmp_path / "annotated.parquet")


def test_empty_library_gives_an_empty_typed_file(tmp_path: Path) -> None:
    chunk_dir, annotated = build(tmp_path, "", chunk_size=2)
    out = tmp_path / "annotated.parquet"
    gather_annotations(chunk_dir, annotated, out)
    table = pq.read_table(out)
    assert table.num_rows == 0
    assert table.schema.remove_metadata().equals(ANNOTATION_SCHEMA)


def test_chunks_read_in_batches_give_the_same_file_and_the_same_checks(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Memory must not grow with chunk_size: each chunk is read a batch at a time."""
    chunk_dir, annotated = build(tmp_path, sdf([(f"m{i}", {"a": str(i)}) for i in range(7)]), chunk_size=4)
    whole = tmp_path / "whole.parquet"
    gather_annotations(chunk_dir, annotated, whole)
    monkeypatch.setattr("annotate.pipeline.gather.parquet_batches", partial(parquet_batches, batch_rows=2))
    batched = tmp_path / "batched.parquet"
    gather_annotations(chunk_dir, annotated, batched)
    assert pq.read_table(batched).equals(pq.read_table(whole))
    assert pq.ParquetFile(batched).metadata.num_row_groups == 4  # 2+2 of the first chunk, 2+1 of the second
    table = pq.read_table(annotated[0])  # a swap inside the second batch of a chunk is still found
    pq.write_table(table.take(pa.array([0, 1, 3, 2])), annotated[0])
    with pytest.raises(RecordCountError, match="should hold records 0..3 in order"):
        gather_annotations(chunk_dir, annotated, tmp_path / "swapped.parquet")
