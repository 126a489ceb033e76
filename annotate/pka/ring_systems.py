"""Ring-N bases: the ring-system parent of a site and the terms of its substituents.

Why: a basic ring N in a multi-aza or fused heteroaromatic (a purine, a
quinazoline, an azaindole) is not a pyridine with "ring N" substituents. Summing
Hammett terms for each extra ring N runs away (the sums reached -12), while the
measured parent of the whole ring system already contains every ring atom's
effect. So a site's parent is the largest ring system of ``ring_systems.tsv``
that contains it; the atoms of that system belong to the parent and are never
counted again. What hangs off the parent is a substituent:

* on the ring holding the N: a measured increment by position
  (``ring_increments.tsv``), else Hammett with the group rule's rho;
* on another ring of the parent (across a ring fusion): Hammett, sigma_p at an
  odd number of bonds from the N (conjugated positions, as 5- and 7- of
  quinoline), sigma_m at an even number, times ``CROSS_FUSION``;
* an aromatic ring fused to the parent but not part of it: a "fused ring" term.

Resonance donors conjugated with the N (amino, alkoxy, hydroxy...) are counted
once each; the second pushes electrons into a ring that the first already
enriches, so it counts ``DONOR_SATURATION`` of its increment, and a third or
later one adds nothing (one term of its own says so). A donor on a ring with further ring N acts more strongly than on
pyridine (``AZA_DONOR_GAIN``), shown in its term's label.

Ring systems are compared as skeletons: the ring atoms with their exocyclic
``=O``/``=S``/``=N`` atoms, substituents removed, an N carrying H or a
substituent written ``[nH]``, the site N mapped ``:1``; canonical SMILES of that
skeleton is the lookup key, computed the same way for the table's own rows.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, replace
from functools import lru_cache
from itertools import combinations

from rdkit import Chem, rdBase

from annotate.pka.aromatic import position_term, positions_in_ring, substituted_alkyl
from annotate.pka.contributions import TERM_RELATIVE_SD, UNKNOWN_SD, Contribution
from annotate.pka.graph import MolGraph
from annotate.pka.substituents import SubstituentIndex, SubstituentTable
from annotate.sites.rules import GroupRule
from annotate.tables import Row, load_table, packaged

RING_SYSTEM_COLUMNS = ("name", "smiles", "pka", "sd", "source")
#: the pka of a ring N that takes no proton in water
NOT_A_SITE = "none"
INCREMENT_COLUMNS = ("substituent", "ring", "position", "delta", "source")

#: transmission of a substituent effect from a ring fused to the N's ring.
#: Fitted to 5-, 6-, 7- and 8-substituted quinolines against quinoline 4.90
#: (7-amino 6.65, 6-amino 5.63, 6-nitro 2.72, 5-amino 5.46; CRC and Perrin 1965,
#: from memory): 0.45-0.8 with the sigma choice above; 0.5 taken (common practice)
CROSS_FUSION = 0.5
#: share of the second conjugated donor's increment that counts; a third and
#: later ones add nothing. Fitted to 2,4-diaminopyrimidine 7.4 and
#: 2,4,6-triaminopyrimidine 6.8 (Albert & Serjeant 1984, from memory); additivity
#: overshoots both, the triamine by three units
DONOR_SATURATION = 0.7
#: gain of a conjugated donor's effect per further pyridine-type N in the ring
#: holding the site: the less basic the parent, the more a donor raises it.
#: Fitted to 4-aminopyrimidine 5.71 and cytosine 4.6 against their parents (amino
#: increments 1.20 and 1.45 times those of pyridine; Albert & Serjeant 1984, from
#: memory), rounded down in view of 4-aminoquinazoline 5.73 (1.04 times)
AZA_DONOR_GAIN = 0.25
#: a substituent is a resonance donor when its sigma_p is at most this (amino,
#: alkylamino, arylamino, dialkylamino, hydroxy, alkoxy, oxido; common practice)
DONOR_SIGMA_P = -0.25
#: more aromatic rings than this in one fused system: only sub-systems of up to
#: four rings around the site are tried (bounds the search; larger systems are rare)
MAX_RINGS_FULL_SEARCH = 6

#: exocyclic atoms that are part of a ring system's skeleton (pyridone-type C=O)
_EXOCYCLIC = {8: "O", 16: "S", 7: "N"}


@dataclass(frozen=True, slots=True)
class RingParent:
    """One ring N of one ring system, with its measured (or estimated) pKa; ``pka``
    None: the N is not a base site (see the table's header)."""

    name: str
    smiles: str
    pka: float | None
    sd: float
    source: str


@dataclass(frozen=True, slots=True)
class Increment:
    substituent: str
    ring: int
    position: str
    delta: float
    source: str


@dataclass(frozen=True)
class RingSystemTable:
    """Parents by skeleton key, and increments by (substituent, ring size, position)."""

    parents: dict[str, RingParent]
    increments: dict[tuple[str, int, str], Increment]


@dataclass(frozen=True, slots=True)
class ParentMatch:
    """The parent chosen for a site: its row, its atoms, and the site's ring in it."""

    parent: RingParent
    atoms: frozenset[int]
    ring_atoms: frozenset[int]
    system_atoms: frozenset[int]
    site_ring: tuple[int, ...]


def load_ring_systems() -> RingSystemTable:
    """Both tables; a row whose skeleton repeats another's is an error (one parent per N)."""
    parents: dict[str, RingParent] = {}
    for row, parent in load_table(packaged("ring_systems.tsv"), _parse_parent, required=RING_SYSTEM_COLUMNS):
        key = _row_key(row, parent.smiles)
        if key in parents:
            raise row.fail(f"same ring N as row {parents[key].name!r}")
        parents[key] = replace(parent, smiles=Chem.MolToSmiles(_unmapped(row, parent.smiles)))
    increments = {}
    for inc in load_table(packaged("ring_increments.tsv"), _parse_increment, required=INCREMENT_COLUMNS):
        increments[(inc.substituent, inc.ring, inc.position)] = inc
    return RingSystemTable(parents, increments)


def _parse_parent(row: Row) -> tuple[Row, RingParent]:
    parent = RingParent(
        name=row.text_field("name"),
        smiles=row.text_field("smiles"),
        pka=None if row.text_field("pka") == NOT_A_SITE else row.float_field("pka"),
        sd=row.float_field("sd"),
        source=row.text_field("source"),
    )
    if parent.sd <= 0:
        raise row.fail("sd must be positive")
    return row, parent


def _parse_increment(row: Row) -> Increment:
    ring = int(row.float_field("ring"))
    position = row.text_field("position")
    allowed = _POSITION_NAMES[ring] if ring in _POSITION_NAMES else set()
    if position.removesuffix(" on ring N") not in allowed:
        raise row.fail(f"position {position!r} is not one of {sorted(allowed)} for a {ring}-membered ring")
    return Increment(row.text_field("substituent"), ring, position, row.float_field("delta"), row.text_field("source"))


_POSITION_NAMES = {6: {"ortho", "meta", "para"}, 5: {"adjacent", "next-but-one"}}


def _unmapped(row: Row, smiles: str) -> Chem.Mol:
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise row.fail(f"SMILES {smiles!r} does not parse")
    for atom in mol.GetAtoms():
        atom.SetAtomMapNum(0)
    return mol


def _row_key(row: Row, smiles: str) -> str:
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise row.fail(f"SMILES {smiles!r} does not parse")
    sites = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomMapNum() == 1]
    if len(sites) != 1:
        raise row.fail("exactly one atom must be mapped :1 (the ring N)")
    site = sites[0]
    atom = mol.GetAtomWithIdx(site)
    if atom.GetAtomicNum() != 7 or not atom.GetIsAromatic() or atom.GetDegree() != 2 or atom.GetTotalNumHs():
        raise row.fail("the mapped atom must be an aromatic N with two ring bonds and no H")
    for a in mol.GetAtoms():
        a.SetAtomMapNum(0)
    graph = MolGraph(mol)
    rings = system_rings(graph, site)
    if len(rings) != len(graph.aromatic_rings):
        raise row.fail("the SMILES must be one fused aromatic ring system")
    key = skeleton_key(graph, _with_exocyclic(graph, frozenset().union(*rings)), site)
    if key is None:
        raise row.fail("ring system skeleton cannot be written")
    return key


