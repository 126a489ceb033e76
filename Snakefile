# Ionotate: annotate compound libraries with ionizable sites, estimated pKa and
# dominant protonation states. Per library: split -> annotate chunks -> gather -> QC,
# and per chunk docking structures -> one SD/SMILES file per pH -> charge filters.
from snakemake.utils import min_version

min_version("9.0")


configfile: "config/config.yaml"


report: "workflow/report/workflow.rst"


include: "workflow/rules/common.smk"
include: "workflow/rules/split.smk"
include: "workflow/rules/annotate.smk"
include: "workflow/rules/gather.smk"
include: "workflow/rules/qc.smk"
include: "workflow/rules/export.smk"
include: "workflow/rules/draw.smk"


rule all:
    input:
        final_outputs(),
