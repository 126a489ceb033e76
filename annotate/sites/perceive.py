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


def find_sites(
    mol: Chem.Mol, rules: tuple[GroupRule, ...], contexts: dict[str, Chem.Mol]
) -> list[SiteMatch]:
    """Sites in atom order. An atom already holding a site of the same kind is skipped.

    Rules are skipped cheaply when the molecule has no atom fit to be their site
    (element, aromaticity, a hydrogen for acids); named contexts are matched at
    most once per molecule.
    """
    context_atoms: dict[str, set[int]] = {}
    present: set[int] = set()
    atom_kinds: set[tuple[int, bool | None, bool]] = set()
    for index in range(mol.GetNumAtoms()):
        atom = mol.GetAtomWithIdx(index)
        z, aromatic, has_h = atom.GetAtomicNum(), atom.GetIsAromatic(), atom.GetTotalNumHs() > 0
        present.add(z)
        atom_kinds.update({(z, aromatic, has_h), (z, None, has_h), (z, aromatic, False), (z, None, False)})
    taken: set[tuple[int, str]] = set()
    found: list[SiteMatch] = []
    for rule in rules:
        if rule.gate[0] and rule.gate not in atom_kinds:
            continue
        if not rule.elements <= present:
            continue
        allowed = None
        if rule.context:
            allowed = context_atoms.get(rule.context)
            if allowed is None:
                matches = mol.GetSubstructMatches(contexts[rule.context], uniquify=False, maxMatches=100000)
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
