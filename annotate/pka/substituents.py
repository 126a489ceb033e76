"""Substituent constants (Hammett sigma, Taft sigma*) and their lookup in one molecule."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

from rdkit import Chem

from annotate.sites.rules import required_elements
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
    elements: frozenset[int] = field(repr=False, compare=False, default=frozenset())
    #: element of the attachment atom (0 = any), to skip rows that cannot match a root
    root_element: int = field(repr=False, compare=False, default=0)
    #: elements the attachment atom must be bonded to (with repeats), same purpose
    root_neighbours: tuple[int, ...] = field(repr=False, compare=False, default=())
    #: the attachment atom's query, None when recursive (Atom.Match cannot judge those)
    root_query: Chem.Atom | None = field(repr=False, compare=False, default=None)

    def may_match(self, atom: Chem.Atom, neighbours: list[int]) -> bool:
        """Necessary conditions for a match rooted at ``atom``: checked in Python, so a
        root that cannot match never costs a substructure search."""
        if self.root_element not in (0, atom.GetAtomicNum()):
            return False
        if self.root_query is not None and not self.root_query.Match(atom):
            return False
        pool = list(neighbours)
        for z in self.root_neighbours:
            if z not in pool:
                return False
            pool.remove(z)
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
        if self.pattern is not None and self.pattern.GetAtomWithIdx(0).GetAtomicNum() == 6:
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
        elements=required_elements(pattern) if pattern is not None else frozenset(),
        root_element=pattern.GetAtomWithIdx(0).GetAtomicNum() if pattern is not None else 0,
        root_neighbours=_root_neighbours(pattern),
        root_query=None if pattern is None or "$(" in smarts.split("]")[0] else pattern.GetAtomWithIdx(0),
    )


def _root_neighbours(pattern: Chem.Mol | None) -> tuple[int, ...]:
    if pattern is None:
        return ()
    return tuple(n.GetAtomicNum() for n in pattern.GetAtomWithIdx(0).GetNeighbors() if n.GetAtomicNum() > 0)


@dataclass(frozen=True)
class SubstituentTable:
    """All substituent rows in match order, plus the two ring-member rows."""

    rows: tuple[Substituent, ...]
    ring_aza: Substituent
    ring_fusion: Substituent

    @cached_property
    def _by_element(self) -> dict[int, tuple[int, ...]]:
        elements = {r.root_element for r in self.rows} - {0}
        return {
            z: tuple(i for i, r in enumerate(self.rows) if r.root_element in (0, z)) for z in elements
        }

    def rows_for(self, element: int) -> tuple[int, ...]:
        """Row numbers, in table order, that can start at an atom of this element."""
        found = self._by_element.get(element)
        if found is None:
            found = tuple(i for i, r in enumerate(self.rows) if r.root_element == 0)
        return found


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
    first time a lookup reaches that row with a root of the row's element, so
    a typical lookup at a carbon never evaluates the sulfur or halogen rows.
    """

    def __init__(self, mol: Chem.Mol, table: SubstituentTable) -> None:
        self._mol = mol
        self._table = table
        self._present: set[int] | None = None
        self._matches: dict[int, dict[int, list[frozenset[int]]]] = {}
        self._answers: dict[tuple[int, frozenset[int]], Substituent | None] = {}

    def _row_matches(self, number: int) -> dict[int, list[frozenset[int]]]:
        cached = self._matches.get(number)
        if cached is None:
            row = self._table.rows[number]
            cached = {}
            if self._present is None:
                mol = self._mol
                self._present = {mol.GetAtomWithIdx(i).GetAtomicNum() for i in range(mol.GetNumAtoms())}
            if row.elements <= self._present:
                for match in self._mol.GetSubstructMatches(row.pattern, uniquify=False, maxMatches=10000):
                    cached.setdefault(match[0], []).append(frozenset(match))
            self._matches[number] = cached
        return cached

    def lookup(self, root: int, *, excluded: frozenset[int] | set[int]) -> Substituent | None:
        """First row matching at ``root`` that uses none of the ``excluded`` atoms."""
        atom = self._mol.GetAtomWithIdx(root)
        key = (root, frozenset(excluded))
        if key in self._answers:
            return self._answers[key]
        answer = None
        neighbours = [n.GetAtomicNum() for n in atom.GetNeighbors() if n.GetIdx() not in excluded]
        for number in self._table.rows_for(atom.GetAtomicNum()):
            row = self._table.rows[number]
            if not row.may_match(atom, neighbours):
                continue
            if any(atoms.isdisjoint(excluded) for atoms in self._row_matches(number).get(root, ())):
                answer = row
                break
        self._answers[key] = answer
        return answer
