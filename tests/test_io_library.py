"""Library specs: format from extension, gzip rules, column lookup ignoring case."""

from __future__ import annotations

from pathlib import Path

import pytest

from annotate.io.library import LibrarySpec, find_column, structure_column


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        ("a.sdf", "sdf"),
        ("a.SDF", "sdf"),
        ("a.sdf.gz", "sdf"),
        ("a.smi", "smi"),
        ("a.smi.gz", "smi"),
        ("a.csv", "csv"),
        ("a.tsv", "tsv"),
        ("a.parquet", "parquet"),
    ],
)
def test_format_follows_the_extension(name: str, expected: str) -> None:
    assert LibrarySpec(name="x", path=Path(name)).resolved_format == expected


def test_explicit_format_wins_over_the_extension() -> None:
    assert LibrarySpec(name="x", path=Path("a.txt"), format="tsv").resolved_format == "tsv"


def test_unknown_extension_asks_for_format() -> None:
    with pytest.raises(ValueError, match="library 'x'.*set 'format'"):
        _ = LibrarySpec(name="x", path=Path("a.dat")).resolved_format


def test_gzip_only_for_text_record_formats() -> None:
    assert LibrarySpec(name="x", path=Path("a.sdf.gz")).gzipped
    with pytest.raises(ValueError, match="gzip is supported for SDF and SMILES files only"):
        _ = LibrarySpec(name="x", path=Path("a.csv.gz")).gzipped


def test_from_config_accepts_a_path_or_a_mapping() -> None:
    assert LibrarySpec.from_config("a", "x.sdf") == LibrarySpec(name="a", path=Path("x.sdf"))
    spec = LibrarySpec.from_config("a", {"path": "x.csv", "smiles_column": "SMI", "id_column": "code"})
    assert (spec.path, spec.smiles_column, spec.id_column) == (Path("x.csv"), "SMI", "code")


def test_find_column_ignores_case_but_prefers_an_exact_match() -> None:
    assert find_column(["ID", "Smiles"], "smiles") == "Smiles"
    assert find_column(["SMILES", "smiles"], "smiles") == "smiles"
    assert find_column(["a"], "smiles") is None
    with pytest.raises(ValueError, match="match 'smiles' when case is ignored"):
        find_column(["SMILES", "Smiles"], "smiles")


def test_structure_column_prefers_smiles_then_molblock_unless_told() -> None:
    spec = LibrarySpec(name="x", path=Path("a.parquet"))
    assert structure_column(spec, ["molblock", "SMILES"]) == ("SMILES", "smiles")
    assert structure_column(spec, ["MolBlock", "id"]) == ("MolBlock", "molblock")
    forced = LibrarySpec(name="x", path=Path("a.parquet"), structure="molblock")
    assert structure_column(forced, ["molblock", "smiles"]) == ("molblock", "molblock")
    with pytest.raises(ValueError, match=r"has no column 'smiles' or 'molblock'.*\['a', 'b'\]"):
        structure_column(spec, ["a", "b"])
