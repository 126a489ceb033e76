"""SDF reading: record cutting, properties, broken and truncated records, gzip, V3000."""

from __future__ import annotations

import gzip
from pathlib import Path

import pytest
from rdkit import Chem

from annotate.io.records import NO_MOLBLOCK_END
from annotate.io.sdf import iter_sdf
from tests.helpers import molblock



def record(smiles: str, title: str, props: dict[str, bytes] | None = None, *, v3000: bool = False) -> bytes:
    items = b"".join(b"> <" + k.encode() + b">\n" + v + b"\n\n" for k, v in (props or {}).items())
    return molblock(smiles, title, v3000=v3000) + items + b"$$$$\n"


BROKEN = b"broken-one\n  junk header\n\n  3  2  0  0\nnot an atom line\n$$$$\n"


@pytest.fixture
def sdf_bytes() -> bytes:
    return b"".join(
        [
            record("CCO", "ethanol", {"mw": b"46.07", "note": b"line one\nline two"}),
            BROKEN,
            record("CC(=O)O", "acetic", {"note": b"caf\xe9 au lait"}),
            record("c1ccncc1", "pyridine-v3", {"mw": b"79.10"}, v3000=True),
        ]
    )


@pytest.fixture(params=["plain", "gzip"])
def sdf_path(request: pytest.FixtureRequest, tmp_path: Path, sdf_bytes: bytes) -> tuple[Path, bool]:
    if request.param == "gzip":
        path = tmp_path / "lib.sdf.gz"
        path.write_bytes(gzip.compress(sdf_bytes))
        return path, True
    path = tmp_path / "lib.sdf"
    path.write_bytes(sdf_bytes)
    return path, False


def test_every_record_comes_back_in_order_plain_and_gzipped(sdf_path: tuple[Path, bool]) -> None:
    path, gzipped = sdf_path
    records = list(iter_sdf(path, gzipped=gzipped))
    assert [r.title for r in records] == ["ethanol", "broken-one", "acetic", "pyridine-v3"]


def test_broken_record_is_an_error_that_keeps_its_title(sdf_path: tuple[Path, bool]) -> None:
    path, gzipped = sdf_path
    broken = list(iter_sdf(path, gzipped=gzipped))[1]
    assert broken.text is None
    assert broken.error == NO_MOLBLOCK_END
    assert broken.title == "broken-one"


def test_properties_are_strings_with_multiline_values(sdf_path: tuple[Path, bool]) -> None:
    path, gzipped = sdf_path
    first = next(iter_sdf(path, gzipped=gzipped))
    assert dict(first.properties) == {"mw": "46.07", "note": "line one\nline two"}
    assert first.error is None and first.warning is None


def test_molblocks_parse_back_to_the_written_molecules(sdf_path: tuple[Path, bool]) -> None:
    path, gzipped = sdf_path
    good = [r for r in iter_sdf(path, gzipped=gzipped) if r.error is None]
    smiles = [Chem.MolToSmiles(Chem.MolFromMolBlock(r.text)) for r in good]
    assert smiles == [Chem.CanonSmiles(s) for s in ("CCO", "CC(=O)O", "c1ccncc1")]


def test_v3000_record_is_kept_whole(sdf_path: tuple[Path, bool]) -> None:
    path, gzipped = sdf_path
    v3000 = list(iter_sdf(path, gzipped=gzipped))[3]
    assert "V3000" in v3000.text and "M  V30 BEGIN CTAB" in v3000.text
    assert v3000.text.rstrip().endswith("M  END")
    assert dict(v3000.properties) == {"mw": "79.10"}


def test_non_utf8_property_bytes_are_replaced_with_a_warning(sdf_path: tuple[Path, bool]) -> None:
    path, gzipped = sdf_path
    acetic = list(iter_sdf(path, gzipped=gzipped))[2]
    assert acetic.properties["note"] == "caf\ufffd au lait"
    assert acetic.warning == "non-UTF-8 bytes replaced in property 'note'"
    assert acetic.error is None


def test_last_record_without_terminator_is_kept_with_a_warning(tmp_path: Path) -> None:
    path = tmp_path / "unterminated.sdf"
    path.write_bytes(record("CCO", "a") + molblock("CCN", "b") + b"> <mw>\n45.08\n\n")
    records = list(iter_sdf(path))
    assert [r.title for r in records] == ["a", "b"]
    assert records[1].warning == "last record has no '$$$$' terminator"
    assert records[1].properties == {"mw": "45.08"}
    assert Chem.MolFromMolBlock(records[1].text) is not None


def test_last_record_cut_mid_molblock_is_an_error(tmp_path: Path) -> None:
    path = tmp_path / "truncated.sdf"
    path.write_bytes(record("CCO", "a") + molblock("CCCCl", "cut")[:70])
    records = list(iter_sdf(path))
    assert len(records) == 2
    assert records[1].error == NO_MOLBLOCK_END
    assert records[1].title == "cut"


def test_empty_record_between_terminators_is_an_error_not_a_drop(tmp_path: Path) -> None:
    path = tmp_path / "gap.sdf"
    path.write_bytes(record("CCO", "a") + b"\n$$$$\n" + record("CCN", "b") + b"\n\n")
    records = list(iter_sdf(path))
    assert [r.error for r in records] == [None, "unreadable record: empty", None]


def test_duplicate_property_keeps_first_value_and_says_so(tmp_path: Path) -> None:
    path = tmp_path / "dup.sdf"
    path.write_bytes(molblock("CCO", "a") + b"> <x>\n1\n\n> <x>\n2\n\n$$$$\n")
    (only,) = iter_sdf(path)
    assert only.properties == {"x": "1"}
    assert only.warning == "property 'x' given twice; kept the first value"


def test_crlf_line_endings_are_read_like_lf(tmp_path: Path) -> None:
    path = tmp_path / "crlf.sdf"
    path.write_bytes(record("CCO", "a", {"mw": b"46.07"}).replace(b"\n", b"\r\n"))
    (only,) = iter_sdf(path)
    assert only.properties == {"mw": "46.07"}
    assert "\r" not in only.text
    assert Chem.MolFromMolBlock(only.text) is not None


def test_empty_file_has_no_records(tmp_path: Path) -> None:
    path = tmp_path / "empty.sdf"
    path.write_bytes(b"")
    assert list(iter_sdf(path)) == []
