"""Library pictures for the report: a gallery of cards and the charge profile across pH 0-14.

Both stream the annotated Parquet in record batches (only the columns they need),
so no job holds the library in memory. The charge profile uses the stored
macroscopic pKa per molecule: between consecutive macroscopic pKa one charge
state dominates, and each macroscopic pKa passed going up in pH removes one proton.
The charge at pH 0 is anchored on the stored dominant charge at the first
configured pH, so permanent charges are counted too.
"""

from __future__ import annotations

import bisect
from collections import Counter
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import pyarrow.parquet as pq  # noqa: E402

from annotate.draw.card import card_svg, message_card_svg  # noqa: E402
from annotate.io.atomic import atomic_path  # noqa: E402
from annotate.settings import Settings  # noqa: E402

PROFILE_PH = tuple(i / 4 for i in range(57))  # 0..14
GALLERY_SIZE = 24
GALLERY_ERRORS = 4
BATCH = 8192


def _batches(annotated: str | Path, columns: list[str]):
    yield from pq.ParquetFile(annotated).iter_batches(batch_size=BATCH, columns=columns)


def charge_profile(annotated: str | Path) -> tuple[tuple[float, ...], dict[int, list[int]], int]:
    """Per dominant charge, how many molecules hold it at each pH of PROFILE_PH; and the molecule count."""
    counts: dict[int, list[int]] = {}
    total = 0
    for batch in _batches(annotated, ["status", "macro_pka", "ph_states"]):
        for status, macro, states in zip(*(batch.column(i).to_pylist() for i in range(3)), strict=True):
            if status == "error" or not states:
                continue
            macro = sorted(macro or ())
            anchor = states[0]
            charge0 = anchor["charge"] + bisect.bisect_left(macro, anchor["ph"])
            total += 1
            for i, ph in enumerate(PROFILE_PH):
                charge = charge0 - bisect.bisect_left(macro, ph)
                counts.setdefault(charge, [0] * len(PROFILE_PH))[i] += 1
    return PROFILE_PH, counts, total


def plot_charge_profile(annotated: str | Path, path: str | Path, *, marked_ph: tuple[float, ...] = ()) -> None:
    """Stacked areas: fraction of the library's molecules in each dominant charge state, pH 0-14."""
    grid, counts, total = charge_profile(annotated)
    fig, ax = plt.subplots(figsize=(7.5, 4))
    if not total:
        ax.text(0.5, 0.5, "no annotated molecules", ha="center", va="center", transform=ax.transAxes)
    else:
        charges = sorted(counts, reverse=True)
        greys = plt.get_cmap("Greys")
        shares = [[n / total for n in counts[c]] for c in charges]
        hatches = ("", "//", "..", "\\\\", "xx", "--")
        stacks = ax.stackplot(grid, shares, labels=[f"{c:+d}" if c else "0" for c in charges],
                              colors=[greys(0.2 + 0.6 * k / max(1, len(charges) - 1)) for k in range(len(charges))],
                              edgecolor="white")
        for k, poly in enumerate(stacks):
            poly.set_hatch(hatches[k % len(hatches)])
        ax.legend(title="charge", loc="center left", bbox_to_anchor=(1.01, 0.5))
    for ph in marked_ph:
        ax.axvline(ph, color="black", linestyle=":", linewidth=1)
    ax.set_xlim(0, 14)
    ax.set_ylim(0, 1)
    ax.set_xlabel("pH")
    ax.set_ylabel("fraction of molecules")
    ax.set_title(f"Dominant charge state across pH ({total} molecules; pKa values are estimates)")
    fig.tight_layout()
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110)
    plt.close(fig)


def choose_gallery(annotated: str | Path, size: int = GALLERY_SIZE, errors: int = GALLERY_ERRORS) -> list[dict]:
    """First error rows, then molecules that add an unseen group or dominant charge, then any, in file order."""
    picked: list[dict] = []
    failed: list[dict] = []
    seen_groups: set[str] = set()
    seen_charges: Counter[int] = Counter()
    spare: list[dict] = []
    room = size - errors
    for batch in _batches(annotated, ["id", "status", "message", "parent_smiles", "sites", "ph_states"]):
        for row in batch.to_pylist():
            if row["status"] == "error":
                if len(failed) < errors:
                    failed.append(row)
                continue
            if len(picked) >= room:
                continue
            groups = {s["group"] for s in row["sites"] or ()}
            charge = row["ph_states"][0]["charge"] if row["ph_states"] else 0
            if groups - seen_groups or seen_charges[charge] == 0:
                picked.append(row)
                seen_groups |= groups
                seen_charges[charge] += 1
            elif len(spare) < room:
                spare.append(row)
        if len(picked) >= room and len(failed) >= errors:
            break
    picked += spare[: room - len(picked)]
    return picked + failed


def write_gallery(annotated: str | Path, directory: str | Path, *, settings: Settings | None = None) -> list[Path]:
    """One SVG card per chosen molecule, named so that the gallery sorts in choice order."""
    settings = settings or Settings()
    out = Path(directory)
    out.mkdir(parents=True, exist_ok=True)
    paths = []
    for n, row in enumerate(choose_gallery(annotated), start=1):
        title = row["id"] or str(n)
        if row["status"] == "error":
            svg = message_card_svg(f"{title}  (error)", row["message"] or "annotation failed")
        else:
            svg = card_svg(row["parent_smiles"], id=title, settings=settings)
        path = out / f"{n:02d}.svg"
        path.write_text(svg, encoding="utf-8")
        paths.append(path)
    return paths
