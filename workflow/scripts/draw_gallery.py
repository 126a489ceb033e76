"""Job: the report's gallery of molecule cards for one library (annotate.draw.library)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.draw.library import write_gallery  # noqa: E402
from annotate.pipeline import settings_from_config  # noqa: E402

write_gallery(snakemake.input.annotated, snakemake.output.gallery, settings=settings_from_config(snakemake.params.settings))
