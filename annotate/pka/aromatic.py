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

from dataclasses import replace

from rdkit import Chem

from annotate.pka.contributions import TERM_RELATIVE_SD, UNKNOWN_SD, Contribution
from annotate.pka.graph import MolGraph
from annotate.pka.inductive import group_sigma_star
from annotate.pka.substituents import Substituent, SubstituentIndex, SubstituentTable
from annotate.sites.rules import GroupRule

_NAMES = {6: {1: "ortho", 2: "meta", 3: "para"}, 5: {1: "adjacent", 2: "next-but-one"}}


def _positions(size: int) -> dict[int, tuple[int, str]]:
    """(distance in bonds, position name) by index difference along a ring of ``size``."""
    table = {}
    for steps in range(1 - size, size):
        if steps:
            distance = min(abs(steps), size - abs(steps))
            table[steps] = (distance, _NAMES[size][distance])
    return table


_POSITIONS = {size: _positions(size) for size in _NAMES}


def positions_in_ring(size: int) -> dict[int, tuple[int, str]]:
    """(distance in bonds, position name) by index difference along a 5- or 6-membered ring."""
    return _POSITIONS[size]


def site_ring(graph: MolGraph, anchor: int) -> tuple[int, ...] | None:
    """The aromatic ring carrying the anchor: the first six-membered one in ring
    order, else the first five-membered one. Candidates are tried in that order,
    so the atoms of rings not chosen are rarely read."""
    rings = [r for r in graph.rings if anchor in r and len(r) in (5, 6)]
    rings.sort(key=lambda r: len(r) != 6)  # stable: ring order kept within each size
    atoms = graph.atoms
    for ring in rings:
        for i in ring:
            if not atoms[i][1]:  # (element, aromatic, degree)
                break
        else:
            return ring
    return None


def hammett_contributions(
    mol: Chem.Mol,
    anchor: int,
    group: frozenset[int],
    rule: GroupRule,
    index: SubstituentIndex,
    table: SubstituentTable,
) -> list[Contribution]:
    """One term per ring member or substituent, in ring order (the order the
    explanation lists them)."""
    graph = index.graph
    ring = site_ring(graph, anchor)
    if ring is None:
        return [Contribution("anchor not in an aromatic ring: no Hammett terms", 0.0, UNKNOWN_SD)]
    positions = _POSITIONS[len(ring)]
    start = ring.index(anchor)
    ring_set = set(ring)
    atoms = graph.atoms
    out: list[Contribution] = []
    for offset, p in enumerate(ring):
        if p == anchor:
            continue
        distance, position = positions[offset - start]
        element, _, degree = atoms[p]
        if element == 7 and p not in group and _is_pyridine_like(graph, p):
            out.append(position_term(rule, table.ring_aza, "ring N", position, distance))
        if degree == 2:
            continue  # both bonds in the ring: nothing hangs here
        for s in graph.bonded[p][0]:
            if s in ring_set or s in group:
                continue
            if _fused(graph, p, s, ring_set):
                out.append(position_term(rule, table.ring_fusion, "fused ring", position, distance))
                continue
            hit = index.lookup(s, p, group)
            if hit is None:
                label = f"unlisted substituent {graph.rdkit[s].GetSymbol()} {position}"
                out.append(Contribution(label, 0.0, UNKNOWN_SD))
                continue
            if hit.sigma_star is None and hit.root_element == 6:
                hit = substituted_alkyl(s, p, group, index, hit)
            out.append(position_term(rule, hit, hit.name, position, distance))
    return out


#: Hammett sigma of CH2X groups rises with sigma*(CH2X): (sigma_m + 0.07) / sigma*
#: is 0.17-0.19 for CH2Cl, CH2CN, CH2OH and CF3 (Hansch, Leo & Taft 1991 and the
#: Taft sigma* table; from memory), so an alkyl group carrying polar substituents
#: gets sigma = sigma(alkyl) + 0.17 sigma*(group) instead of plain alkyl values.
SIGMA_PER_SIGMA_STAR = 0.17


def substituted_alkyl(
    root: int, ring_atom: int, group: frozenset[int], index: SubstituentIndex, alkyl: Substituent
) -> Substituent:
    star = group_sigma_star(root, ring_atom, group, index)
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


def _is_pyridine_like(graph: MolGraph, index: int) -> bool:
    element, aromatic, degree = graph.atoms[index]
    if element != 7 or not aromatic or degree != 2:
        return False
    return graph.rdkit[index].GetTotalNumHs() == 0


def _fused(graph: MolGraph, p: int, s: int, ring: set[int]) -> bool:
    """True when ``s`` is aromatic and the p-s bond belongs to a ring sharing a
    bond with ``ring``. The ring test goes first: it needs no RDKit call."""
    for other in graph.rings:
        if p in other and s in other and len(ring.intersection(other)) >= 2:
            break
    else:
        return False
    return graph.atoms[s][1] and graph.mol.GetBondBetweenAtoms(p, s).IsInRing()


def position_term(rule: GroupRule, sub: Substituent, name: str, position: str, distance: int) -> Contribution:
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
