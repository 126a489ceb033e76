"""Find ionizable sites: apply the group rules in order, first rule wins per atom."""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem
from rdkit.Chem import FilterCatalog

from annotate.sites.rules import GroupRule


@dataclass(frozen=True, slots=True)
class SiteMatch:
    """A rule matched on a molecule: the site atom, its anchor and the group's atoms."""

    rule: GroupRule
    atom: int
    anchor: int
    group: frozenset[int]
    match: tuple[int, ...]


class RuleMatcher:
    """The group rules of a run, prepared for fast matching; build once per process.

    Every rule pattern also sits in one RDKit FilterCatalog, so a single C++ call
    tells which rules match a molecule at all (typically 3-5 of about 100); only
    those are matched again for their atoms. Named contexts are matched at most
    once per molecule.
    """

    def __init__(self, rules: tuple[GroupRule, ...], contexts: dict[str, Chem.Mol]) -> None:
        self.rules = rules
        self.contexts = contexts
        self._catalog = FilterCatalog.FilterCatalog()
        for number, rule in enumerate(rules):
            matcher = FilterCatalog.SmartsMatcher(rule.name, rule.pattern, 1)
            self._catalog.AddEntry(FilterCatalog.FilterCatalogEntry(str(number), matcher))

    def candidates(self, mol: Chem.Mol) -> list[GroupRule]:
        """Rules with at least one match, in table order."""
        numbers = sorted(int(entry.GetDescription()) for entry in self._catalog.GetMatches(mol))
        return [self.rules[n] for n in numbers]


def find_sites(mol: Chem.Mol, matcher: RuleMatcher) -> list[SiteMatch]:
    """Sites in atom order. An atom already holding a site of the same kind is skipped."""
    context_atoms: dict[str, set[int]] = {}
    taken: set[tuple[int, str]] = set()
    found: list[SiteMatch] = []
    for rule in matcher.candidates(mol):
        allowed = None
        if rule.context:
            allowed = context_atoms.get(rule.context)
            if allowed is None:
                pattern = matcher.contexts[rule.context]
                matches = mol.GetSubstructMatches(pattern, uniquify=False, maxMatches=100000)
                allowed = context_atoms[rule.context] = {m[0] for m in matches}
            if not allowed:
                continue
        merged: list[frozenset[int]] = []
        for match in mol.GetSubstructMatches(rule.pattern, uniquify=True):
            atom = match[rule.site_index]
            if (atom, rule.kind) in taken or (allowed is not None and atom not in allowed):
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
