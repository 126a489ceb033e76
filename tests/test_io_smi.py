"""SMILES-file reading: names, header, comments, blank lines, bad bytes, gzip."""

from __future__ import annotations

import gzip
from pathlib import Path

from annotate.io.smi import iter_smi

TEXT = b"SMILES Name\n# a comment\nCCO ethanol\n\nCC(=O)O\tacetic acid\nc1ccncc1\nCCN caf\xe9\n"


def test_records_names_and_skipped_lines(tmp_path: Path) -> None:
    path = tmp_path / "lib.smi"
    path.write_bytes(TEXT)
    records = list(iter_smi(path))
    assert [(r.text, r.title) for r in records] == [
        ("CCO", "ethanol"),
        ("CC(=O)O", "acetic acid"),
        ("c1ccncc1", None),
        ("CCN", "caf\ufffd"),
    ]
    assert [r.warning for r in records] == [None, None, None, "non-UTF-8 bytes replaced in the line"]


def test_gzipped_file_reads_the_same(tmp_path: Path) -> None:
    plain, packed = tmp_path / "lib.smi", tmp_path / "lib.smi.gz"
    plain.write_bytes(TEXT)
    packed.write_bytes(gzip.compress(TEXT))
    assert list(iter_smi(packed, gzipped=True)) == list(iter_smi(plain))


def test_first_line_is_a_record_when_it_is_not_a_header(tmp_path: Path) -> None:
    path = tmp_path / "bare.smi"
    path.write_bytes(b"CCO\nCCN\n")
    assert [r.text for r in iter_smi(path)] == ["CCO", "CCN"]
