"""Options of one annotation run, shared by the Python API, the CLI and the workflow."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

#: two pH values closer than this are the same configured pH (they come from one config)
PH_TOLERANCE = 1e-6


@dataclass(frozen=True, slots=True)
class Settings:
    """Science settings; defaults match ``workflow/schemas/config.schema.yaml``."""

    ph: tuple[float, ...] = (7.4,)
    min_fraction: float = 0.01
    max_species: int = 4
    keep_largest_fragment: bool = True
    neutralize: bool = True
    user_rules: Path | None = None
