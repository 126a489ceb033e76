"""Job: merge a library's annotated chunks in input order (annotate.pipeline.gather)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.pipeline import gather_annotations, log_progress  # noqa: E402

log_progress()
gather_annotations(snakemake.input.chunks, snakemake.input.annotated, snakemake.output.annotated)
