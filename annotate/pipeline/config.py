"""Turn the workflow's validated config into the package's own option types."""

from __future__ import annotations

import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from annotate.io.library import LibrarySpec
from annotate.settings import Settings


def settings_from_config(config: Mapping[str, Any]) -> Settings:
    """Science settings of a run; keys as in ``workflow/schemas/config.schema.yaml``."""
    rules = config.get("user_rules")
    return Settings(
        ph=tuple(float(p) for p in config["ph"]),
        min_fraction=float(config["min_fraction"]),
        max_species=int(config["max_species"]),
        keep_largest_fragment=bool(config["keep_largest_fragment"]),
        neutralize=bool(config["neutralize"]),
        user_rules=Path(str(rules)) if rules else None,
    )


#: records per chunk the README's "Sizing chunks" advises, at least and at most
CHUNK_SIZE_RANGE = (10_000, 50_000)
#: chunks per core on one machine: enough to keep every core busy to the end, few enough
#: that Snakemake's once-a-second look at every waiting job stays cheap (README)
CHUNKS_PER_CORE = 10


def suggested_chunk_size(records: int, *, cores: int) -> int:
    """``chunk_size`` for ``records`` on ``cores`` local cores, as README "Sizing chunks" advises.

    Why not smaller: each job costs about 0.5 s of start-up, and while chunks wait
    Snakemake spends about 1.5 ms of CPU per waiting job every second (measured,
    benchmarks/README.md). Why not larger: the last wave of jobs leaves cores idle.
    """
    low, high = CHUNK_SIZE_RANGE
    return min(high, max(low, math.ceil(records / (CHUNKS_PER_CORE * max(cores, 1)))))


def expand_library_shorthand(libraries: object) -> object:
    """Write each ``name: path`` entry as ``name: {path: path}`` so the schema fills its defaults.

    Anything that is not a mapping of entries is returned as is, for the schema to reject
    with a message naming the key.
    """
    if not isinstance(libraries, Mapping):
        return libraries
    return {name: {"path": entry} if isinstance(entry, str) else entry for name, entry in libraries.items()}


def libraries_to_run(config: Mapping[str, object]) -> object:
    """The libraries a run annotates: ``libraries``, or the bundled ``demo_libraries``
    when none are configured, with each ``name: path`` written as a mapping.

    Why two keys: Snakemake merges --configfile and --config into config/config.yaml
    key by key, so demo libraries listed under ``libraries`` would join a user's own
    instead of giving way to them.
    """
    return expand_library_shorthand(config.get("libraries") or config.get("demo_libraries") or {})


def library_specs(libraries: Mapping[str, str | Mapping[str, object]]) -> dict[str, LibrarySpec]:
    """The configured libraries, by name, in config order."""
    return {name: LibrarySpec.from_config(name, entry) for name, entry in libraries.items()}


def nan_settings(config: object, *, at: str = "config") -> list[str]:
    """Where the config holds NaN (``.nan`` in YAML), e.g. ``config['ph'][0]``.

    The schema cannot refuse NaN: every comparison with it is false, so it passes
    every minimum and maximum, and a run would then compute nothing but NaN.
    """
    if isinstance(config, float) and math.isnan(config):
        return [at]
    if isinstance(config, Mapping):
        return [p for key, value in config.items() for p in nan_settings(value, at=f"{at}[{key!r}]")]
    if isinstance(config, list | tuple):
        return [p for i, value in enumerate(config) for p in nan_settings(value, at=f"{at}[{i}]")]
    return []
