"""Options of one annotation run, shared by the Python API, the CLI and the workflow."""

from __future__ import annotations

from dataclasses import dataclass, fields
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


#: the config keys of the science settings, in one place: the fields of :class:`Settings`.
#: The workflow passes exactly these to its jobs (``SETTINGS`` in common.smk), so a new
#: field here is a new param there; tests/test_config_schema.py fails until the schema,
#: ``config/config.yaml`` and :func:`annotate.pipeline.settings_from_config` follow.
SETTING_NAMES: tuple[str, ...] = tuple(f.name for f in fields(Settings))
