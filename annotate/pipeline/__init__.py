"""What the workflow's jobs call: split a library, annotate a chunk, gather the chunks.

Data flow per library: input file -> ``split_library`` -> chunk files + manifest
-> ``annotate_chunk`` (one job per chunk) -> ``gather_annotations`` ->
``annotated.parquet`` -> QC (:mod:`annotate.qc`).

Names are loaded on first use (PEP 562): a chunk job, of which a library has
tens to thousands, then imports only what it runs and skips Polars, which only
the whole-library steps use (about 0.2 s of start-up per job).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from annotate.lazy import lazy_exports

if TYPE_CHECKING:
    from annotate.pipeline.annotation import annotate_chunk
    from annotate.pipeline.config import (
        expand_library_shorthand,
        libraries_to_run,
        library_specs,
        settings_from_config,
    )
    from annotate.pipeline.gather import RecordCountError, gather_annotations
    from annotate.pipeline.joblog import log_progress
    from annotate.pipeline.manifest import Manifest, read_manifest
    from annotate.pipeline.split import split_library

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        "annotation": ["annotate_chunk"],
        "config": ["expand_library_shorthand", "libraries_to_run", "library_specs", "settings_from_config"],
        "gather": ["RecordCountError", "gather_annotations"],
        "joblog": ["log_progress"],
        "manifest": ["Manifest", "read_manifest"],
        "split": ["split_library"],
    },
)
