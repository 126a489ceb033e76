"""Score Ionotate's pKa estimates against your own measured values.

    python benchmarks/accuracy.py DATA.csv [--smiles-col smiles] [--kind-col kind]
        [--pka-col pka] [--site-col site_smarts] [--category-col category] [--json out.json]

DATA.csv holds one row per measured site: the neutral parent SMILES, ``acid`` or
``base`` (for a base, the pKa of its protonated form), the measured pKa and,
optionally, a site SMARTS and a category that groups the table. Without the
options, the ``site_smarts`` and ``category`` columns are used when present.

Matching rule (which predicted site a measured row is compared with):

* only predicted sites of the row's kind are candidates;
* with a site SMARTS, a candidate must sit on an atom matched by the SMARTS's
  FIRST atom, searched in ``Chem.MolFromSmiles(result.parent_smiles)`` because
  the engine's atom indices refer to its parent, not to your input;
* without one, every candidate of that kind qualifies;
* of the qualifying candidates an acid row takes the most acidic (lowest pKa),
  a base row the most basic (highest pKa);
* a row with no qualifying candidate counts against site recall; MAE, RMSE and
  max error are computed over recalled rows only.

pKa values are estimates: verify decisions that matter (formulation, safety,
dosing) with measurements and qualified review.
"""

# No `from __future__ import annotations`: string annotations make dataclasses look the
# module up in sys.modules, which fails when tests load this file by path.
import argparse
import json
import math
import sys
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass
from functools import partial
from pathlib import Path

import polars as pl
from rdkit import Chem

from annotate import MoleculeResult, Settings, Site, annotate_smiles

OVERALL = "overall"
UNCATEGORISED = "uncategorised"
VERIFY = "pKa values are estimates: verify decisions that matter with measurements and qualified review."
ENGINE = partial(annotate_smiles, id="accuracy", settings=Settings(ph=(7.4,)))


@dataclass(frozen=True, slots=True)
class Reference:
    """One measured pKa; ``site_smarts`` pins it to an atom when a molecule has several sites."""

    smiles: str
    kind: str
    pka: float
    site_smarts: str | None = None
    category: str = UNCATEGORISED


@dataclass(frozen=True, slots=True)
class Outcome:
    """A reference row paired with the predicted site chosen by the matching rule."""

    reference: Reference
    site: Site | None
    note: str | None = None

    @property
    def error(self) -> float | None:
        return None if self.site is None else self.site.pka - self.reference.pka


@dataclass(frozen=True, slots=True)
class Stats:
    """Accuracy of one category; error metrics are None when nothing was recalled."""

    category: str
    n: int
    recalled: int
    mae: float | None
    rmse: float | None
    max_error: float | None

    @property
    def recall(self) -> float:
        return self.recalled / self.n if self.n else 0.0


def references_from(
    frame: pl.DataFrame,
    *,
    smiles_col: str = "smiles",
    kind_col: str = "kind",
    pka_col: str = "pka",
    site_col: str | None = None,
    category_col: str | None = None,
) -> list[Reference]:
    """Validate up front so a typo in row 900 fails before minutes of annotation."""
    wanted = [c for c in (smiles_col, kind_col, pka_col, site_col, category_col) if c]
    missing = [c for c in wanted if c not in frame.columns]
    if missing:
        raise ValueError(f"missing column(s): {', '.join(missing)}")
    refs = []
    for line, row in enumerate(frame.iter_rows(named=True), start=2):
        smiles = (row[smiles_col] or "").strip()
        kind = (row[kind_col] or "").strip().lower()
        site = (row[site_col] or "").strip() if site_col else ""
        category = (row[category_col] or "").strip() if category_col else ""
        if not smiles or kind not in ("acid", "base"):
            raise ValueError(f"line {line}: need a SMILES and kind 'acid' or 'base'")
        try:
            pka = float(row[pka_col])
        except (TypeError, ValueError):
            pka = math.nan
        if not math.isfinite(pka):
            raise ValueError(f"line {line}: pKa {row[pka_col]!r} is not a number")
        if site and Chem.MolFromSmarts(site) is None:
            raise ValueError(f"line {line}: unparsable site SMARTS {site!r}")
        refs.append(Reference(smiles, kind, pka, site or None, category or UNCATEGORISED))
    return refs