def system_rings(graph: MolGraph, site: int) -> list[tuple[int, ...]]:
    """The aromatic rings fused (sharing a bond) with the ring holding ``site``, site's ring first."""
    system = graph.fused_aromatic_rings(site)
    first = [r for r in system if site in r][:1]
    return first + [r for r in system if r not in first]


def _with_exocyclic(graph: MolGraph, ring_atoms: frozenset[int]) -> frozenset[int]:
    """Ring atoms plus their exocyclic doubly bonded O, S, N (part of a pyridone-type skeleton)."""
    extra = set()
    mol = graph.mol
    for p in ring_atoms:
        if graph.atoms[p][2] == 2:
            continue
        indices, elements = graph.bonded[p]
        for s, z in zip(indices, elements):
            if z in _EXOCYCLIC and s not in ring_atoms:
                if mol.GetBondBetweenAtoms(p, s).GetBondType() == Chem.BondType.DOUBLE:
                    extra.add(s)
    return ring_atoms | extra


def skeleton_key(
    graph: MolGraph, atoms: frozenset[int], site: int, ring: tuple[int, ...] | None = None
) -> str | None:
    """Canonical SMILES of the skeleton made of ``atoms``, site mapped :1; None if unwritable.

    ``ring``: the skeleton is this one ring (with its exocyclic atoms). Its symbols read
    round the ring from the site, in the smaller of the two directions, describe it
    exactly, so that reading is looked up first (most ring N sit on a lone ring)."""
    if ring is not None:
        start = ring.index(site)
        walk = ring[start:] + ring[:start]
        symbols = tuple(_symbol(graph, i, i == site, atoms) + _exocyclic(graph, i, atoms) for i in walk)
        reading = min(symbols, symbols[:1] + symbols[:0:-1])
        key = _LONE_RINGS.get(reading)
        if key is None:
            key = _LONE_RINGS[reading] = _fragment_key(graph, atoms, site)
        return key
    return _fragment_key(graph, atoms, site)


