"""QC tables, JSON summaries and plots, on a small hand-made annotated library."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import polars as pl
import pyarrow.parquet as pq
import pytest
from polars.testing import assert_frame_equal

from annotate.io.schema import annotation_table, output_schema, run_metadata
from annotate.qc import tables
from annotate.qc.plots import charge_figure, pka_figure, plot_qc
from annotate.qc.report import OUTPUTS, TABLES, write_qc
from annotate.results import MoleculeResult, PhState, Site, Species, Term
from annotate.settings import Settings


def site(group: str, kind: str, pka: float) -> Site:
    return Site(atom=0, kind=kind, group=group, category="c", pka=pka, pka_sd=0.5, terms=(Term("base", pka),))


def states(charge_74: int, charge_2: int) -> tuple[PhState, ...]:
    return tuple(
        PhState(ph=ph, charge_mean=float(c), species=(Species("X", c, 1.0, ()),))
        for ph, c in ((7.4, charge_74), (2.0, charge_2))
    )


RESULTS = [
    MoleculeResult(
        "r0",
        "ok",
        (),
        "A",
        (site("carboxylic acid", "acid", 4.0), site("amine", "base", 10.0)),
        (4.0, 10.0),
        states(0, 1),
    ),
    MoleculeResult("r1", "ok", (), "B", (site("carboxylic acid", "acid", 5.0),), (5.0,), states(-1, 0)),
    MoleculeResult("r2", "warning", ("reason a", "reason b"), "C", (), (), states(0, 0)),
    MoleculeResult("r3", "error", ("unparsable structure",)),
    MoleculeResult("r4", "error", ("unparsable structure",)),
]


def write_annotated(path: Path, results: list[MoleculeResult]) -> Path:
    table = annotation_table(
        results, library="lib", input_index=list(range(len(results))), ids=[r.id for r in results]
    )
    meta = run_metadata(
        library="lib", source={"path": "x.sdf"}, settings=Settings(ph=(7.4, 2.0)), version="0.1.0"
    )
    pq.write_table(table.cast(output_schema([], metadata=meta)), path)
    return path


@pytest.fixture
def annotated(tmp_path: Path) -> pl.LazyFrame:
    return pl.scan_parquet(write_annotated(tmp_path / "annotated.parquet", RESULTS))


def test_counts(annotated: pl.LazyFrame) -> None:
    assert tables.counts(annotated).to_dicts() == [{"read": 5, "ok": 2, "warning": 1, "error": 2}]


def test_errors_by_reason_splits_joined_messages(annotated: pl.LazyFrame) -> None:
    assert tables.errors_by_reason(annotated).rows() == [
        ("error", "unparsable structure", 2),
        ("warning", "reason a", 1),
        ("warning", "reason b", 1),
    ]


def test_charge_by_ph_counts_dominant_charges_of_annotated_rows(annotated: pl.LazyFrame) -> None:
    expected = pl.DataFrame(
        {
            "ph": [2.0, 2.0, 7.4, 7.4],
            "charge": [0, 1, -1, 0],
            "n": [2, 1, 1, 2],
            "fraction": [2 / 3, 1 / 3, 1 / 3, 2 / 3],
        },
        schema={"ph": pl.Float64, "charge": pl.Int32, "n": pl.Int64, "fraction": pl.Float64},
    )
    assert_frame_equal(tables.charge_by_ph(annotated), expected)


def test_group_frequency(annotated: pl.LazyFrame) -> None:
    assert tables.group_frequency(annotated).rows() == [
        ("carboxylic acid", "acid", 2, 2),
        ("amine", "base", 1, 1),
    ]


def test_pka_by_group_statistics(annotated: pl.LazyFrame) -> None:
    acid = tables.pka_by_group(annotated).row(0, named=True)
    assert (acid["group"], acid["n"], acid["mean"], acid["min"], acid["max"]) == (
        "carboxylic acid",
        2,
        4.5,
        4.0,
        5.0,
    )
    assert acid["sd"] == pytest.approx(math.sqrt(0.5))  # sample sd of 4.0 and 5.0
    assert (acid["q10"], acid["q25"], acid["median"], acid["q90"]) == pytest.approx((4.1, 4.25, 4.5, 4.9))
    amine = tables.pka_by_group(annotated).row(1, named=True)
    assert (amine["n"], amine["mean"], amine["sd"]) == (1, 10.0, None)


def test_sites_per_molecule(annotated: pl.LazyFrame) -> None:
    assert tables.sites_per_molecule(annotated).rows() == [(0, 1), (1, 1), (2, 1)]


def qc_paths(directory: Path) -> dict[str, Path]:
    return {
        n: directory / f"{n}.{'json' if n in ('summary', 'settings_and_versions') else 'tsv'}"
        for n in OUTPUTS
    }


def test_write_qc_writes_tsv_and_json(tmp_path: Path) -> None:
    source = write_annotated(tmp_path / "annotated.parquet", RESULTS)
    paths = qc_paths(tmp_path / "qc")
    write_qc(source, outputs=paths)
    counts = pl.read_csv(paths["counts"], separator="\t")
    assert counts.to_dicts() == [{"read": 5, "ok": 2, "warning": 1, "error": 2}]
    summary = json.loads(paths["summary"].read_text())
    assert summary["records"] == {"read": 5, "ok": 2, "warning": 1, "error": 2}
    assert summary["sites"] == {"total": 3, "molecules_with_sites": 2, "groups_seen": 2}
    assert summary["dominant_charge_by_ph"] == {"2": {"0": 2, "1": 1}, "7.4": {"-1": 1, "0": 2}}
    assert "estimates" in summary["notice"]
    run = json.loads(paths["settings_and_versions"].read_text())
    assert run["settings"]["ph"] == [7.4, 2.0]
    assert run["source"] == {"path": "x.sdf"}
    assert set(run["versions"]) >= {"ionotate", "python", "rdkit", "polars", "pyarrow"}


def test_write_qc_insists_on_its_full_set_of_outputs(tmp_path: Path) -> None:
    source = write_annotated(tmp_path / "annotated.parquet", RESULTS)
    paths = qc_paths(tmp_path / "qc")
    del paths["counts"]
    with pytest.raises(ValueError, match=r"missing \['counts'\]"):
        write_qc(source, outputs=paths)


def test_empty_library_gives_typed_empty_tables(tmp_path: Path) -> None:
    source = write_annotated(tmp_path / "annotated.parquet", [])
    paths = qc_paths(tmp_path / "qc")
    write_qc(source, outputs=paths)
    assert pl.read_csv(paths["counts"], separator="\t").to_dicts() == [
        {"read": 0, "ok": 0, "warning": 0, "error": 0}
    ]
    assert paths["pka_by_group"].read_text().splitlines() == [
        "group\tkind\tn\tmean\tsd\tmin\tq10\tq25\tmedian\tq75\tq90\tmax"
    ]
    assert tables.charge_by_ph(pl.scan_parquet(source)).schema == {
        "ph": pl.Float64,
        "charge": pl.Int32,
        "n": pl.Int64,
        "fraction": pl.Float64,
    }
    plot_qc(source, charge_plot=tmp_path / "c.png", pka_plot=tmp_path / "p.png")
    assert (tmp_path / "c.png").read_bytes()[:4] == b"\x89PNG"


def test_charge_figure_draws_one_bar_per_charge_and_ph(annotated: pl.LazyFrame) -> None:
    fig = charge_figure(tables.charge_by_ph(annotated))
    heights = sorted(round(p.get_height(), 6) for p in fig.axes[0].patches)
    # charges -1, 0, +1 at pH 2.0 and 7.4; absent combinations are drawn as zero-height bars
    assert heights == sorted(round(h, 6) for h in [0.0, 2 / 3, 1 / 3, 1 / 3, 2 / 3, 0.0])


def test_pka_figure_has_one_panel_per_group(annotated: pl.LazyFrame) -> None:
    fig = pka_figure(tables.site_pkas(annotated))
    titles = [ax.get_title() for ax in fig.axes if ax.get_visible()]
    assert titles == ["carboxylic acid (acid, n=2)", "amine (base, n=1)"]


def test_plot_qc_writes_png_files(tmp_path: Path) -> None:
    source = write_annotated(tmp_path / "annotated.parquet", RESULTS)
    plot_qc(source, charge_plot=tmp_path / "c.png", pka_plot=tmp_path / "p.png")
    for name in ("c.png", "p.png"):
        assert (tmp_path / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def many_results(n: int) -> list[MoleculeResult]:
    """A library big enough for several batches, with repeated pKa values (as estimates repeat)."""
    # the fourth site repeats the first group: more sites than molecules for it
    groups = [("carboxylic acid", "acid"), ("amine", "base"), ("phenol", "acid"), ("carboxylic acid", "acid")]
    results = []
    for i in range(n):
        if i % 11 == 5:
            results.append(MoleculeResult(f"e{i}", "error", ("unparsable structure",)))
            continue
        sites = tuple(
            site(group, kind, round(3.0 + ((i * 7 + k * 5) % 13) * 0.37, 2))
            for k, (group, kind) in enumerate(groups[: i % 5])
        )
        charges = (i % 3 - 1, i % 2)
        results.append(MoleculeResult(f"m{i}", "ok", (), "C", sites, (), states(*charges)))
    return results


def reference_tables(frame: pl.LazyFrame) -> dict[str, pl.DataFrame]:
    """Independent oracle: the same tables as Polars' own aggregations over whole columns."""
    annotated = frame.filter(pl.col("status") != "error")
    sites = (
        annotated.select("input_index", "sites").explode("sites").unnest("sites").filter(pl.col("group").is_not_null())
    )
    pka = pl.col("pka")
    return {
        "group_frequency": sites.group_by("group", "kind")
        .agg(
            pl.len().cast(pl.Int64).alias("n_sites"),
            pl.col("input_index").n_unique().cast(pl.Int64).alias("n_molecules"),
        )
        .sort(["n_sites", "group", "kind"], descending=[True, False, False])
        .collect(),
        "pka_by_group": sites.group_by("group", "kind")
        .agg(
            pl.len().cast(pl.Int64).alias("n"),
            pka.mean().alias("mean"),
            pka.std().alias("sd"),
            pka.min().alias("min"),
            *(pka.quantile(q, interpolation="linear").alias(name) for name, q in tables._QUANTILES.items()),
            pka.max().alias("max"),
        )
        .sort(["n", "group", "kind"], descending=[True, False, False])
        .collect(),
        "charge_by_ph": annotated.select("ph_states")
        .explode("ph_states")
        .unnest("ph_states")
        .group_by("ph", "charge")
        .agg(pl.len().cast(pl.Int64).alias("n"))
        .with_columns((pl.col("n") / pl.col("n").sum().over("ph")).alias("fraction"))
        .sort("ph", "charge")
        .collect(),
    }


