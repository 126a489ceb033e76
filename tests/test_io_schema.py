"""The output contract: MoleculeResult -> Arrow, declared schema, metadata."""

from __future__ import annotations

import json
from pathlib import Path

import polars as pl
import pyarrow as pa
import pytest

from annotate.io.schema import (
    ANNOTATION_SCHEMA,
    NOTICE,
    annotation_table,
    carried_name,
    output_schema,
    read_run_metadata,
    result_row,
    run_metadata,
)
from annotate.results import MoleculeResult, PhState, Site, Species, Term
from annotate.settings import Settings
from annotate.tables import rule_table_checksums

SITE = Site(
    atom=3,
    kind="acid",
    group="carboxylic acid",
    category="oxy acid",
    pka=4.2,
    pka_sd=0.3,
    terms=(Term("base value", 4.0), Term("neighbour", 0.2)),
)
STATE = PhState(
    ph=7.4,
    charge_mean=-0.98,
    species=(Species("CC(=O)[O-]", -1, 0.98, (False,)), Species("CC(=O)O", 0, 0.02, (True,))),
)
OK = MoleculeResult(
    id="a", status="ok", parent_smiles="CC(=O)O", sites=(SITE,), macro_pka=(9.0, 4.2), ph_states=(STATE,)
)
ERROR = MoleculeResult(id="b", status="error", messages=("unparsable structure", "second reason"))


def test_ok_result_row_holds_sites_sorted_macro_pka_and_dominant_species() -> None:
    row = result_row(OK)
    assert row["status"] == "ok" and row["message"] is None
    assert row["sites"] == [
        {
            "atom": 3,
            "kind": "acid",
            "group": "carboxylic acid",
            "pka": 4.2,
            "pka_sd": 0.3,
            "explain": SITE.explain,
        }
    ]
    assert row["macro_pka"] == [4.2, 9.0]
    (state,) = row["ph_states"]
    assert (state["ph"], state["charge_mean"], state["charge"], state["smiles"], state["fraction"]) == (
        7.4,
        -0.98,
        -1,
        "CC(=O)[O-]",
        0.98,
    )
    assert [s["smiles"] for s in state["species"]] == ["CC(=O)[O-]", "CC(=O)O"]


def test_error_row_carries_reasons_and_no_chemistry() -> None:
    row = result_row(ERROR)
    assert row["message"] == "unparsable structure; second reason"
    assert row["parent_smiles"] is None and row["sites"] is None
    assert row["macro_pka"] is None and row["ph_states"] is None


def test_annotation_table_has_exactly_the_declared_schema() -> None:
    table = annotation_table([OK, ERROR], library="lib", input_index=[0, 1], ids=["a", "b"])
    assert table.schema.equals(ANNOTATION_SCHEMA)
    assert table.column("library").to_pylist() == ["lib", "lib"]
    assert table.column("status").to_pylist() == ["ok", "error"]


def test_annotation_table_refuses_mismatched_lengths() -> None:
    with pytest.raises(ValueError, match="2 results for 1 indices"):
        annotation_table([OK, ERROR], library="lib", input_index=[0], ids=["a"])


def test_declared_types_as_polars_sees_them() -> None:
    schema = pl.from_arrow(ANNOTATION_SCHEMA.empty_table()).schema
    assert schema["input_index"] == pl.Int64
    assert schema["sites"] == pl.List(
        pl.Struct(
            {
                "atom": pl.Int32,
                "kind": pl.String,
                "group": pl.String,
                "pka": pl.Float64,
                "pka_sd": pl.Float64,
                "explain": pl.String,
            }
        )
    )
    species = pl.List(pl.Struct({"smiles": pl.String, "charge": pl.Int32, "fraction": pl.Float64}))
    assert schema["ph_states"] == pl.List(
        pl.Struct(
            {
                "ph": pl.Float64,
                "charge_mean": pl.Float64,
                "charge": pl.Int32,
                "smiles": pl.String,
                "fraction": pl.Float64,
                "species": species,
            }
        )
    )


def test_run_metadata_round_trips_through_a_schema(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    Path("rules.tsv").write_text("name\n")
    settings = Settings(ph=(7.4, 2.0), user_rules=Path("rules.tsv"))
    meta = run_metadata(library="lib", source={"path": "x.sdf"}, settings=settings, version="9.9")
    back = read_run_metadata(output_schema([], metadata=meta))
    assert back["notice"] == NOTICE
    assert json.loads(back["settings"])["ph"] == [7.4, 2.0]
    assert json.loads(back["settings"])["user_rules"] == "rules.tsv"
    assert (back["library"], back["version"]) == ("lib", "9.9")
    assert json.loads(back["rule_tables"]) == rule_table_checksums(Path("rules.tsv"))


def test_run_metadata_names_the_checksum_of_a_user_rule_file(tmp_path: Path) -> None:
    rules = tmp_path / "mine.tsv"
    rules.write_text("name\n")
    meta = run_metadata(library="lib", source={}, settings=Settings(user_rules=rules), version="9.9")
    sums = json.loads(read_run_metadata(output_schema([], metadata=meta))["rule_tables"])
    assert sums == rule_table_checksums(rules) and "user_rules/mine.tsv" in sums
    assert "data/groups.tsv" in sums


def test_output_schema_appends_carried_columns_after_the_contract() -> None:
    schema = output_schema([pa.field("mw", pa.string())])
    assert schema.names == [*ANNOTATION_SCHEMA.names, "mw"]
    assert carried_name("status") == "input_status" and carried_name("mw") == "mw"