#: skeleton key of a lone ring by its reading round the ring (see skeleton_key)
_LONE_RINGS: dict[tuple[str, ...], str | None] = {}


def _exocyclic(graph: MolGraph, i: int, atoms: frozenset[int]) -> str:
    if graph.atoms[i][2] == 2:
        return ""
    return "".join(f"(={graph.rdkit[j].GetSymbol()})" for j in graph.bonded[i][0] if j in atoms and graph.atoms[j][1] is False)


def _fragment_key(graph: MolGraph, atoms: frozenset[int], site: int) -> str | None:
    mol = graph.mol
    symbols = ["*"] * mol.GetNumAtoms()
    for i in atoms:
        symbols[i] = _symbol(graph, i, i == site, atoms)
    raw = Chem.MolFragmentToSmiles(
        mol, atomsToUse=sorted(atoms), atomSymbols=symbols, canonical=False, allHsExplicit=False
    )
    return _canonical(raw)


def _symbol(graph: MolGraph, i: int, is_site: bool, atoms: frozenset[int]) -> str:
    element, aromatic, degree = graph.atoms[i]
    atom = graph.rdkit[i]
    if is_site:
        return "[n:1]"
    if not aromatic:
        return _EXOCYCLIC.get(element, atom.GetSymbol())
    symbol = atom.GetSymbol().lower()
    charge = atom.GetFormalCharge()
    sign = "" if charge == 0 else ("+" if charge > 0 else "-")
    if element == 7 and (degree == 3 or atom.GetTotalNumHs()):
        if sum(1 for j in graph.bonded[i][0] if j in atoms) == 3:
            return "n"  # a bridgehead N: all three bonds in the skeleton
        return "[n+]" if charge > 0 else "[nH]"
    if element in (6, 7, 8, 16) and not sign:
        return symbol
    return f"[{symbol}{sign}]"


