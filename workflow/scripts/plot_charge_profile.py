"""Job: fraction of one library in each dominant charge state across pH 0-14 (annotate.draw.library)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.draw.library import plot_charge_profile  # noqa: E402
from annotate.pipeline import settings_from_config  # noqa: E402

plot_charge_profile(
    snakemake.input.annotated,
    snakemake.output.profile,
    marked_ph=settings_from_config(snakemake.params.settings).ph,
)
