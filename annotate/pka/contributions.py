"""Substituent contributions, and their difference from the rule's parent compound."""

from __future__ import annotations

from collections.abc import Iterable
from typing import NamedTuple

#: share of a term's size taken as its uncertainty; substituent constants transfer
#: between series only approximately (common practice: 10-20 %)
TERM_RELATIVE_SD = 0.15
#: extra uncertainty for a substituent no table row describes, or an ortho position
UNKNOWN_SD = 0.3


# Both records are NamedTuples rather than frozen dataclasses: several are built
# per site, and a frozen dataclass costs about three times as much to create.


class Contribution(NamedTuple):
    """One substituent's pKa shift; equal labels are summed and compared with the parent."""

    label: str
    value: float
    sd: float


class NetTerm(NamedTuple):
    """Contributions of one label, net of the parent's; ``label`` counts repeats."""

    label: str
    value: float
    sd: float


def net_of_parent(mol: Iterable[Contribution], parent: Iterable[Contribution]) -> list[NetTerm]:
    """Molecule's contributions minus the parent's, label by label.

    The rule's pKa is measured on its parent compound, so whatever the parent
    already carries (e.g. ethanol's two carbinol H) must not be counted twice.
    """
    totals: dict[str, list[float]] = {}  # label -> [value, n_mol, variance, n_parent]
    for label, value, sd in mol:
        t = totals.get(label)
        if t is None:
            t = totals[label] = [0.0, 0, 0.0, 0]
        t[0] += value
        t[1] += 1
        t[2] += sd**2
    for label, value, _ in parent:
        t = totals.get(label)
        if t is None:
            t = totals[label] = [0.0, 0, 0.0, 0]
        t[0] -= value
        t[3] += 1
    terms = []
    for label, (value, n_mol, var, n_parent) in totals.items():
        if abs(value) < 0.005:
            continue
        count = n_mol - n_parent
        shown = label if count == 1 else f"{label} x{count}"
        terms.append(NetTerm(shown, value, var**0.5))
    return terms
