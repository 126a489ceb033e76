"""Job: cut one library into chunk files (annotate.pipeline.split)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.pipeline import log_progress, split_library  # noqa: E402

log_progress()
split_library(snakemake.params.library, snakemake.output.chunks, chunk_size=snakemake.params.chunk_size)
