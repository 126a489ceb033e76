"""Substituent constants (Hammett sigma, Taft sigma*) and their lookup in one molecule."""

from __future__ import annotations

from dataclasses import dataclass, field

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
    )


@dataclass(frozen=True, slots=True)
class SubstituentTable:
    """All substituent rows in match order, plus the two ring-member rows."""

    rows: tuple[Substituent, ...]
    ring_aza: Substituent
    ring_fusion: Substituent


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

    def _row_matches(self, number: int) -> dict[int, list[frozenset[int]]]:
        cached = self._matches.get(number)
        if cached is None:
            row = self._table.rows[number]
            cached = {}
            if self._present is None:
                self._present = {a.GetAtomicNum() for a in self._mol.GetAtoms()}
            if row.elements <= self._present:
                for match in self._mol.GetSubstructMatches(row.pattern, uniquify=False, maxMatches=10000):
                    cached.setdefault(match[0], []).append(frozenset(match))
            self._matches[number] = cached
        return cached

    def lookup(self, root: int, *, excluded: frozenset[int] | set[int]) -> Substituent | None:
        """First row matching at ``root`` that uses none of the ``excluded`` atoms."""
        element = self._mol.GetAtomWithIdx(root).GetAtomicNum()
        for number, row in enumerate(self._table.rows):
            if row.root_element not in (0, element):
                continue
            for atoms in self._row_matches(number).get(root, ()):
                if atoms.isdisjoint(excluded):
                    return row
        return None
