"""Typed results of annotating one molecule.

Every number a chemist sees carries its own explanation: a site's pKa is the
sum of its ``terms``, so the table can be audited without reading code.
All values are estimates; see the README's note on verification.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

Kind = Literal["acid", "base"]
Status = Literal["ok", "warning", "error"]


@dataclass(frozen=True, slots=True)
class Term:
    """One additive contribution to a site's pKa, in log units."""

    label: str
    value: float

    def __str__(self) -> str:
        return f"{self.label} {self.value:+.2f}"


@dataclass(frozen=True, slots=True)
class Site:
    """An ionizable site; for a base, ``pka`` is that of its conjugate acid."""

    atom: int
    kind: Kind
    group: str
    category: str
    pka: float
    pka_sd: float
    terms: tuple[Term, ...]

    @property
    def explain(self) -> str:
        head, *rest = self.terms
        parts = [f"{head.label} {head.value:.2f}"] + [str(t) for t in rest]
        return "; ".join(parts) + f"; total {self.pka:.2f} ± {self.pka_sd:.2f}"


@dataclass(frozen=True, slots=True)
class Species:
    """One protonation microspecies of the parent at a given pH.

    ``protonated`` holds, per site (same order as ``MoleculeResult.sites``),
    whether that site carries its extra proton; exporters use it to rebuild
    the species on the input coordinates.
    """

    smiles: str
    charge: int
    fraction: float
    protonated: tuple[bool, ...]


@dataclass(frozen=True, slots=True)
class PhState:
    """Populations at one pH, most abundant species first."""

    ph: float
    charge_mean: float
    species: tuple[Species, ...]

    @property
    def dominant(self) -> Species:
        return self.species[0]


@dataclass(frozen=True, slots=True)
class MoleculeResult:
    """Everything Ionotate says about one input record."""

    id: str
    status: Status
    messages: tuple[str, ...] = ()
    parent_smiles: str | None = None
    sites: tuple[Site, ...] = ()
    macro_pka: tuple[float, ...] = ()
    ph_states: tuple[PhState, ...] = field(default=())

    @property
    def message(self) -> str | None:
        return "; ".join(self.messages) if self.messages else None