def test_tables_streamed_in_small_batches_equal_whole_column_aggregations(tmp_path: Path) -> None:
    source = write_annotated(tmp_path / "annotated.parquet", many_results(200))
    streamed = tables.compute(source, {**TABLES, "site_pkas": tables.site_pkas}, batch_rows=7)
    expected = reference_tables(pl.scan_parquet(source))
    assert_frame_equal(streamed["group_frequency"], expected["group_frequency"])
    acid = streamed["group_frequency"].row(0, named=True)
    assert acid["group"] == "carboxylic acid" and acid["n_sites"] > acid["n_molecules"]
    assert_frame_equal(streamed["charge_by_ph"], expected["charge_by_ph"])
    # counts, min, max and quantiles exactly; mean and sd are sums in another order (last bits)
    assert_frame_equal(streamed["pka_by_group"], expected["pka_by_group"], check_exact=False, rel_tol=1e-12)
    exact = ["group", "kind", "n", "min", *tables._QUANTILES, "max"]
    assert_frame_equal(streamed["pka_by_group"].select(exact), expected["pka_by_group"].select(exact))
    whole = {name: query(pl.scan_parquet(source)) for name, query in TABLES.items()}
    for name, table in whole.items():
        assert_frame_equal(streamed[name], table, check_exact=False, rel_tol=1e-12)
    assert streamed["site_pkas"]["n"].sum() == expected["pka_by_group"]["n"].sum()


