"""Hammett sums for sites on, or attached to, an aromatic ring.

pKa = pKa(parent) - rho * sum(sigma), with sigma_m / sigma_p (or sigma_p- where the
conjugate base or acid is delocalised into the ring) by position relative to the
anchor, ring nitrogens and fused rings as ring-member terms.

Ortho treatment (documented approximation): sigma_ortho = sigma_para + k * sigma_I,
plus a per-row steric shift c; k and c are columns of the group rule. In a
five-membered ring, adjacent positions take the ortho treatment and the
next-but-one position sigma_m.
"""

from __future__ import annotations

from rdkit import Chem

from dataclasses import replace

from annotate.pka.contributions import TERM_RELATIVE_SD, UNKNOWN_SD, Contribution
from annotate.pka.inductive import group_sigma_star
from annotate.pka.substituents import Substituent, SubstituentIndex, SubstituentTable
from annotate.sites.rules import GroupRule

_NAMES_6 = {1: "ortho", 2: "meta", 3: "para"}
_NAMES_5 = {1: "adjacent", 2: "next-but-one"}


def site_ring(mol: Chem.Mol, anchor: int) -> tuple[int, ...] | None:
    """The aromatic ring carrying the anchor, six-membered preferred."""
    rings = [r for r in mol.GetRingInfo().AtomRings() if anchor in r and len(r) in (5, 6)]
    rings = [r for r in rings if all(mol.GetAtomWithIdx(i).GetIsAromatic() for i in r)]
    if not rings:
        return None
    return sorted(rings, key=lambda r: (len(r) != 6, len(r)))[0]


def hammett_contributions(
    mol: Chem.Mol,
    anchor: int,
    group: frozenset[int],
    rule: GroupRule,
    index: SubstituentIndex,
    table: SubstituentTable,
) -> list[Contribution]:
    ring = site_ring(mol, anchor)
    if ring is None:
        return [Contribution("anchor not in an aromatic ring: no Hammett terms", 0.0, UNKNOWN_SD)]
    size = len(ring)
    names = _NAMES_6 if size == 6 else _NAMES_5
    start = ring.index(anchor)
    ring_set = set(ring)
    out: list[Contribution] = []
    for offset, p in enumerate(ring):
        if p == anchor:
            continue
        steps = abs(offset - start)
        distance = min(steps, size - steps)
        position = names[distance]
        atom = mol.GetAtomWithIdx(p)
        if p not in group and _is_pyridine_like(atom):
            out.append(_term(rule, table.ring_aza, "ring N", position, distance))
        for nbr in atom.GetNeighbors():
            s = nbr.GetIdx()
            if s in ring_set or s in group:
                continue
            bond = mol.GetBondBetweenAtoms(p, s)
            if bond.IsInRing() and nbr.GetIsAromatic() and _fused(mol, p, s, ring_set):
                out.append(_term(rule, table.ring_fusion, "fused ring", position, distance))
                continue
            hit = index.lookup(s, excluded=group | {p})
            if hit is None:
                label = f"unlisted substituent {nbr.GetSymbol()} {position}"
                out.append(Contribution(label, 0.0, UNKNOWN_SD))
                continue
            if hit.sigma_star is None and hit.root_element == 6:
                hit = _substituted_alkyl(mol, s, p, group, index, hit)
            out.append(_term(rule, hit, hit.name, position, distance))
    return out


#: Hammett sigma of CH2X groups rises with sigma*(CH2X): (sigma_m + 0.07) / sigma*
#: is 0.17-0.19 for CH2Cl, CH2CN, CH2OH and CF3 (Hansch, Leo & Taft 1991 and the
#: Taft sigma* table; from memory), so an alkyl group carrying polar substituents
#: gets sigma = sigma(alkyl) + 0.17 sigma*(group) instead of plain alkyl values.
SIGMA_PER_SIGMA_STAR = 0.17


def _substituted_alkyl(
    mol: Chem.Mol, root: int, ring_atom: int, group: frozenset[int], index: SubstituentIndex, alkyl: Substituent
) -> Substituent:
    star = group_sigma_star(mol, root, ring_atom, group, index)
    if abs(star) < 0.05:
        return alkyl
    shift = SIGMA_PER_SIGMA_STAR * star
    return replace(
        alkyl,
        name=f"substituted alkyl (sigma* {star:.2f})",
        sigma_m=alkyl.sigma_m + shift,
        sigma_p=alkyl.sigma_p + shift,
        sigma_p_minus=alkyl.sigma_p_minus + shift,
        sigma_i=alkyl.sigma_i + shift,
    )


def _is_pyridine_like(atom: Chem.Atom) -> bool:
    return atom.GetAtomicNum() == 7 and atom.GetIsAromatic() and atom.GetDegree() == 2 and atom.GetTotalNumHs() == 0


def _fused(mol: Chem.Mol, p: int, s: int, ring: set[int]) -> bool:
    """True when the p-s bond belongs to an aromatic ring sharing a bond with ``ring``."""
    for other in mol.GetRingInfo().AtomRings():
        if p in other and s in other and len(ring.intersection(other)) >= 2:
            return True
    return False


def _term(rule: GroupRule, sub: Substituent, name: str, position: str, distance: int) -> Contribution:
    """One ring position's term. The row's ortho shift and para scale describe how
    substituents act in that series; ring members (aza, fusion) carry constants
    derived for the position directly, so neither applies to them."""
    minus = rule.sigma == "p-"
    substituent = sub.pattern is not None
    if distance == 1:
        para = sub.sigma(position="para", minus=minus)
        sigma = sub.sigma_o if sub.sigma_o is not None else para + rule.ortho_k * sub.sigma_i
        value = -rule.rho * sigma + (rule.ortho_c if substituent else 0.0)
        sd = (TERM_RELATIVE_SD * abs(value)) + UNKNOWN_SD / 2
    else:
        sigma = sub.sigma("meta" if (distance == 2) else "para", minus=minus)
        if distance == 3 and substituent:
            sigma *= rule.para_k
        value = -rule.rho * sigma
        sd = TERM_RELATIVE_SD * abs(value)
    label = f"{name} {position} (sigma {sigma:.2f})"
    return Contribution(label, value, sd)
