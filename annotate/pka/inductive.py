"""Taft sigma* sums for sites on saturated carbon or heteroatom anchors.

pKa = pKa(parent) - rho* (sum sigma*(molecule) - sum sigma*(parent)), with the
substituents on the anchor summed (Taft equation; Perrin, Dempsey & Serjeant 1981).
A group without a tabulated sigma* that hangs from an sp3 carbon passes on its own
substituents' sigma* times the fall-off factor per intervening saturated atom.
"""

from __future__ import annotations

from rdkit import Chem

from annotate.pka.contributions import TERM_RELATIVE_SD, UNKNOWN_SD, Contribution
from annotate.pka.substituents import SubstituentIndex

#: transmission of an inductive effect through one saturated carbon
#: (Perrin, Dempsey & Serjeant 1981: factor 0.4 per CH2; from memory)
FALLOFF = 0.4
#: Taft sigma* of hydrogen on the Taft scale (CH3 = 0); same source
SIGMA_STAR_H = 0.49
#: beyond this many bonds from the anchor a contribution is below 0.4**4 of its size
MAX_DEPTH = 4
_PLACE = {1: "bonded to anchor", 2: "on alpha-C", 3: "on beta-C", 4: "on gamma-C"}


def taft_contributions(
    mol: Chem.Mol,
    anchor: int,
    group: frozenset[int],
    rho: float,
    index: SubstituentIndex,
) -> list[Contribution]:
    """Each substituent's -rho* x sigma* x fall-off, plus the H atoms on the anchor."""
    atom = mol.GetAtomWithIdx(anchor)
    out: list[Contribution] = []
    n_h = atom.GetTotalNumHs()
    for _ in range(n_h):
        out.append(Contribution(f"H on anchor (sigma* {SIGMA_STAR_H:.2f})", -rho * SIGMA_STAR_H, 0.05))
    for nbr in atom.GetNeighbors():
        root = nbr.GetIdx()
        if root in group:
            continue
        _walk(mol, root, anchor, group, rho, index, 1, 1.0, frozenset({anchor}), out)
    return out


def group_sigma_star(
    mol: Chem.Mol, root: int, came_from: int, group: frozenset[int], index: SubstituentIndex
) -> float:
    """sigma* of the group rooted at ``root`` (seen from ``came_from``), by the same walk."""
    out: list[Contribution] = []
    _walk(mol, root, came_from, group, -1.0, index, 1, 1.0, frozenset({came_from}), out)
    return sum(c.value for c in out)


def _walk(
    mol: Chem.Mol,
    root: int,
    came_from: int,
    group: frozenset[int],
    rho: float,
    index: SubstituentIndex,
    depth: int,
    weight: float,
    visited: frozenset[int],
    out: list[Contribution],
) -> None:
    hit = index.lookup(root, excluded=group | {came_from})
    sigma_star = hit.inductive_sigma_star if hit is not None else None
    if sigma_star is not None:
        value = -rho * sigma_star * weight
        if abs(value) >= 0.005:
            label = f"{hit.name} {_PLACE[depth]} (sigma* {sigma_star:.2f})"
            out.append(Contribution(label, value, TERM_RELATIVE_SD * abs(value)))
        return
    atom = mol.GetAtomWithIdx(root)
    if hit is None and atom.GetAtomicNum() != 6:
        out.append(Contribution(f"unlisted substituent {atom.GetSymbol()} {_PLACE[depth]}", 0.0, UNKNOWN_SD * weight))
        return
    if depth >= MAX_DEPTH:
        return
    seen = visited | {root}
    for nbr in atom.GetNeighbors():
        nxt = nbr.GetIdx()
        if nxt in seen or nxt in group:
            continue
        _walk(mol, nxt, root, group, rho, index, depth + 1, weight * FALLOFF, seen, out)
