"""Group rules: the table of ionizable groups, compiled once per process."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

from rdkit import Chem

from annotate.tables import Row, load_table, packaged

Model = Literal["hammett", "taft", "fixed", "ring"]
GROUP_COLUMNS = ("name", "category", "kind", "smarts", "pka", "parent", "model", "sd", "source")


@dataclass(frozen=True, slots=True)
class GroupRule:
    """One row of ``groups.tsv`` with its SMARTS compiled and map numbers resolved."""

    name: str
    category: str
    kind: Literal["acid", "base"]
    smarts: str
    context: str
    pka: float
    parent: str
    model: Model
    rho: float
    sigma: Literal["p", "p-"]
    ortho_k: float
    ortho_c: float
    para_k: float
    merge_overlaps: bool
    sd: float
    source: str
    #: rho of the second aromatic ring (anchor mapped :3), 0.0 when the row has none
    rho2: float
    pattern: Chem.Mol = field(repr=False, compare=False)
    site_index: int = field(repr=False, compare=False)
    anchor_index: int = field(repr=False, compare=False)
    #: index of the second ring's anchor (mapped :3) in the pattern, or None
    anchor2_index: int | None = field(default=None, repr=False, compare=False)

    def __repr__(self) -> str:
        return f"GroupRule({self.name!r}, {self.kind}, {self.smarts!r}, pKa {self.pka})"


def _map_index(pattern: Chem.Mol, number: int) -> int | None:
    for atom in pattern.GetAtoms():
        if atom.GetAtomMapNum() == number:
            return atom.GetIdx()
    return None


def parse_group_row(row: Row) -> GroupRule:
    """Build a GroupRule, rejecting rows a chemist could not have meant."""
    smarts = row.text_field("smarts")
    pattern = Chem.MolFromSmarts(smarts)
    if pattern is None:
        raise row.fail(f"invalid SMARTS {smarts!r}")
    site = _map_index(pattern, 1)
    if site is None:
        raise row.fail("SMARTS has no atom mapped :1 (the site atom)")
    anchor = _map_index(pattern, 2)
    kind = row.text_field("kind")
    if kind not in ("acid", "base"):
        raise row.fail(f"kind must be 'acid' or 'base', not {kind!r}")
    model = row.fields.get("model", "").strip() or "fixed"
    if model not in ("hammett", "taft", "fixed", "ring"):
        raise row.fail(f"model must be hammett, taft, fixed or ring, not {model!r}")
    sigma = row.fields.get("sigma", "").strip() or "p"
    if sigma not in ("p", "p-"):
        raise row.fail(f"sigma must be 'p' or 'p-', not {sigma!r}")
    overlap = row.fields.get("overlap", "").strip() or "separate"
    if overlap not in ("separate", "merge"):
        raise row.fail(f"overlap must be 'separate' or 'merge', not {overlap!r}")
    rho = row.float_field("rho", default=0.0)
    if model != "fixed" and rho == 0.0:
        raise row.fail(f"model {model} needs a non-zero rho")
    parent = row.text_field("parent")
    if Chem.MolFromSmiles(parent) is None:
        raise row.fail(f"parent SMILES {parent!r} does not parse")
    anchor2 = _map_index(pattern, 3)
    rho2 = row.float_field("rho2", default=0.0)
    if (anchor2 is None) != (rho2 == 0.0):
        raise row.fail("an atom mapped :3 (second ring anchor) and a non-zero rho2 go together")
    if anchor2 is not None and model == "fixed":
        raise row.fail("a second ring (:3, rho2) needs model hammett or taft")
    sd = row.float_field("sd")
    if sd <= 0:
        raise row.fail("sd must be positive")
    return GroupRule(
        name=row.text_field("name"),
        category=row.text_field("category"),
        kind=kind,  # type: ignore[arg-type]
        smarts=smarts,
        context=row.fields.get("context", "").strip(),
        pka=row.float_field("pka"),
        parent=parent,
        model=model,  # type: ignore[arg-type]
        rho=rho,
        sigma=sigma,  # type: ignore[arg-type]
        ortho_k=row.float_field("ortho_k", default=0.0),
        ortho_c=row.float_field("ortho_c", default=0.0),
        para_k=row.float_field("para_k", default=1.0),
        merge_overlaps=overlap == "merge",
        sd=sd,
        source=row.text_field("source"),
        rho2=rho2,
        pattern=pattern,
        site_index=site,
        anchor_index=site if anchor is None else anchor,
        anchor2_index=anchor2,
    )



def parse_context_row(row: Row) -> tuple[str, Chem.Mol]:
    smarts = row.text_field("smarts")
    pattern = Chem.MolFromSmarts(smarts)
    if pattern is None:
        raise row.fail(f"invalid SMARTS {smarts!r}")
    return row.text_field("name"), pattern


def load_contexts() -> dict[str, Chem.Mol]:
    """Shared site conditions (contexts.tsv), evaluated once per molecule."""
    rows = load_table(packaged("contexts.tsv"), parse_context_row, required=("name", "smarts", "source"))
    return dict(rows)


def load_group_rules(user_file: Path | None = None) -> tuple[GroupRule, ...]:
    """Packaged rules, with a user's rows replacing same-named rows or tried first."""
    packaged_rules = load_table(packaged("groups.tsv"), parse_group_row, required=GROUP_COLUMNS)
    if user_file is None:
        return packaged_rules
    user_rules = load_table(Path(user_file), parse_group_row, required=GROUP_COLUMNS)
    by_name = {r.name: r for r in user_rules}
    replaced = tuple(by_name.pop(r.name, r) for r in packaged_rules)
    added = tuple(r for r in user_rules if r.name in by_name)
    return added + replaced
