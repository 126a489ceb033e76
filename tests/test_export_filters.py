"""Charge filters on a small annotated library, checked against hand-written expectations.

Literature pKa values below are from memory (textbook values), used only to
reason about which side of pH 1 or 7.4 each centre sits; the filter output is
checked against these hand expectations, not against the engine's numbers.
"""

from __future__ import annotations

from functools import partial
from pathlib import Path

import polars as pl
import pyarrow.parquet as pq
import pytest

from annotate import Settings, annotate_smiles
from annotate.export.filters import FilterSpec, apply_filters, filter_expression, ionization_class
from annotate.io.schema import annotation_table, read_run_metadata, run_metadata
from annotate.io.tables import parquet_batches
from tests.helpers import filter_outputs as outputs

LIBRARY = {
    "acetic_acid": "CC(=O)O",  # pKa 4.76 (from memory)
    "ethylamine": "CCN",  # pKaH 10.7 (from memory)
    "glycine": "NCC(=O)O",  # pKa 2.3 (COOH) and 9.6 (NH3+) (from memory)
    "benzene": "c1ccccc1",  # no ionizable group
    "tetramethylammonium": "C[N+](C)(C)C.[Cl-]",  # quaternary N: charged at any pH
    "pyridine": "c1ccncc1",  # pKaH 5.2 (from memory)
    "phenol": "Oc1ccccc1",  # pKa 10.0 (from memory)
    "ibuprofen": "CC(C)Cc1ccc(cc1)C(C)C(=O)O",  # pKa about 4.5 (from memory)
    "broken": "C1CC",  # unparsable: an error row that no filter may keep
}
SETTINGS = Settings(ph=(1.0, 7.4))

# Hand expectations, one chemical reason each (reasoning from the pKa values above,
# a centre is charged when the pH is past its pKa; common practice).
EXPECTED = {
    # pH 7.4: only the groups with pKa far from 7.4 on the neutral side stay uncharged
    FilterSpec("neutral_74", ph=7.4, classes=frozenset({"neutral"})): {
        "benzene",  # nothing to ionize
        "pyridine",  # pKaH 5.2 < 7.4: free base
        "phenol",  # pKa 10.0 > 7.4: stays protonated
    },
    FilterSpec("net_zero_74", ph=7.4, charge_min=0, charge_max=0): {
        "benzene",
        "pyridine",
        "phenol",
        "glycine",  # zwitterion NH3+/COO-: net charge 0 though charged
    },
    FilterSpec("anions_74", ph=7.4, charge_max=-1): {
        "acetic_acid",  # pKa 4.76 < 7.4: carboxylate
        "ibuprofen",  # pKa about 4.5 < 7.4: carboxylate
    },
    FilterSpec("acid_class_74", ph=7.4, classes=frozenset({"acid"})): {"acetic_acid", "ibuprofen"},
    FilterSpec("titratable_cations_74", ph=7.4, charge_min=1, classes=frozenset({"base"})): {
        "ethylamine",  # pKaH 10.7 > 7.4: ammonium; tetramethylammonium is excluded as permanent
    },
    FilterSpec("permanent_74", ph=7.4, classes=frozenset({"permanent"})): {"tetramethylammonium"},
    FilterSpec("zwitterion_74", ph=7.4, classes=frozenset({"zwitterion"})): {"glycine"},
    FilterSpec("mostly_uncharged_74", ph=7.4, min_neutral_fraction=0.9): {
        "benzene",
        "pyridine",  # 2 units above pKaH 5.2: about 99% free base
        "phenol",  # 2.6 units below pKa 10.0: over 99% neutral
        "glycine",  # its dominant zwitterion has net charge 0, which this measure counts
    },
    FilterSpec("cations_1", ph=1.0, charge_min=1): {
        "ethylamine",  # ammonium
        "glycine",  # pH 1 < COOH pKa 2.3: acid still protonated, NH3+ leaves net +1
        "tetramethylammonium",  # permanent
        "pyridine",  # pH 1 < pKaH 5.2: pyridinium
    },
    FilterSpec("neutral_1", ph=1.0, classes=frozenset({"neutral"})): {
        "acetic_acid",  # pH 1 < pKa 4.76: protonated acid
        "benzene",
        "phenol",
        "ibuprofen",  # pH 1 < pKa about 4.5: protonated acid
    },
}


@pytest.fixture(scope="module")
def annotated(tmp_path_factory: pytest.TempPathFactory) -> Path:
    ids = list(LIBRARY)
    results = [annotate_smiles(smi, id=name, settings=SETTINGS) for name, smi in LIBRARY.items()]
    table = annotation_table(results, library="demo", input_index=range(len(ids)), ids=ids)
    meta = run_metadata(library="demo", source={"path": "demo.smi"}, settings=SETTINGS, version="test")
    path = tmp_path_factory.mktemp("annotated") / "annotated.parquet"
    pq.write_table(table.replace_schema_metadata(meta), path)
    return path


