"""filter_library on a small split-annotate-export library, against hand-written expectations.

Literature pKa values are from memory (textbook values), used only to reason
about which side of the filter pH each centre sits (common practice: a centre
is charged when the pH is past its pKa).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import polars as pl
import pyarrow as pa
import pytest
import yaml
from rdkit import Chem

from annotate.export.filters import ION_CLASSES, FilterSpec
from annotate.io.library import LibrarySpec
from annotate.pipeline import annotate_chunk, gather_annotations, split_library
from annotate.pipeline.docking import DockingOptions
from annotate.pipeline.filtering import SortedPositions, filter_library, filter_specs, ph_values_with_filters
from annotate.qc.filters import FILTER_COUNTS_SCHEMA, read_filter_counts
from annotate.qc.report import OUTPUTS, write_qc
from annotate.settings import Settings
from tests.helpers import filter_outputs

ROOT = Path(__file__).resolve().parents[1]
SCHEMA = yaml.safe_load((ROOT / "workflow" / "schemas" / "config.schema.yaml").read_text())
LIBRARY = """CC(=O)O acetic
CCN ethylamine
NCC(=O)O glycine
c1ccccc1 benzene
C[N+](C)(C)C.[Cl-] tetramethylammonium
OC(=O)CCC(=O)O succinic
NCCCCCCN hexanediamine
C1CC broken
"""
FILTERS = [
    # the shipped default: net charge -1..1 at pH 7.4
    *SCHEMA["properties"]["filters"]["default"],
    {"name": "anions_at_7.4", "ph": 7.4, "charge_max": -1},
    {"name": "permanent", "ph": 7.4, "classes": ["permanent"]},
    {"name": "neutral_at_2", "ph": 2.0, "classes": ["neutral"]},
]
EXPECTED = {
    "charge_-1_to_1_at_7.4": {
        "acetic",  # pKa 4.76: carboxylate, -1
        "ethylamine",  # pKaH 10.7: ammonium, +1
        "glycine",  # zwitterion, net 0
        "benzene",  # nothing to ionize
        "tetramethylammonium",  # quaternary N, +1
        # succinic acid (pKa 4.2 and 5.6) is -2 and hexanediamine (pKaH about 10-11) +2: both out
    },
    "anions_at_7.4": {"acetic", "succinic"},
    "permanent": {"tetramethylammonium"},
    # pH 2 is below both acids' pKa: they stay protonated; glycine (COOH pKa 2.3) is still mostly +1
    "neutral_at_2": {"acetic", "succinic", "benzene"},
}


@pytest.fixture(scope="module")
def library(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """Annotated Parquet and docking chunk of the library, made the way the workflow makes them."""
    folder = tmp_path_factory.mktemp("lib")
    (folder / "lib.smi").write_text(LIBRARY)
    split_library(LibrarySpec(name="lib", path=folder / "lib.smi"), folder / "chunks", chunk_size=100)
    chunk = folder / "chunks" / "000000.parquet"
    settings = Settings(ph=tuple(ph_values_with_filters([7.4], filter_specs(FILTERS))))
    annotated = folder / "annotated" / "000000.parquet"
    annotate_chunk(chunk, annotated, settings=settings, docking_out=folder / "docking.parquet", docking=DockingOptions())
    gather_annotations(folder / "chunks", [annotated], folder / "annotated.parquet")
    return {"annotated": folder / "annotated.parquet", "docking": folder / "docking.parquet"}


def test_kept_molecules_match_hand_expectations(library: dict[str, Path], tmp_path: Path) -> None:
    specs = filter_specs(FILTERS)
    kept = filter_library(
        library["annotated"],
        [library["docking"]],
        specs=specs,
        parquet=filter_outputs(tmp_path, specs),
        sdf=filter_outputs(tmp_path, specs, "sdf"),
        qc_table=tmp_path / "filters.tsv"
    )
    assert kept == {name: len(ids) for name, ids in EXPECTED.items()}
    for name, ids in EXPECTED.items():
        assert set(pl.read_parquet(tmp_path / f"{name}.parquet")["id"]) == ids, name
        sdf = list(Chem.SDMolSupplier(str(tmp_path / f"{name}.sdf")))
        assert {m.GetProp("_Name") for m in sdf} == ids, name
        ph = next(s.ph for s in specs if s.name == name)
        assert all(float(m.GetProp("ionotate_ph")) == ph for m in sdf)
        assert all(Chem.GetFormalCharge(m) == int(m.GetProp("ionotate_charge")) for m in sdf)
    qc = read_filter_counts(tmp_path / "filters.tsv")
    assert qc["filter"].to_list() == [f["name"] for f in FILTERS]
    assert qc["kept"].to_list() == qc["structures"].to_list() == [len(EXPECTED[f["name"]]) for f in FILTERS]
    assert qc["annotated"].to_list() == [7] * len(FILTERS), "eight records, one unparsable"
    assert qc.row(0, named=True) | {"kept": None, "structures": None} == {
        "filter": "charge_-1_to_1_at_7.4",
        "ph": 7.4,
        "charge_min": -1,
        "charge_max": 1,
        "classes": "any",
        "min_neutral_fraction": None,
        "kept": None,
        "annotated": 7,
        "structures": None,
    }


def test_summary_json_carries_the_filter_counts(library: dict[str, Path], tmp_path: Path) -> None:
    specs = filter_specs(FILTERS[:1])
    filter_library(
        library["annotated"],
        [library["docking"]],
        specs=specs,
        parquet=filter_outputs(tmp_path, specs),
        sdf=filter_outputs(tmp_path, specs, "sdf"),
        qc_table=tmp_path / "f.tsv"
    )
    outputs = {name: tmp_path / f"{name}.out" for name in OUTPUTS}
    write_qc(library["annotated"], outputs=outputs, filters=tmp_path / "f.tsv")
    summary = json.loads(outputs["summary"].read_text())
    assert summary["filters"] == [
        {"filter": "charge_-1_to_1_at_7.4", "ph": 7.4, "kept": 5, "annotated": 7, "structures": 5}
    ]


def test_no_filters_still_writes_an_empty_qc_table(library: dict[str, Path], tmp_path: Path) -> None:
    assert (
        filter_library(
            library["annotated"], [library["docking"]], specs=[], parquet=[], sdf=[], qc_table=tmp_path / "f.tsv"
        )
        == {}
    )
    table = read_filter_counts(tmp_path / "f.tsv")
    assert table.height == 0 and table.schema == pl.Schema(FILTER_COUNTS_SCHEMA)


def test_filter_ph_values_join_the_run() -> None:
    specs = filter_specs(FILTERS)
    assert ph_values_with_filters([5.0], specs) == [5.0, 7.4, 2.0]
    assert ph_values_with_filters([7.4, 2.0], specs) == [7.4, 2.0]
    assert ph_values_with_filters([7.4], []) == [7.4]


def test_config_entries_become_specs() -> None:
    (default,) = filter_specs(SCHEMA["properties"]["filters"]["default"])
    assert default == FilterSpec("charge_-1_to_1_at_7.4", ph=7.4, charge_min=-1, charge_max=1)
    with pytest.raises(ValueError, match=r"repeated: \['x'\]"):
        filter_specs([{"name": "x", "ph": 7.4}, {"name": "x", "ph": 5.0}])
    with pytest.raises(ValueError, match="charge_min"):
        filter_specs([{"name": "x", "ph": 7.4, "charge_min": 2, "charge_max": 1}])


def test_filter_schema_matches_the_package() -> None:
    item = SCHEMA["properties"]["filters"]["items"]
    assert set(item["properties"]["classes"]["items"]["enum"]) == ION_CLASSES
    for key, spec in item["properties"].items():
        assert "description" in spec, key
        assert "default" in spec or key in item["required"], key


def test_structures_read_in_small_batches_are_the_same(
    library: dict[str, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    specs = filter_specs(FILTERS)
    args = {"specs": specs, "qc_table": tmp_path / "f.tsv"}
    out = tmp_path / "whole"
    filter_library(
        library["annotated"],
        [library["docking"]],
        parquet=filter_outputs(out, specs),
        sdf=filter_outputs(out, specs, "sdf"),
        **args,
    )
    monkeypatch.setattr("annotate.pipeline.filtering._DOCKING_BATCH_ROWS", 1)
    out = tmp_path / "batched"
    filter_library(
        library["annotated"],
        [library["docking"]],
        parquet=filter_outputs(out, specs),
        sdf=filter_outputs(out, specs, "sdf"),
        **args,
    )
    for spec in specs:
        name = f"{spec.name}.sdf"
        assert (tmp_path / "batched" / name).read_text() == (tmp_path / "whole" / name).read_text(), name


@pytest.mark.parametrize("seed", range(5))
def test_sorted_positions_answer_like_a_set(seed: int) -> None:
    rng = np.random.default_rng(seed)
    kept = np.flatnonzero(rng.random(500) < rng.random())  # ascending, any density
    cuts = np.sort(rng.integers(0, kept.size + 1, size=4))
    stream = iter(pa.record_batch([pa.array(p, pa.int64())], names=["input_index"]) for p in np.split(kept, cuts))
    positions = SortedPositions(stream)
    asked = np.sort(rng.integers(0, 520, size=300))  # ascending with repeats, like docking rows
    parts = np.split(asked, np.sort(rng.integers(0, 300, size=6)))
    found = np.concatenate([positions.contains(part) for part in parts])
    assert found.tolist() == [int(a) in set(kept.tolist()) for a in asked]


def test_docking_rows_out_of_input_order_fail() -> None:
    positions = SortedPositions(iter([pa.record_batch([pa.array([1, 2, 3], pa.int64())], names=["input_index"])]))
    positions.contains(np.array([2, 2, 3]))
    with pytest.raises(ValueError, match="not in input order"):
        positions.contains(np.array([1]))
    with pytest.raises(ValueError, match="not in input order"):
        SortedPositions(iter(())).contains(np.array([4, 3]))
