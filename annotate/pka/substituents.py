"""Substituent constants (Hammett sigma, Taft sigma*) and their lookup in one molecule."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

from rdkit import Chem

from annotate.pka.graph import MolGraph
from annotate.tables import Row, load_table, packaged

SUBSTITUENT_COLUMNS = ("name", "smarts", "sigma_m", "sigma_p", "sigma_i", "source")
RING_AZA = "<ring-aza>"
RING_FUSION = "<ring-fusion>"
#: sigma*(X) ~ 5.6 sigma_I(X): sigma*(XCH2) = 2.22 sigma_I with the 0.4 fall-off undone
SIGMA_STAR_PER_SIGMA_I = 5.6


@dataclass(frozen=True, slots=True)
class Substituent:
    """Constants of one substituent type; ``pattern`` is None for ring-member rows."""

    name: str
    smarts: str
    sigma_m: float
    sigma_p: float
    sigma_p_minus: float
    sigma_i: float
    sigma_o: float | None
    sigma_star: float | None
    source: str
    pattern: Chem.Mol | None = field(repr=False, compare=False)
    #: elements a match needs beyond the attachment atom and the atoms bonded to it
    #: (which a lookup has already checked), to skip a search that cannot match
    distant_elements: frozenset[int] = field(repr=False, compare=False, default=frozenset())
    #: element of the attachment atom (0 = any), to skip rows that cannot match a root
    root_element: int = field(repr=False, compare=False, default=0)
    #: (element, how many) the attachment atom must be bonded to, same purpose
    root_neighbours: tuple[tuple[int, int], ...] = field(repr=False, compare=False, default=())
    #: the attachment atom's query, None when recursive (Atom.Match cannot judge those)
    root_query: Chem.Atom | None = field(repr=False, compare=False, default=None)
    #: the pattern is that one atom, so ``root_query`` alone decides a match at a root
    root_only: bool = field(repr=False, compare=False, default=False)

    def neighbours_suffice(self, neighbours: list[int]) -> bool:
        """The attachment atom's usable neighbours include ``root_neighbours`` (with
        repeats); a necessary condition checked in Python."""
        for z, count in self.root_neighbours:
            if neighbours.count(z) < count:
                return False
        return True

    def sigma(self, position: str, *, minus: bool) -> float:
        """Hammett sigma at 'meta' or 'para' (ortho is handled by the caller)."""
        if position == "meta":
            return self.sigma_m
        return self.sigma_p_minus if minus else self.sigma_p

    @property
    def inductive_sigma_star(self) -> float | None:
        """sigma* when not tabulated, from sigma_I; None for sp3 carbon (derived by fall-off)."""
        if self.sigma_star is not None:
            return self.sigma_star
        if self.root_element == 6:  # the pattern's first atom is carbon
            return None
        return SIGMA_STAR_PER_SIGMA_I * self.sigma_i


def parse_substituent_row(row: Row) -> Substituent:
    smarts = row.text_field("smarts")
    pattern = None
    if smarts not in (RING_AZA, RING_FUSION):
        pattern = Chem.MolFromSmarts(smarts)
        if pattern is None:
            raise row.fail(f"invalid SMARTS {smarts!r}")
    sigma_p = row.float_field("sigma_p")
    root_query = None if pattern is None or "$(" in smarts.split("]")[0] else pattern.GetAtomWithIdx(0)
    root_element = pattern.GetAtomWithIdx(0).GetAtomicNum() if pattern is not None else 0
    root_neighbours = _root_neighbours(pattern)
    elements = required_elements(pattern) if pattern is not None else frozenset()
    return Substituent(
        name=row.text_field("name"),
        smarts=smarts,
        sigma_m=row.float_field("sigma_m"),
        sigma_p=sigma_p,
        sigma_p_minus=row.float_field("sigma_p_minus", default=sigma_p),
        sigma_i=row.float_field("sigma_i", default=0.0 if pattern is None else None),
        sigma_o=row.optional_float("sigma_o"),
        sigma_star=row.optional_float("sigma_star"),
        source=row.text_field("source"),
        pattern=pattern,
        distant_elements=elements - {root_element} - {z for z, _ in root_neighbours},
        root_element=root_element,
        root_neighbours=root_neighbours,
        root_query=root_query,
        root_only=root_query is not None and pattern.GetNumAtoms() == 1,
    )


def required_elements(pattern: Chem.Mol) -> frozenset[int]:
    """Elements every match needs; a molecule lacking one skips the pattern cheaply."""
    return frozenset(a.GetAtomicNum() for a in pattern.GetAtoms() if a.GetAtomicNum() > 0)


def _root_neighbours(pattern: Chem.Mol | None) -> tuple[tuple[int, int], ...]:
    if pattern is None:
        return ()
    elements = [n.GetAtomicNum() for n in pattern.GetAtomWithIdx(0).GetNeighbors() if n.GetAtomicNum() > 0]
    return tuple((z, elements.count(z)) for z in dict.fromkeys(elements))


@dataclass(frozen=True)
class SubstituentTable:
    """All substituent rows in match order, plus the two ring-member rows."""

    rows: tuple[Substituent, ...]
    ring_aza: Substituent
    ring_fusion: Substituent
    #: rows_for answers by (element, sorted neighbour elements); few distinct keys occur
    _plans: dict[tuple[int, tuple[int, ...]], tuple[Substituent, ...]] = field(
        default_factory=dict, init=False, repr=False, compare=False
    )

    @cached_property
    def _by_element(self) -> dict[int, tuple[Substituent, ...]]:
        elements = {r.root_element for r in self.rows} - {0}
        return {z: tuple(r for r in self.rows if r.root_element in (0, z)) for z in elements}

    def rows_for(self, element: int, neighbours: tuple[int, ...]) -> tuple[Substituent, ...]:
        """Rows, in table order, whose attachment atom can be an atom of this element
        bonded to atoms of these elements (sorted; the ones a match may use)."""
        key = (element, neighbours)
        if key not in self._plans:
            by_element = self._by_element.get(element)
            if by_element is None:
                by_element = tuple(r for r in self.rows if r.root_element == 0)
            usable = list(neighbours)
            self._plans[key] = tuple(r for r in by_element if r.neighbours_suffice(usable))
        return self._plans[key]


def load_substituents() -> SubstituentTable:
    rows = load_table(packaged("substituents.tsv"), parse_substituent_row, required=SUBSTITUENT_COLUMNS)
    special = {r.smarts: r for r in rows if r.pattern is None}
    return SubstituentTable(
        rows=tuple(r for r in rows if r.pattern is not None),
        ring_aza=special[RING_AZA],
        ring_fusion=special[RING_FUSION],
    )


class SubstituentIndex:
    """Which substituent row describes the group hanging from a given atom.

    Lazy per molecule: a row's pattern is matched over the molecule only the
    first time a lookup reaches that row at a root the row can start on (right
    element, bonded to the elements the row needs, the root query holds), and
    a one-atom row needs no search at all, so a typical lookup at a carbon runs
    none. ``graph`` holds the atom data every estimate on this molecule shares.
    """

    def __init__(self, mol: Chem.Mol, table: SubstituentTable) -> None:
        self.graph = MolGraph(mol)
        self._table = table
        self._matches: dict[str, dict[int, list[frozenset[int]]]] = {}
        self._answers: dict[tuple[int, int, frozenset[int]], Substituent | None] = {}

    def lookup(self, root: int, came_from: int, group: frozenset[int]) -> Substituent | None:
        """First row matching the group that hangs from ``root`` (seen from
        ``came_from``) using neither ``came_from`` nor any atom of ``group``.

        Rows are tried in table order, each through its cheap necessary
        conditions first: element and bonded elements (the table's plan for
        this root), then the root atom's own query, and only then its matches."""
        key = (root, came_from, group)
        if key in self._answers:
            return self._answers[key]
        graph = self.graph
        indices, elements = graph.bonded[root]
        usable = [z for i, z in zip(indices, elements) if i != came_from and i not in group]
        usable.sort()
        atom = graph.rdkit[root]
        answer = None
        for row in self._table.rows_for(graph.element[root], tuple(usable)):
            query = row.root_query
            if query is not None and not query.Match(atom):
                continue
            if row.root_only:  # its one-atom match is {root}: no search needed
                found = root != came_from and root not in group
            else:
                found = self._matches_avoiding(row, root, came_from, group)
            if found:
                answer = row
                break
        self._answers[key] = answer
        return answer

    def _matches_avoiding(self, row: Substituent, root: int, came_from: int, group: frozenset[int]) -> bool:
        for atoms in self._row_matches(row).get(root, ()):
            if came_from not in atoms and atoms.isdisjoint(group):
                return True
        return False

    def _row_matches(self, row: Substituent) -> dict[int, list[frozenset[int]]]:
        """The row's matches over the whole molecule, by attachment atom (rows with
        the same SMARTS share them). Only called for a row that fits a root, so
        the root's and its bonded atoms' elements are known to occur."""
        cached = self._matches.get(row.smarts)
        if cached is None:
            cached = {}
            graph = self.graph
            if all(graph.has_element(z) for z in row.distant_elements):
                for match in graph.mol.GetSubstructMatches(row.pattern, uniquify=False, maxMatches=10000):
                    cached.setdefault(match[0], []).append(frozenset(match))
            self._matches[row.smarts] = cached
        return cached