def test_filters_match_hand_expectations(annotated: Path, tmp_path: Path) -> None:
    counts = apply_filters(annotated, list(EXPECTED), outputs(tmp_path, EXPECTED))
    for spec, expected in EXPECTED.items():
        kept = pl.read_parquet(tmp_path / f"{spec.name}.parquet")
        assert set(kept["id"]) == expected, spec.name
        assert counts[spec.name] == len(expected)


def test_filtered_files_keep_columns_order_and_run_metadata(annotated: Path, tmp_path: Path) -> None:
    spec = FilterSpec("net_zero", ph=7.4, charge_min=0, charge_max=0)
    apply_filters(annotated, [spec], outputs(tmp_path, [spec]))
    out = tmp_path / "net_zero.parquet"
    assert pq.read_schema(out).remove_metadata().equals(pq.read_schema(annotated).remove_metadata())
    kept = pl.read_parquet(out)
    assert kept["input_index"].is_sorted() and kept.height > 1
    meta = read_run_metadata(pq.read_schema(out))
    assert "Verify" in meta["notice"] and '"charge_max": 0' in meta["filter"]
    assert [p.name for p in tmp_path.iterdir()] == ["net_zero.parquet"], "no temporary files left behind"


def test_filter_keeping_nothing_writes_an_empty_file(annotated: Path, tmp_path: Path) -> None:
    counts = apply_filters(annotated, [d := FilterSpec("dications", ph=7.4, charge_min=2)], outputs(tmp_path, [d]))
    assert counts == {"dications": 0}
    out = pq.read_table(tmp_path / "dications.parquet")
    assert out.num_rows == 0 and out.schema.names == pq.read_schema(annotated).names


def test_expression_works_on_a_lazy_scan(annotated: Path) -> None:
    spec = FilterSpec("anions", ph=7.4, charge_max=-1, classes=frozenset({"acid"}))
    kept = pl.scan_parquet(annotated).filter(filter_expression(spec)).collect(engine="streaming")
    assert set(kept["id"]) == EXPECTED[FilterSpec("anions_74", ph=7.4, charge_max=-1)]


def test_uncomputed_ph_is_an_error(annotated: Path, tmp_path: Path) -> None:
    with pytest.raises(ValueError, match="not computed"):
        apply_filters(annotated, [x := FilterSpec("x", ph=5.0)], outputs(tmp_path, [x]))
    assert not any(tmp_path.iterdir())


def test_bad_specs_are_refused() -> None:
    with pytest.raises(ValueError, match="unknown class"):
        FilterSpec("x", ph=7.4, classes=frozenset({"cation"}))
    with pytest.raises(ValueError, match="charge_min"):
        FilterSpec("x", ph=7.4, charge_min=1, charge_max=0)
    with pytest.raises(ValueError, match="plain file name"):
        FilterSpec("../x", ph=7.4)


@pytest.mark.parametrize(
    ("parent", "sites", "dominant", "expected"),
    [
        # nitro drawn as a bonded +/- pair is one neutral group (common practice)
        ("O=[N+]([O-])c1ccccc1", [], "O=[N+]([O-])c1ccccc1", "neutral"),
        # betaine: quaternary N stays charged whatever the carboxylate does
        ("C[N+](C)(C)CC(=O)[O-]", [], "C[N+](C)(C)CC(=O)[O-]", "permanent"),
        # a charge on a site atom of the parent is titratable, not permanent
        ("CC(=O)[O-]", [3], "CC(=O)[O-]", "acid"),
        ("NCC(=O)O", [0, 4], "[NH3+]CC(=O)[O-]", "zwitterion"),
        ("NCC(=O)O", [0, 4], "[NH3+]CC(=O)O", "base"),
    ],
)
def test_ionization_class(parent: str, sites: list[int], dominant: str, expected: str) -> None:
    assert ionization_class(parent, sites, dominant) == expected


def test_filters_read_in_small_batches_write_the_same_rows(
    annotated: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    specs = list(EXPECTED)
    whole = apply_filters(annotated, specs, outputs(tmp_path / "whole", specs))
    monkeypatch.setattr("annotate.export.filters.parquet_batches", partial(parquet_batches, batch_rows=2))
    assert apply_filters(annotated, specs, outputs(tmp_path / "batched", specs)) == whole
    for spec in specs:
        one, batched = (pq.read_table(tmp_path / d / f"{spec.name}.parquet") for d in ("whole", "batched"))
        assert batched.equals(one, check_metadata=True), spec.name


def test_uncomputed_ph_seen_only_after_writing_still_leaves_no_file(
    annotated: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr("annotate.export.filters.parquet_batches", partial(parquet_batches, batch_rows=2))
    specs = [FilterSpec("fine", ph=7.4), FilterSpec("x", ph=5.0)]
    with pytest.raises(ValueError, match="pH 5.0 was not computed"):
        apply_filters(annotated, specs, outputs(tmp_path, specs))
    assert not any(tmp_path.iterdir())

