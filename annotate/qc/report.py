"""Write the QC tables, the JSON summary and the settings/versions record of a library."""

from __future__ import annotations

import json
import platform
from collections.abc import Mapping
from importlib import metadata as importlib_metadata
from pathlib import Path

import polars as pl
import pyarrow.parquet as pq

import annotate
from annotate.io.atomic import atomic_path
from annotate.io.schema import NOTICE, read_run_metadata
from annotate.qc import tables
from annotate.qc.filters import read_filter_counts

TABLES: dict[str, tables.QcTable] = {
    "counts": tables.counts,
    "errors_by_reason": tables.errors_by_reason,
    "charge_by_ph": tables.charge_by_ph,
    "group_frequency": tables.group_frequency,
    "pka_by_group": tables.pka_by_group,
    "sites_per_molecule": tables.sites_per_molecule,
}
JSON_OUTPUTS = ("summary", "settings_and_versions")
OUTPUTS = (*TABLES, *JSON_OUTPUTS)
_PACKAGES = ("rdkit", "polars", "pyarrow", "matplotlib", "snakemake")


def write_qc(
    annotated: str | Path, *, outputs: Mapping[str, str | Path], filters: str | Path | None = None
) -> None:
    """Write every QC output named in :data:`OUTPUTS` to the path ``outputs`` gives it.

    ``filters`` is the filter QC table (annotate.qc.filters); its counts join the summary.
    """
    missing, extra = set(OUTPUTS) - set(outputs), set(outputs) - set(OUTPUTS)
    if missing or extra:
        raise ValueError(f"QC outputs: missing {sorted(missing)}, unexpected {sorted(extra)}")
    results = tables.compute(annotated, TABLES)
    for name, table in results.items():
        with atomic_path(outputs[name]) as tmp:
            table.write_csv(tmp, separator="\t", float_precision=4)
    run = read_run_metadata(pq.read_schema(annotated))
    kept = read_filter_counts(filters) if filters is not None else None
    _write_json(outputs["summary"], summary(results, library=run.get("library", ""), filters=kept))
    _write_json(outputs["settings_and_versions"], settings_and_versions(run))


def summary(
    results: Mapping[str, pl.DataFrame], *, library: str, filters: pl.DataFrame | None = None
) -> dict[str, object]:
    """The headline numbers of a library in one small JSON-ready dict."""
    counts = results["counts"].row(0, named=True)
    charges: dict[str, dict[str, int]] = {}
    for row in results["charge_by_ph"].iter_rows(named=True):
        charges.setdefault(f"{row['ph']:g}", {})[str(row["charge"])] = row["n"]
    sites = results["sites_per_molecule"]
    body: dict[str, object] = {
        "library": library,
        "notice": NOTICE,
        "records": counts,
        "reasons": results["errors_by_reason"].head(20).to_dicts(),
        "dominant_charge_by_ph": charges,
        "sites": {
            "total": int((sites["n_sites"] * sites["n_molecules"]).sum()),
            "molecules_with_sites": int(sites.filter(pl.col("n_sites") > 0)["n_molecules"].sum()),
            "groups_seen": results["group_frequency"]["group"].n_unique(),
        },
    }
    if filters is not None:
        body["filters"] = filters.select("filter", "ph", "kept", "annotated", "structures").to_dicts()
    return body


def settings_and_versions(run: Mapping[str, str]) -> dict[str, object]:
    """What produced these numbers: settings, input, and software versions."""
    return {
        "library": run.get("library"),
        "source": json.loads(run["source"]) if "source" in run else None,
        "settings": json.loads(run["settings"]) if "settings" in run else None,
        "rule_tables_sha256": json.loads(run["rule_tables"]) if "rule_tables" in run else None,
        "annotated_with": run.get("version"),
        "versions": {"ionotate": annotate.__version__, "python": platform.python_version()}
        | {name: _version(name) for name in _PACKAGES},
        "notice": NOTICE,
    }


def _version(package: str) -> str:
    try:
        return importlib_metadata.version(package)
    except importlib_metadata.PackageNotFoundError:
        return "not installed"


def _write_json(path: str | Path, body: Mapping[str, object]) -> None:
    with atomic_path(path) as tmp:
        tmp.write_text(json.dumps(body, indent=2) + "\n")
