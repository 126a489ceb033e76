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
    graph = index.graph
    out: list[Contribution] = []
    n_h = graph.rdkit[anchor].GetTotalNumHs()
    for _ in range(n_h):
        out.append(Contribution(f"H on anchor (sigma* {SIGMA_STAR_H:.2f})", -rho * SIGMA_STAR_H, 0.05))
    for root in graph.bonded[anchor][0]:
        if root in group:
            continue
        _walk(root, anchor, group, rho, index, 1, 1.0, (anchor,), out)
    return out


def group_sigma_star(root: int, came_from: int, group: frozenset[int], index: SubstituentIndex) -> float:
    """sigma* of the group rooted at ``root`` (seen from ``came_from``), by the same walk."""
    out: list[Contribution] = []
    _walk(root, came_from, group, -1.0, index, 1, 1.0, (came_from,), out)
    return sum(c.value for c in out)


def _walk(
    root: int,
    came_from: int,
    group: frozenset[int],
    rho: float,
    index: SubstituentIndex,
    depth: int,
    weight: float,
    path: tuple[int, ...],
    out: list[Contribution],
) -> None:
    """Append the contributions of the group at ``root``; ``path`` is the atoms walked to reach it."""
    hit = index.lookup(root, came_from, group)
    sigma_star = hit.inductive_sigma_star if hit is not None else None
    if sigma_star is not None:
        value = -rho * sigma_star * weight
        if abs(value) >= 0.005:
            label = f"{hit.name} {_PLACE[depth]} (sigma* {sigma_star:.2f})"
            out.append(Contribution(label, value, TERM_RELATIVE_SD * abs(value)))
        return
    graph = index.graph
    if hit is None and graph.element[root] != 6:
        symbol = graph.rdkit[root].GetSymbol()
        out.append(Contribution(f"unlisted substituent {symbol} {_PLACE[depth]}", 0.0, UNKNOWN_SD * weight))
        return
    if depth >= MAX_DEPTH:
        return
    path += (root,)
    for nxt in graph.bonded[root][0]:
        if nxt in path or nxt in group:
            continue
        _walk(nxt, root, group, rho, index, depth + 1, weight * FALLOFF, path, out)
