# Config validation and the helpers the rules use; no rules here.
import re

from snakemake.utils import validate

import annotate
from annotate.pipeline import expand_library_shorthand, library_specs, read_manifest

# Snakemake merges --configfile and --config into config/config.yaml key by key,
# which would add the demo libraries to the user's own. Libraries given on the
# command line therefore replace the configured ones instead of joining them.
_command_line = workflow.config_settings.overwrite_config
if "libraries" in _command_line:
    config["libraries"] = _command_line["libraries"]
if "libraries" in config:
    config["libraries"] = expand_library_shorthand(config["libraries"])
validate(config, "../schemas/config.schema.yaml")

LIBRARIES = library_specs(config["libraries"])
OUTDIR = config["outdir"].rstrip("/")
CHUNK_SIZE = config["chunk_size"]
SETTINGS = {
    key: config[key]
    for key in (
        "ph",
        "min_fraction",
        "max_species",
        "keep_largest_fragment",
        "neutralize",
        "user_rules",
    )
}
USER_RULES = [config["user_rules"]] if config["user_rules"] else []
# A new Ionotate version may change results, so it reruns the annotation like a new setting.
IONOTATE_VERSION = annotate.__version__
ENV = "../envs/ionotate.yaml"

# Requests of one annotate_chunk job, budgeting 0.3 s and 0.1 MB per record
# on top of start-up; override per rule with `set-resources` in a profile.
CHUNK_MEM_MB = 1000 + CHUNK_SIZE // 10
CHUNK_RUNTIME_MIN = 10 + CHUNK_SIZE // 200


wildcard_constraints:
    library="|".join(re.escape(name) for name in LIBRARIES),
    chunk=r"\d+",


def library_path(wildcards):
    """Input file of a library."""
    return str(LIBRARIES[wildcards.library].path)


def library_spec(wildcards):
    """Everything the split needs to read a library."""
    return LIBRARIES[wildcards.library]


def annotated_chunks(wildcards):
    """Annotated chunk files of a library, in input order, once the split has run."""
    chunk_dir = checkpoints.split_library.get(library=wildcards.library).output.chunks
    return expand(
        f"{OUTDIR}/{{library}}/chunks/annotated/{{chunk}}.parquet",
        library=wildcards.library,
        chunk=read_manifest(chunk_dir).chunk_names,
    )


def final_outputs():
    """The final outputs: each library's annotated Parquet, QC tables and plots."""
    finals = [
        *rules.gather_annotations.output,
        *rules.summarize_qc.output,
        *rules.plot_qc.output,
    ]
    return expand(finals, library=LIBRARIES)
