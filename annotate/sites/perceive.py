"""Find ionizable sites: apply the group rules in order, first rule wins per atom."""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem
from rdkit.Chem import FilterCatalog

from annotate.sites.gates import gates_for
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

    The rules hang in one RDKit FilterCatalog under a tree of their gates (see
    gates.py), so a single C++ call tests each gate once and each rule only where
    its gates matched, and returns the rules that match (typically 3-5 of about
    100). Named contexts are matched at most once per molecule.
    """

    def __init__(self, rules: tuple[GroupRule, ...], contexts: dict[str, Chem.Mol]) -> None:
        self.rules = rules
        self.contexts = contexts
        tree: dict = {}
        for number, rule in enumerate(rules):
            node = tree
            for gate in gates_for(rule.pattern, rule.site_index, Chem.MolFromSmiles(rule.parent)):
                node = node.setdefault(gate, {})
            node.setdefault(_RULES, []).append(number)
        self._catalog = FilterCatalog.FilterCatalog()
        for matcher in _matchers(tree, rules):
            self._catalog.AddEntry(FilterCatalog.FilterCatalogEntry("", matcher))

    def matching(self, mol: Chem.Mol) -> list[GroupRule]:
        """Rules with at least one match, in table order."""
        # a gate whose rules all fail reports itself, under the name ""
        numbers = {match.filterMatch.GetName() for match in self._catalog.GetFilterMatches(mol)}
        numbers.discard("")
        return [self.rules[n] for n in sorted(map(int, numbers))]


#: key of a gate-tree node's own rules (gates are SMARTS, so never this)
_RULES = ""


def _matchers(tree: dict, rules: tuple[GroupRule, ...]) -> list[FilterCatalog.FilterHierarchyMatcher]:
    """A node's children are tested only if the node matched; a match reports the deepest."""
    out = []
    for key, below in tree.items():
        if key == _RULES:
            out += [
                FilterCatalog.FilterHierarchyMatcher(FilterCatalog.SmartsMatcher(str(n), rules[n].pattern, 1))
                for n in below
            ]
            continue
        node = FilterCatalog.FilterHierarchyMatcher(FilterCatalog.SmartsMatcher("", key, 1))
        for child in _matchers(below, rules):
            node.AddChild(child)
        out.append(node)
    return out


def find_sites(mol: Chem.Mol, matcher: RuleMatcher) -> list[SiteMatch]:
    """Sites in atom order. An atom already holding a site of the same kind is skipped."""
    context_atoms: dict[str, set[int]] = {}
    taken: set[tuple[int, str]] = set()
    found: list[SiteMatch] = []
    for rule in matcher.matching(mol):
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
