"""Job: annotate one chunk file (annotate.pipeline.annotation)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.pipeline import annotate_chunk, log_progress, settings_from_config  # noqa: E402

log_progress()
annotate_chunk(
    snakemake.input.chunk,
    snakemake.output.annotated,
    settings=settings_from_config(snakemake.params.settings),
)
