"""What the workflow's jobs call: split a library, annotate a chunk, gather the chunks.

Data flow per library: input file -> ``split_library`` -> chunk files + manifest
-> ``annotate_chunk`` (one job per chunk) -> ``gather_annotations`` ->
``annotated.parquet`` -> QC (:mod:`annotate.qc`).
"""

from annotate.pipeline.annotation import annotate_chunk
from annotate.pipeline.config import expand_library_shorthand, library_specs, settings_from_config
from annotate.pipeline.gather import RecordCountError, gather_annotations
from annotate.pipeline.joblog import log_progress
from annotate.pipeline.manifest import Manifest, read_manifest
from annotate.pipeline.split import split_library

__all__ = [
    "Manifest",
    "RecordCountError",
    "annotate_chunk",
    "expand_library_shorthand",
    "gather_annotations",
    "library_specs",
    "log_progress",
    "read_manifest",
    "settings_from_config",
    "split_library",
]
