"""Find ionizable sites: apply the group rules in order, first rule wins per atom."""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

from annotate.sites.rules import GroupRule


@dataclass(frozen=True, slots=True)
class SiteMatch:
    """A rule matched on a molecule: the site atom, its anchor and the group's atoms."""

    rule: GroupRule
    atom: int
    anchor: int
    group: frozenset[int]
    match: tuple[int, ...]


def find_sites(mol: Chem.Mol, rules: tuple[GroupRule, ...]) -> list[SiteMatch]:
    """Sites in atom order. An atom already holding a site of the same kind is skipped."""
    present = {a.GetAtomicNum() for a in mol.GetAtoms()}
    taken: set[tuple[int, str]] = set()
    found: list[SiteMatch] = []
    for rule in rules:
        if not rule.elements <= present:
            continue
        merged: list[frozenset[int]] = []
        for match in mol.GetSubstructMatches(rule.pattern, uniquify=True):
            atom = match[rule.site_index]
            if (atom, rule.kind) in taken:
                continue
            group = frozenset(match)
            if rule.merge_overlaps and any(group & g for g in merged):
                taken.add((atom, rule.kind))
                continue
            taken.add((atom, rule.kind))
            merged.append(group)
            found.append(SiteMatch(rule, atom, match[rule.anchor_index], group, match))
    found.sort(key=lambda s: (s.atom, s.rule.kind))
    return found
