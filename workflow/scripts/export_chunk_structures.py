"""Job: docking records of one chunk file at every pH (annotate.pipeline.docking)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.pipeline import log_progress, settings_from_config  # noqa: E402
from annotate.pipeline.docking import DockingOptions, export_chunk_structures  # noqa: E402

log_progress()
export_chunk_structures(
    snakemake.input.chunk,
    snakemake.output.docking,
    settings=settings_from_config(snakemake.params.settings),
    options=DockingOptions.from_config(snakemake.params.docking),
)
