"""Job: charge-filtered subsets of one library, as Parquet and SDF, with QC counts (annotate.pipeline.filtering)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.pipeline import log_progress  # noqa: E402
from annotate.pipeline.filtering import filter_library, filter_specs  # noqa: E402

log_progress()
filter_library(
    snakemake.input.annotated,
    snakemake.input.docking,
    specs=filter_specs(snakemake.params.filters),
    parquet=snakemake.output.parquet,
    sdf=snakemake.output.sdf,
    qc_table=snakemake.output.counts,
)
