"""QC plots of one annotated library, drawn headless (Agg) for workflow jobs."""

from __future__ import annotations

import math
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import polars as pl  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from annotate.io.atomic import atomic_path  # noqa: E402
from annotate.qc import tables  # noqa: E402

MAX_GROUPS = 12
_CAVEAT = "pKa values are estimates"


def plot_qc(annotated: str | Path, *, charge_plot: str | Path, pka_plot: str | Path) -> None:
    """Draw the dominant-charge distribution per pH and the pKa histograms per group."""
    found = tables.compute(annotated, {"charges": tables.charge_by_ph, "pkas": tables.site_pkas})
    _save(charge_figure(found["charges"]), charge_plot)
    _save(pka_figure(found["pkas"]), pka_plot)


def charge_figure(charges: pl.DataFrame) -> Figure:
    """Grouped bars: share of molecules with each dominant charge, one bar colour per pH."""
    fig, ax = plt.subplots(figsize=(7, 4))
    if charges.is_empty():
        return _empty(fig, ax, "no annotated molecules")
    all_charges = sorted(charges["charge"].unique().to_list())
    phs = sorted(charges["ph"].unique().to_list())
    width = 0.8 / len(phs)
    for k, ph in enumerate(phs):
        share = dict(charges.filter(pl.col("ph") == ph).select("charge", "fraction").iter_rows())
        xs = [i + (k - (len(phs) - 1) / 2) * width for i in range(len(all_charges))]
        ax.bar(xs, [share.get(c, 0.0) for c in all_charges], width=width, label=f"pH {ph:g}")
    ax.set_xticks(range(len(all_charges)), [f"{c:+d}" if c else "0" for c in all_charges])
    ax.set_xlabel("charge of the dominant species")
    ax.set_ylabel("fraction of molecules")
    ax.set_title(f"Dominant charge per pH ({_CAVEAT})")
    ax.legend()
    fig.tight_layout()
    return fig


def pka_figure(sites: pl.DataFrame) -> Figure:
    """One pKa histogram per group, the most frequent groups first.

    ``sites`` holds counted values (:data:`~annotate.qc.tables.site_pkas`): each
    distinct pKa is drawn with its count as weight, the same bars as every value once.
    """
    if sites.is_empty():
        fig, ax = plt.subplots(figsize=(7, 4))
        return _empty(fig, ax, "no ionizable sites found")
    ranked = (
        sites.group_by("group", "kind")
        .agg(pl.col("n").sum().alias("len"))
        .sort(["len", "group", "kind"], descending=[True, False, False])
    )
    shown = ranked.head(MAX_GROUPS)
    cols = min(4, shown.height)
    rows = math.ceil(shown.height / cols)
    fig, axes = plt.subplots(rows, cols, figsize=(3.2 * cols, 2.6 * rows), squeeze=False)
    for ax, (group, kind, n) in zip(axes.flat, shown.iter_rows(), strict=False):
        values = sites.filter((pl.col("group") == group) & (pl.col("kind") == kind) & pl.col("pka").is_not_null())
        color = "tab:red" if kind == "acid" else "tab:blue"
        ax.hist(values["pka"].to_list(), bins=20, weights=values["n"].to_list(), color=color)
        ax.set_title(f"{group} ({kind}, n={n})", fontsize=9)
        ax.set_xlabel("pKa")
    for ax in list(axes.flat)[shown.height :]:
        ax.set_visible(False)
    more = f"; {ranked.height - shown.height} rarer groups not shown" if ranked.height > shown.height else ""
    fig.suptitle(f"Estimated pKa per group ({_CAVEAT}{more})", fontsize=10)
    fig.tight_layout()
    return fig


def _empty(fig: Figure, ax: plt.Axes, text: str) -> Figure:
    ax.text(0.5, 0.5, text, ha="center", va="center", transform=ax.transAxes)
    ax.set_axis_off()
    return fig


def _save(fig: Figure, path: str | Path) -> None:
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format="png", dpi=100)
    plt.close(fig)