def match_site(result: MoleculeResult, ref: Reference) -> tuple[Site | None, str | None]:
    """Apply the module's matching rule; the second item says why nothing matched."""
    parent = Chem.MolFromSmiles(result.parent_smiles) if result.parent_smiles else None
    if result.status == "error" or parent is None:
        return None, f"engine gave no parent structure ({result.message or result.status})"
    candidates = [s for s in result.sites if s.kind == ref.kind]
    if ref.site_smarts:
        pattern = Chem.MolFromSmarts(ref.site_smarts)
        # uniquify=False: symmetric patterns would otherwise drop some first atoms.
        atoms = {m[0] for m in parent.GetSubstructMatches(pattern, uniquify=False)}
        if not atoms:
            return None, "site SMARTS does not match the engine's parent structure"
        candidates = [s for s in candidates if s.atom in atoms]
    if not candidates:
        where = " on the SMARTS atoms" if ref.site_smarts else ""
        return None, f"no predicted {ref.kind} site{where}"
    pick = min if ref.kind == "acid" else max
    return pick(candidates, key=lambda s: s.pka), None


def score_rows(
    rows: Sequence[Reference], *, predict: Callable[[str], MoleculeResult] = ENGINE
) -> list[Outcome]:
    """Annotate each distinct SMILES once, however many of its sites were measured."""
    results: dict[str, MoleculeResult] = {}
    outcomes = []
    for ref in rows:
        if ref.smiles not in results:
            results[ref.smiles] = predict(ref.smiles)
        site, note = match_site(results[ref.smiles], ref)
        outcomes.append(Outcome(ref, site, note))
    return outcomes


def _stats(category: str, outcomes: Sequence[Outcome]) -> Stats:
    errors = [abs(o.error) for o in outcomes if o.error is not None]
    if not errors:
        return Stats(category, len(outcomes), 0, None, None, None)
    mae = sum(errors) / len(errors)
    rmse = math.sqrt(sum(e * e for e in errors) / len(errors))
    return Stats(category, len(outcomes), len(errors), mae, rmse, max(errors))


def summarize(outcomes: Sequence[Outcome]) -> list[Stats]:
    """One line per category in name order, then the overall line."""
    by_category: dict[str, list[Outcome]] = {}
    for o in outcomes:
        by_category.setdefault(o.reference.category, []).append(o)
    lines = [_stats(name, by_category[name]) for name in sorted(by_category)]
    return lines + [_stats(OVERALL, outcomes)]


def format_table(stats: Sequence[Stats]) -> str:
    """Plain fixed-width text, so it reads the same in a terminal, a log or CI output."""

    def num(value: float | None) -> str:
        return "-" if value is None else f"{value:.2f}"

    width = max([len("category")] + [len(s.category) for s in stats])
    cells = [("category", "n", "recall", "MAE", "RMSE", "max")] + [
        (s.category, str(s.n), f"{s.recall:.1%}", num(s.mae), num(s.rmse), num(s.max_error))
        for s in stats
    ]
    lines = [f"{row[0]:<{width}}" + "".join(f"  {cell:>6}" for cell in row[1:]) for row in cells]
    return "\n".join([lines[0], "-" * len(lines[0]), *lines[1:]])


def _report(outcomes: Sequence[Outcome], stats: Sequence[Stats]) -> dict[str, object]:
    rows = []
    for o in outcomes:
        pka, atom = (o.site.pka, o.site.atom) if o.site else (None, None)
        predicted = {"predicted_pka": pka, "predicted_atom": atom}
        rows.append(asdict(o.reference) | predicted | {"error": o.error, "note": o.note})
    return {"summary": [asdict(s) | {"recall": s.recall} for s in stats], "rows": rows}


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("data", type=Path, help="CSV of measured pKa values")
    for name in ("smiles", "kind", "pka"):
        parser.add_argument(f"--{name}-col", default=name)
    parser.add_argument("--site-col", help="site SMARTS column (default: site_smarts, if present)")
    parser.add_argument("--category-col", help="grouping column (default: category, if present)")
    parser.add_argument("--json", type=Path, help="also write per-row and summary results here")
    args = parser.parse_args(argv)
    try:
        frame = pl.read_csv(args.data, infer_schema=False)
        refs = references_from(
            frame, smiles_col=args.smiles_col, kind_col=args.kind_col, pka_col=args.pka_col,
            site_col=args.site_col or ("site_smarts" if "site_smarts" in frame.columns else None),
            category_col=args.category_col or ("category" if "category" in frame.columns else None),
        )
    except (OSError, ValueError, pl.exceptions.PolarsError) as exc:
        print(f"accuracy: {exc}", file=sys.stderr)
        return 2
    outcomes = score_rows(refs)
    stats = summarize(outcomes)
    print(format_table(stats))
    print(f"\n{VERIFY}")
    if args.json:
        args.json.write_text(json.dumps(_report(outcomes, stats), indent=2) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
