"""The range an estimate may take, per category (data: bounds.tsv)."""

from __future__ import annotations

from dataclasses import dataclass

from annotate.tables import Row, load_table, packaged

BOUND_COLUMNS = ("category", "lower", "upper", "source")


@dataclass(frozen=True, slots=True)
class Bound:
    category: str
    lower: float
    upper: float
    source: str


def _parse(row: Row) -> Bound:
    bound = Bound(row.text_field("category"), row.float_field("lower"), row.float_field("upper"), row.text_field("source"))
    if bound.lower >= bound.upper:
        raise row.fail("lower must be below upper")
    return bound


def load_bounds() -> dict[str, Bound]:
    """Bounds by category; a category without a row is not bounded."""
    return {b.category: b for b in load_table(packaged("bounds.tsv"), _parse, required=BOUND_COLUMNS)}
