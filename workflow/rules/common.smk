# Config validation and the helpers the rules use; no rules here.
import re
from dataclasses import asdict
from pathlib import Path

from snakemake.utils import validate

import annotate
from annotate.pipeline import libraries_to_run, library_specs, read_manifest
from annotate.pipeline.docking import DockingOptions, ph_label
from annotate.pipeline.filtering import filter_specs, ph_values_with_filters
from annotate.pipeline.preflight import check_run
from annotate.pipeline.resources import chunk_resources
from annotate.qc.report import JSON_OUTPUTS as QC_JSON_OUTPUTS
from annotate.qc.report import OUTPUTS as QC_OUTPUTS
from annotate.settings import SETTING_NAMES
from annotate.tables import rule_table_checksums

# The configured libraries, or the bundled demo ones when none are given.
if "libraries" in config or "demo_libraries" in config:
    config["libraries"] = libraries_to_run(config)
validate(config, "../schemas/config.schema.yaml")
FILTERS = filter_specs(config["filters"])
# A filter reads the state at its pH, so that pH is computed too (documented in the schema).
config["ph"] = ph_values_with_filters(config["ph"], FILTERS)

LIBRARIES = library_specs(config["libraries"])
OUTDIR = config["outdir"].rstrip("/")
CHUNK_SIZE = config["chunk_size"]
SETTINGS = {key: config[key] for key in SETTING_NAMES}
USER_RULES = [config["user_rules"]] if config["user_rules"] else []
# Refuse a run that cannot work (NaN setting, missing or unreadable input, unknown
# column, bad rule file) now, naming every problem, not in a job's log hours later.
check_run(
    LIBRARIES,
    config=config,
    chunk_dirs={name: Path(f"{OUTDIR}/{name}/chunks/input") for name in LIBRARIES},
)
# A new Ionotate version may change results, so it reruns the annotation like a new setting.
IONOTATE_VERSION = annotate.__version__
# SHA-256 of every packaged and user table of rules, a param of the annotation jobs, so an edited
# table reruns them (a changed param is a rerun trigger)
RULE_TABLES = rule_table_checksums(
    Path(config["user_rules"]) if config["user_rules"] else None
)
ENV = "../envs/ionotate.yaml"


DOCKING = DockingOptions.from_config(config["docking"])
# One docking file per pH and format; the export job gets the pH of each file in this order.
DOCKING_FORMATS = config["docking"]["formats"]
DOCKING_TARGETS = [(ph, ext) for ph in config["ph"] for ext in DOCKING_FORMATS]
DOCKING_FILES = [
    f"{OUTDIR}/{{library}}/docking/ph{ph_label(ph)}.{ext}"
    for ph, ext in DOCKING_TARGETS
]
FILTER_FILES = {
    ext: [f"{OUTDIR}/{{library}}/filters/{spec.name}.{ext}" for spec in FILTERS]
    for ext in ("parquet", "sdf")
}
# With no filters the filter job would only write an empty table, one more job on
# the single-file path after the chunks; the QC summary then has no filter section.
FILTER_COUNTS = [f"{OUTDIR}/{{library}}/qc/filters.tsv"] if FILTERS else []
# Docking records are built in annotate_chunk's pass; with no docking file and no
# filter to use them, the job writes an empty docking table and skips the work.
BUILD_DOCKING = bool(DOCKING_FORMATS or FILTERS)
# Requests of one annotate_chunk job (formulas and measurements: annotate.pipeline.resources);
# override with `set-resources`.
CHUNK_RESOURCES = chunk_resources(
    CHUNK_SIZE,
    n_ph=len(config["ph"]),
    build_docking=BUILD_DOCKING,
    embed_3d=DOCKING.embed_3d,
)


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
    return chunk_files(wildcards, stage="annotated")


def docking_chunks(wildcards):
    """Docking tables of a library's chunks, in input order, once the split has run."""
    return chunk_files(wildcards, stage="docking")


def filter_docking_chunks(wildcards):
    """Docking tables the filters copy their SD records from; none without filters."""
    return docking_chunks(wildcards) if FILTERS else []


def chunk_files(wildcards, *, stage):
    """Per-chunk files of one stage, named after the split's chunks."""
    chunk_dir = checkpoints.split_library.get(library=wildcards.library).output.chunks
    return expand(
        f"{OUTDIR}/{{library}}/chunks/{stage}/{{chunk}}.parquet",
        library=wildcards.library,
        chunk=read_manifest(chunk_dir).chunk_names,
    )


def final_outputs():
    """The final outputs: each library's annotated Parquet, QC tables and plots,
    docking structures and filtered subsets."""
    finals = [
        *rules.gather_annotations.output,
        *rules.summarize_qc.output,
        *rules.plot_qc.output,
        *rules.draw_gallery.output,
        *rules.plot_charge_profile.output,
        *DOCKING_FILES,
        *(rules.filter_library.output if FILTERS else []),
    ]
    return expand(finals, library=LIBRARIES)
