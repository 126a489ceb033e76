#!/usr/bin/env bash
# Installs the annotate package into the rule environment. Snakemake runs this
# from its working directory, which must be the repository root (as in the README).
set -euo pipefail
python -m pip install --no-deps --editable .
