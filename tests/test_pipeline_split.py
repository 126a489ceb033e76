"""split_library: chunk files plus a manifest, written all at once or not at all."""

from __future__ import annotations

import json
from pathlib import Path

import pyarrow.parquet as pq
import pytest

from annotate.io.library import LibrarySpec
from annotate.io.schema import read_run_metadata
from annotate.pipeline import read_manifest, split_library


def test_chunks_and_manifest_describe_every_record(tmp_path: Path) -> None:
    source = tmp_path / "lib.smi"
    source.write_text("".join(f"{'C' * (i + 1)} m{i}\n" for i in range(5)))
    out = tmp_path / "chunks"
    manifest = split_library(LibrarySpec(name="lib", path=source), out, chunk_size=2)
    assert read_manifest(out) == manifest
    assert [(c.name, c.first_index, c.records) for c in manifest.chunks] == [
        ("000000", 0, 2),
        ("000001", 2, 2),
        ("000002", 4, 1),
    ]
    assert manifest.records == 5 and manifest.record_kind == "smiles"
    assert json.loads((out / "manifest.json").read_text())["records"] == 5
    assert sorted(p.name for p in out.iterdir()) == [
        "000000.parquet",
        "000001.parquet",
        "000002.parquet",
        "manifest.json",
    ]
    first = pq.read_table(out / "000000.parquet")
    assert first.column("id").to_pylist() == ["m0", "m1"]
    meta = read_run_metadata(first.schema)
    assert (meta["library"], meta["record_kind"]) == ("lib", "smiles")
    assert json.loads(meta["source"]) == {"path": str(source), "format": "smi", "structure": "auto"}


def test_a_failed_split_leaves_no_chunk_directory(tmp_path: Path) -> None:
    source = tmp_path / "lib.csv"
    source.write_text("name\nx\n")
    out = tmp_path / "chunks"
    with pytest.raises(ValueError, match="no column 'smiles'"):
        split_library(LibrarySpec(name="lib", path=source), out, chunk_size=2)
    assert list(tmp_path.iterdir()) == [source]