@lru_cache(maxsize=65536)
def _canonical(raw: str) -> str | None:
    """A library repeats a few hundred skeletons, written the same way each time."""
    with rdBase.BlockLogs():
        mol = Chem.MolFromSmiles(raw)
    return None if mol is None else Chem.MolToSmiles(mol)


def find_parent(graph: MolGraph, site: int, table: RingSystemTable) -> ParentMatch | None:
    """The largest ring system of the table containing ``site``: the whole fused
    system first, then its connected sub-systems holding the site's ring, larger first."""
    rings = system_rings(graph, site)
    if not rings:
        return None
    system = frozenset().union(*rings)
    for subset in _subsystems(rings):
        ring_atoms = frozenset().union(*(rings[k] for k in subset))
        atoms = _with_exocyclic(graph, ring_atoms)
        key = skeleton_key(graph, atoms, site, rings[0] if len(subset) == 1 else None)
        parent = table.parents.get(key) if key is not None else None
        if parent is not None:
            return ParentMatch(parent, atoms, ring_atoms, system, rings[0])
    return None


def _subsystems(rings: list[tuple[int, ...]]) -> list[tuple[int, ...]]:
    """Connected sets of ring positions that include ring 0 (the site's), largest first."""
    n = len(rings)
    fused = [[len(set(rings[a]).intersection(rings[b])) >= 2 for b in range(n)] for a in range(n)]
    largest = n if n <= MAX_RINGS_FULL_SEARCH else 4
    out = []
    for size in range(largest, 0, -1):
        for rest in combinations(range(1, n), size - 1):
            subset = (0, *rest)
            if _connected(subset, fused):
                out.append(subset)
    return out


def _connected(subset: tuple[int, ...], fused: list[list[bool]]) -> bool:
    seen = {subset[0]}
    stack = [subset[0]]
    while stack:
        a = stack.pop()
        for b in subset:
            if b not in seen and fused[a][b]:
                seen.add(b)
                stack.append(b)
    return len(seen) == len(subset)


