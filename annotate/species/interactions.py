"""Charge-charge interaction between sites, by topological distance (data: interactions.tsv)."""

from __future__ import annotations

from dataclasses import dataclass

from annotate.tables import Row, load_table, packaged

#: weight of the second path round a ring shared by two sites (see interactions.tsv)
SECOND_RING_PATH_WEIGHT = 0.5


@dataclass(frozen=True, slots=True)
class InteractionTable:
    """W(d) for like and opposite charges, index = number of bonds."""

    like: tuple[float, ...]
    opposite: tuple[float, ...]

    def w(self, distance: int, *, like: bool) -> float:
        return _at(self.like if like else self.opposite, distance)

    def pair(self, distance: int, second_path: int) -> tuple[float, float]:
        """(like, opposite) interaction of two sites ``distance`` bonds apart; a path
        the other way round a shared ring (``second_path`` bonds, 0 if none) adds
        at SECOND_RING_PATH_WEIGHT."""
        like, opposite = self.like, self.opposite
        return (
            _at(like, distance) + SECOND_RING_PATH_WEIGHT * _at(like, second_path),
            _at(opposite, distance) + SECOND_RING_PATH_WEIGHT * _at(opposite, second_path),
        )


def _at(values: tuple[float, ...], distance: int) -> float:
    return values[distance] if 0 < distance < len(values) else 0.0


def load_interactions() -> InteractionTable:
    def parse(row: Row) -> tuple[int, float, float]:
        d = int(row.float_field("distance"))
        if d < 1:
            raise row.fail("distance must be at least 1")
        return d, row.float_field("like"), row.float_field("opposite")

    rows = load_table(packaged("interactions.tsv"), parse, required=("distance", "like", "opposite", "source"))
    size = max(d for d, _, _ in rows) + 1
    like = [0.0] * size
    opposite = [0.0] * size
    for d, lk, op in rows:
        like[d], opposite[d] = lk, op
    return InteractionTable(tuple(like), tuple(opposite))
