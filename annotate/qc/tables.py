"""QC tables of one annotated library, each one lazy Polars query over the Parquet.

Every function takes the annotated file as a LazyFrame and returns a typed
DataFrame; an empty library gives empty tables with the same columns.
"""

from __future__ import annotations

import polars as pl

_COUNT = pl.Int64


def counts(annotated: pl.LazyFrame) -> pl.DataFrame:
    """Records read, and how many ended ok, with a warning, or as an error."""
    status = pl.col("status")
    return annotated.select(
        pl.len().cast(_COUNT).alias("read"),
        *((status == s).sum().cast(_COUNT).alias(s) for s in ("ok", "warning", "error")),
    ).collect()


def errors_by_reason(annotated: pl.LazyFrame) -> pl.DataFrame:
    """How often each reason was given, for error and warning rows (one row may give several)."""
    return (
        annotated.filter(pl.col("status") != "ok")
        .select("status", pl.col("message").fill_null("no reason given").str.split("; ").alias("reason"))
        .explode("reason")
        .group_by("status", "reason")
        .agg(pl.len().cast(_COUNT).alias("n"))
        .sort(["status", "n", "reason"], descending=[False, True, False])
        .collect()
    )


def charge_by_ph(annotated: pl.LazyFrame) -> pl.DataFrame:
    """Distribution of the dominant species' charge at each configured pH."""
    return (
        _annotated(annotated)
        .select("ph_states")
        .explode("ph_states")
        .unnest("ph_states")
        .filter(pl.col("ph").is_not_null())
        .group_by("ph", "charge")
        .agg(pl.len().cast(_COUNT).alias("n"))
        .with_columns((pl.col("n") / pl.col("n").sum().over("ph")).alias("fraction"))
        .sort("ph", "charge")
        .collect()
    )


def group_frequency(annotated: pl.LazyFrame) -> pl.DataFrame:
    """How many sites of each group were found, and in how many molecules."""
    return (
        _sites(annotated)
        .group_by("group", "kind")
        .agg(
            pl.len().cast(_COUNT).alias("n_sites"),
            pl.col("input_index").n_unique().cast(_COUNT).alias("n_molecules"),
        )
        .sort(["n_sites", "group", "kind"], descending=[True, False, False])
        .collect()
    )


def pka_by_group(annotated: pl.LazyFrame) -> pl.DataFrame:
    """Distribution of the estimated pKa per group: n, mean, sd and quantiles."""
    pka = pl.col("pka")
    quantiles = {"q10": 0.10, "q25": 0.25, "median": 0.50, "q75": 0.75, "q90": 0.90}
    return (
        _sites(annotated)
        .group_by("group", "kind")
        .agg(
            pl.len().cast(_COUNT).alias("n"),
            pka.mean().alias("mean"),
            pka.std().alias("sd"),
            pka.min().alias("min"),
            *(pka.quantile(q, interpolation="linear").alias(name) for name, q in quantiles.items()),
            pka.max().alias("max"),
        )
        .sort(["n", "group", "kind"], descending=[True, False, False])
        .collect()
    )


def sites_per_molecule(annotated: pl.LazyFrame) -> pl.DataFrame:
    """How many molecules have 0, 1, 2, ... ionizable sites."""
    return (
        _annotated(annotated)
        .select(pl.col("sites").list.len().cast(_COUNT).alias("n_sites"))
        .group_by("n_sites")
        .agg(pl.len().cast(_COUNT).alias("n_molecules"))
        .sort("n_sites")
        .collect()
    )


def site_pkas(annotated: pl.LazyFrame) -> pl.DataFrame:
    """Every site's group, kind and pKa, for the histograms."""
    return _sites(annotated).select("group", "kind", "pka").collect()


def _annotated(annotated: pl.LazyFrame) -> pl.LazyFrame:
    """Rows the engine could annotate (errors carry no chemistry)."""
    return annotated.filter(pl.col("status") != "error")


def _sites(annotated: pl.LazyFrame) -> pl.LazyFrame:
    return (
        _annotated(annotated)
        .select("input_index", "sites")
        .explode("sites")
        .unnest("sites")
        .filter(pl.col("group").is_not_null())
    )
