"""Job: join a library's docking tables into one SD/SMILES file per pH (annotate.pipeline.docking)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.pipeline import log_progress  # noqa: E402
from annotate.pipeline.docking import export_docking_structures  # noqa: E402

log_progress()
export_docking_structures(snakemake.input.docking, snakemake.output.structures, phs=snakemake.params.phs)
