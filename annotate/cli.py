"""``ionotate SMILES ...``: look at a few molecules from the shell.

Libraries go through the Snakemake workflow; this entry exists so a chemist can
check one structure and read why each pKa came out as it did.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from collections.abc import Iterator, Sequence
from dataclasses import asdict
from pathlib import Path
from typing import Any

from annotate.draw import write_card
from annotate.engine import annotate_smiles
from annotate.results import MoleculeResult, Site
from annotate.ruleset import load_ruleset
from annotate.settings import Settings
from annotate.tables import RuleFileError

DEFAULT = Settings()
CAUTION = (
    "Note: pKa values are estimates; decisions that matter (formulation, safety, dosing) "
    "need measurement and qualified review."
)


def _fraction(text: str) -> float:
    """Reject values that would silently hide every species or none."""
    value = float(text)
    if not 0.0 <= value < 1.0:
        raise argparse.ArgumentTypeError(f"must be in [0, 1), got {text}")
    return value


def _count(text: str) -> int:
    value = int(text)
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {text}")
    return value


def _ph(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"must be a finite number, got {text}")
    return value


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="ionotate",
        description="Find ionizable sites, explain their estimated pKa and list the main "
        "protonation species of a few molecules. For whole libraries use the workflow.",
        epilog=CAUTION,
    )
    parser.add_argument(
        "smiles", nargs="+", metavar="SMILES",
        help="structures to annotate; '-' reads lines 'SMILES [id]' from standard input",
    )
    parser.add_argument(
        "--ph", type=_ph, action="append", metavar="PH",
        help=f"pH at which species are listed; repeat for several (default {DEFAULT.ph[0]})",
    )
    parser.add_argument(
        "--min-fraction", type=_fraction, default=DEFAULT.min_fraction, metavar="F",
        help="hide species rarer than this fraction, except the most abundant (default %(default)s)",
    )
    parser.add_argument(
        "--max-species", type=_count, default=DEFAULT.max_species, metavar="N",
        help="list at most N species per pH (default %(default)s)",
    )
    parser.add_argument(
        "--rules", type=Path, metavar="FILE",
        help="tab-separated group rule table whose rows replace or extend the packaged ones",
    )
    parser.add_argument(
        "--draw", type=Path, metavar="DIR",
        help="also write one picture per molecule (structure with numbered sites, legend, species across pH) into DIR",
    )
    parser.add_argument(
        "--draw-format", choices=("svg", "png"), default="svg",
        help="picture format for --draw (default %(default)s)",
    )
    view = parser.add_mutually_exclusive_group()
    view.add_argument("--json", action="store_true", help="print one JSON object per line and molecule")
    view.add_argument("--no-explain", action="store_true", help="leave out the per-site pKa term breakdown")
    return parser


def _inputs(args: Sequence[str]) -> Iterator[tuple[str, str]]:
    """(id, SMILES) pairs; ids default to the 0-based input position, as in ``annotate_many``."""
    position = 0
    for arg in args:
        if arg != "-":
            yield str(position), arg
            position += 1
            continue
        for line in sys.stdin:  # same line convention as SMILES files: blanks and '#' skipped
            text = line.strip()
            if not text or text.startswith("#"):
                continue
            smiles, *rest = text.split(None, 1)
            yield (rest[0].strip() if rest else str(position)), smiles
            position += 1


def as_json(result: MoleculeResult) -> dict[str, Any]:
    """Every result field; sites also carry their explanation, which is a property."""
    record = asdict(result)
    for site_record, site in zip(record["sites"], result.sites, strict=True):
        site_record["explain"] = site.explain
    return record


def _signed(charge: int) -> str:
    """Charges read +1 / -1 / 0, as chemists write them."""
    return f"{charge:+d}" if charge else "0"


def _one_line(text: str) -> str:
    return " ".join(text.split())


def _explanation(site: Site) -> list[str]:
    """The terms that add up to the pKa; the first is the parent value, the rest shifts."""
    total = "= estimated pKa"
    width = max(len(total), *(len(t.label) for t in site.terms))
    lines = [f"{t.label:<{width}}  {t.value:{'>6.2f' if i == 0 else '>+6.2f'}}" for i, t in enumerate(site.terms)]
    return [*lines, f"{total:<{width}}  {site.pka:>6.2f}"]


def report(result: MoleculeResult, smiles: str, *, explain: bool) -> str:
    lines = [f"== {result.id}  {smiles}  [{result.status}]"]
    lines += [f"   note: {_one_line(m)}" for m in result.messages]
    if result.status == "error":
        return "\n".join(lines)
    lines.append(f"   parent: {result.parent_smiles}")
    if not result.sites:
        lines.append("   no ionizable sites found")
    else:
        width = max(len("group"), *(len(s.group) for s in result.sites))
        lines.append(f"   {'atom':>4}  {'kind':<4}  {'group':<{width}}  pKa")
        for site in result.sites:
            pka = f"{site.pka:5.2f} ± {site.pka_sd:.2f}"
            lines.append(f"   {site.atom:>4}  {site.kind:<4}  {site.group:<{width}}  {pka}")
            if explain:
                lines += [f"{'':13}{line}" for line in _explanation(site)]
        lines.append("   macroscopic pKa: " + (", ".join(f"{p:.2f}" for p in result.macro_pka) or "none"))
    for state in result.ph_states:
        lines.append(f"   pH {state.ph:g}: mean charge {round(state.charge_mean, 2) + 0.0:+.2f}")  # no -0.00
        lines.append(f"     {'fraction':>8}  {'charge':>6}  SMILES")
        lines += [f"     {100 * s.fraction:7.1f}%  {_signed(s.charge):>6}  {s.smiles}" for s in state.species]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    """Exit 0 if every molecule was annotated, 1 if any failed, 2 for usage or rule-file errors."""
    parser = build_parser()
    args = parser.parse_args(argv)
    settings = Settings(
        ph=tuple(args.ph) if args.ph else DEFAULT.ph,
        min_fraction=args.min_fraction,
        max_species=args.max_species,
        user_rules=args.rules,
    )
    try:
        load_ruleset(settings.user_rules)  # fail before any output, not halfway through
    except RuleFileError as exc:
        print(f"ionotate: bad rule file: {_one_line(str(exc))}", file=sys.stderr)
        return 2
    failed = total = 0
    for mol_id, smiles in _inputs(args.smiles):
        result = annotate_smiles(smiles, id=mol_id, settings=settings)
        total += 1
        failed += result.status == "error"
        if args.json:
            print(json.dumps(as_json(result), ensure_ascii=False))
        else:
            print(report(result, smiles, explain=not args.no_explain), end="\n\n")
        if args.draw:
            write_card(result, smiles, args.draw, fmt=args.draw_format, settings=settings)
    # the JSON stream stays machine-readable; the caution still reaches the terminal
    print(CAUTION, file=sys.stderr if args.json else sys.stdout)
    if failed:
        print(f"ionotate: {failed} of {total} molecule(s) could not be annotated", file=sys.stderr)
    return 1 if failed else 0


if __name__ == "__main__":
    raise SystemExit(main())
