"""Job: QC plots of one annotated library (annotate.qc.plots)."""

import sys

sys.stderr = open(snakemake.log[0], "w")  # first, so that even import errors reach the job's log

from annotate.qc.plots import plot_qc  # noqa: E402

plot_qc(
    snakemake.input.annotated, charge_plot=snakemake.output.charge_plot, pka_plot=snakemake.output.pka_plot
)