@pytest.mark.parametrize("seed", range(5))
def test_weighted_statistics_match_polars_on_the_expanded_values(seed: int) -> None:
    rng = np.random.default_rng(seed)
    values = np.round(rng.normal(7.0, 2.5, size=int(rng.integers(1, 300))), 1)
    distinct, counts = np.unique(values, return_counts=True)
    found = tables.weighted_statistics(distinct, counts)
    column = pl.Series(values)
    assert found["min"] == column.min() and found["max"] == column.max()
    for name, q in tables._QUANTILES.items():
        assert found[name] == column.quantile(q, interpolation="linear"), name
    assert found["mean"] == pytest.approx(column.mean(), rel=1e-12)
    if len(values) > 1:
        assert found["sd"] == pytest.approx(column.std(), rel=1e-9)
    else:
        assert found["sd"] is None


def test_pka_histograms_weigh_each_value_by_its_count(tmp_path: Path) -> None:
    source = write_annotated(tmp_path / "annotated.parquet", many_results(60))
    counted = tables.compute(source, {"pkas": tables.site_pkas})["pkas"]
    fig = pka_figure(counted)
    for ax in (a for a in fig.axes if a.get_visible()):
        n = int(ax.get_title().rsplit("n=", 1)[1].rstrip(")"))
        assert sum(p.get_height() for p in ax.patches) == n


def test_every_qc_output_has_its_report_caption() -> None:
    """workflow/rules/qc.smk derives its outputs from OUTPUTS; each needs workflow/report/<name>.rst."""
    from annotate.qc.report import OUTPUTS

    captions = Path(__file__).resolve().parents[1] / "workflow" / "report"
    assert [name for name in OUTPUTS if not (captions / f"{name}.rst").is_file()] == []