def ring_parent_contributions(
    match: ParentMatch,
    site: int,
    group: frozenset[int],
    rule: GroupRule,
    index: SubstituentIndex,
    substituents: SubstituentTable,
    table: RingSystemTable,
) -> list[Contribution]:
    """Terms of everything outside the parent, in the order the explanation lists them:
    the site's ring (in ring order), then the other rings by distance from the N."""
    graph = index.graph
    ring = match.site_ring
    size = len(ring)
    positions = positions_in_ring(size)
    start = ring.index(site)
    order = [p for p in ring if p != site]
    distances: dict[int, int] = {}
    if len(match.ring_atoms) > size:
        distances = _distances(graph, site, match.ring_atoms)
        order += sorted((p for p in match.ring_atoms if p not in ring), key=lambda p: (distances[p], p))
    out: list[Contribution] = []
    donors: list[float] = []
    more_aza = sum(1 for p in ring if p != site and _is_pyridine_like(graph, p))
    gain = 1.0 + AZA_DONOR_GAIN * more_aza
    for p in order:
        if graph.atoms[p][2] == 2:
            continue  # both bonds in the ring: nothing hangs here
        in_ring = p in ring
        if in_ring:
            distance, position = positions[ring.index(p) - start]
            conjugated = size == 5 or distance != 2
        else:
            distance = distances[p]
            position = f"across fusion, {distance} bonds"
            conjugated = distance % 2 == 1
        on_n = " on ring N" if graph.element[p] == 7 else ""
        for s in graph.bonded[p][0]:
            if s in match.atoms or s in group:
                continue
            if s in match.system_atoms:
                sub, name = substituents.ring_fusion, "fused ring"
            else:
                sub = index.lookup(s, p, group)
                if sub is None:
                    label = f"unlisted substituent {graph.rdkit[s].GetSymbol()} {position}{on_n}"
                    out.append(Contribution(label, 0.0, UNKNOWN_SD))
                    continue
                if sub.sigma_star is None and sub.root_element == 6:
                    sub = substituted_alkyl(s, p, group, index, sub)
                name = sub.name
            increment = table.increments.get((name, size, position + on_n)) if in_ring else None
            donor = conjugated and sub.pattern is not None and sub.sigma_p <= DONOR_SIGMA_P
            if increment is not None:
                value, label = increment.delta, f"{name} {position}{on_n} (increment)"
                if donor and in_ring and gain != 1.0 and value > 0:
                    value *= gain
                    label = f"{name} {position}{on_n} (increment x{gain:g}, {more_aza} more ring N)"
                term = Contribution(label, value, TERM_RELATIVE_SD * abs(value) + 0.1)
            elif in_ring:
                term = position_term(rule, sub, name, position + on_n, distance)
                value = term.value
            else:
                sigma = sub.sigma("para" if conjugated else "meta", minus=rule.sigma == "p-")
                value = -rule.rho * sigma * CROSS_FUSION
                label = f"{name} {position} (sigma {sigma:.2f} x{CROSS_FUSION})"
                term = Contribution(label, value, TERM_RELATIVE_SD * abs(value) + 0.1)
            out.append(term)
            if donor and value > 0:
                donors.append(value)
    if len(donors) > 1:
        ranked = sorted(donors, reverse=True)
        value = -(1.0 - DONOR_SATURATION) * ranked[1] - sum(ranked[2:])
        label = f"conjugated donors: the second counts x{DONOR_SATURATION}, further ones not ({len(ranked)} donors)"
        out.append(Contribution(label, value, 0.3))
    if match.system_atoms != match.ring_atoms:
        out += _outside_parent(match, site, rule, graph, substituents)
    return out


def _outside_parent(
    match: ParentMatch, site: int, rule: GroupRule, graph: MolGraph, substituents: SubstituentTable
) -> list[Contribution]:
    """The fused system is larger than its tabulated part: say so, and count each
    ring N of the untabulated rings as an aza substituent across the fusion (sigma_p
    at an odd, sigma_m at an even number of bonds, times ``CROSS_FUSION``), as the
    fused-ring terms alone would treat it as carbon."""
    out = [Contribution("fused system not in ring_systems.tsv: parent is its largest tabulated part", 0.0, 0.5)]
    distances = _distances(graph, site, match.system_atoms)
    aza = substituents.ring_aza
    for atom in sorted(match.system_atoms - match.ring_atoms, key=lambda a: (distances.get(a, 99), a)):
        if not _is_pyridine_like(graph, atom) or atom not in distances:
            continue
        d = distances[atom]
        sigma = aza.sigma_p if d % 2 else aza.sigma_m
        value = -rule.rho * sigma * CROSS_FUSION
        out.append(Contribution(f"ring N across fusion, {d} bonds (sigma {sigma:.2f} x{CROSS_FUSION})", value, TERM_RELATIVE_SD * abs(value) + 0.1))
    return out


def _is_pyridine_like(graph: MolGraph, atom: int) -> bool:
    element, aromatic, degree = graph.atoms[atom]
    return element == 7 and aromatic and degree == 2 and not graph.rdkit[atom].GetTotalNumHs()


def _distances(graph: MolGraph, site: int, atoms: frozenset[int]) -> dict[int, int]:
    """Bonds from the site to each ring atom of the parent, walking through the parent."""
    found = {site: 0}
    queue = deque([site])
    while queue:
        a = queue.popleft()
        for b in graph.bonded[a][0]:
            if b in atoms and b not in found:
                found[b] = found[a] + 1
                queue.append(b)
    return found
