"""Job: QC tables and JSON summaries of one annotated library (annotate.qc.report)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.qc.report import write_qc  # noqa: E402

filters = snakemake.input.filters  # [] when no filter is configured
write_qc(snakemake.input.annotated, outputs=dict(snakemake.output.items()), filters=filters[0] if filters else None)
