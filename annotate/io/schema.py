"""The annotated-Parquet contract, declared once for every writer, reader and test.

``{outdir}/{library}/annotated.parquet`` holds one row per input record, in input
order. Its columns, in this order:

=================  =====================  =============================================
column             type                   meaning
=================  =====================  =============================================
``library``        string                 library name from the config
``input_index``    int64                  0-based position of the record in its input
``id``             string                 input id column / SDF title, else
                                          ``<library>:<input_index>``
``status``         string                 ``ok``, ``warning`` or ``error``
``message``        string                 reasons joined by ``"; "``; null when ok
``parent_smiles``  string                 standardised neutral parent; null on error
``sites``          list<struct>           ionizable sites; null on error
                                          {``atom`` int32 (index in the molecule RDKit
                                          parses from ``parent_smiles``), ``kind``
                                          string ``acid``/``base`` (a base's ``pka``
                                          is that of its conjugate acid), ``group``
                                          string, ``pka`` float64, ``pka_sd``
                                          float64, ``explain`` string}
``macro_pka``      list<float64>          macroscopic pKa values, ascending; null on
                                          error
``ph_states``      list<struct>           one per configured pH; null on error
                                          {``ph`` float64, ``charge_mean`` float64,
                                          ``charge`` int32, ``smiles`` string and
                                          ``fraction`` float64 of the dominant
                                          species, ``species`` list<struct{``smiles``
                                          string, ``charge`` int32, ``fraction``
                                          float64}> above the population threshold}
(input columns)    as in the input        every input column or SDF property (SDF
                                          properties as strings); a name that clashes
                                          with a column above gets the prefix
                                          ``input_``
=================  =====================  =============================================

The file's key-value metadata (``ionotate.*``) records the library, its source,
the run settings, the Ionotate version, the SHA-256 of every rule table the run
read (``ionotate.rule_tables``: packaged ``data/*.tsv`` and a user rule file), and a notice that pKa values are
estimates: verify decisions that matter (formulation, safety, dosing) with
measurements and qualified review.

Chunk files (the work of ``split_library``) use :data:`CHUNK_SCHEMA` followed by
the carried input columns; the structure text (SMILES or molblock) travels in
``record`` so that a chunk is one small, self-describing Parquet file.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from dataclasses import asdict
from pathlib import Path

import pyarrow as pa

from annotate.results import MoleculeResult, PhState, Site
from annotate.settings import Settings
from annotate.tables import rule_table_checksums

SITE = pa.struct(
    [
        ("atom", pa.int32()),
        ("kind", pa.string()),
        ("group", pa.string()),
        ("pka", pa.float64()),
        ("pka_sd", pa.float64()),
        ("explain", pa.string()),
    ]
)
SPECIES = pa.struct([("smiles", pa.string()), ("charge", pa.int32()), ("fraction", pa.float64())])
PH_STATE = pa.struct(
    [
        ("ph", pa.float64()),
        ("charge_mean", pa.float64()),
        ("charge", pa.int32()),
        ("smiles", pa.string()),
        ("fraction", pa.float64()),
        ("species", pa.list_(SPECIES)),
    ]
)
ANNOTATION_SCHEMA = pa.schema(
    [
        ("library", pa.string()),
        ("input_index", pa.int64()),
        ("id", pa.string()),
        ("status", pa.string()),
        ("message", pa.string()),
        ("parent_smiles", pa.string()),
        ("sites", pa.list_(SITE)),
        ("macro_pka", pa.list_(pa.float64())),
        ("ph_states", pa.list_(PH_STATE)),
    ]
)
CHUNK_SCHEMA = pa.schema(
    [
        ("input_index", pa.int64()),
        ("id", pa.string()),
        ("record", pa.string()),
        ("read_error", pa.string()),
        ("read_warning", pa.string()),
    ]
)
RESERVED_NAMES = frozenset(ANNOTATION_SCHEMA.names) | frozenset(CHUNK_SCHEMA.names)
INPUT_PREFIX = "input_"

NOTICE = (
    "pKa values and protonation states are computed estimates. Verify decisions that "
    "matter (formulation, safety, dosing) with measurements and qualified review."
)
META_PREFIX = "ionotate."


def carried_name(name: str) -> str:
    """Output name of an input column; the prefix keeps our own columns unambiguous."""
    return INPUT_PREFIX + name if name in RESERVED_NAMES else name


def carried_names(names: Sequence[str]) -> list[str]:
    """Output names of input columns; two inputs must not end up with one name."""
    out = [carried_name(n) for n in names]
    seen: dict[str, str] = {}
    for original, new in zip(names, out, strict=True):
        if new in seen:
            raise ValueError(
                f"input columns {seen[new]!r} and {original!r} would both be written as {new!r}; "
                "rename one of them in the input"
            )
        seen[new] = original
    return out


def input_fields(schema: pa.Schema, *, core: pa.Schema) -> list[pa.Field]:
    """The carried input columns of a chunk or annotated file: everything after ``core``."""
    return [f for f in schema if f.name not in core.names]


def output_schema(carried: Sequence[pa.Field], *, metadata: Mapping[str, str] | None = None) -> pa.Schema:
    """The annotated schema of one library: the contract plus its carried input columns."""
    schema = pa.schema([*ANNOTATION_SCHEMA, *carried])
    return schema.with_metadata(dict(metadata)) if metadata else schema


def run_metadata(
    *, library: str, source: Mapping[str, str], settings: Settings, version: str
) -> dict[str, str]:
    """Key-value metadata written into every annotated file so it documents its own run."""
    settings_dict = {k: (str(v) if isinstance(v, Path) else v) for k, v in asdict(settings).items()}
    return {
        META_PREFIX + "notice": NOTICE,
        META_PREFIX + "version": version,
        META_PREFIX + "library": library,
        META_PREFIX + "source": json.dumps(dict(source), sort_keys=True),
        META_PREFIX + "settings": json.dumps(settings_dict, sort_keys=True),
        META_PREFIX + "rule_tables": json.dumps(rule_table_checksums(settings.user_rules), sort_keys=True),
    }


def read_run_metadata(schema: pa.Schema) -> dict[str, str]:
    """The ``ionotate.*`` entries of a file's metadata, prefix stripped."""
    raw = schema.metadata or {}
    prefix = META_PREFIX.encode()
    return {k[len(prefix) :].decode(): v.decode() for k, v in raw.items() if k.startswith(prefix)}


def _site_row(site: Site) -> dict[str, object]:
    return {
        "atom": site.atom,
        "kind": site.kind,
        "group": site.group,
        "pka": site.pka,
        "pka_sd": site.pka_sd,
        "explain": site.explain,
    }


def _ph_state_row(state: PhState) -> dict[str, object]:
    dominant = state.species[0] if state.species else None
    return {
        "ph": state.ph,
        "charge_mean": state.charge_mean,
        "charge": dominant.charge if dominant else None,
        "smiles": dominant.smiles if dominant else None,
        "fraction": dominant.fraction if dominant else None,
        "species": [{"smiles": s.smiles, "charge": s.charge, "fraction": s.fraction} for s in state.species],
    }


def result_row(result: MoleculeResult) -> dict[str, object]:
    """One MoleculeResult as a row of the contract; an error row carries no chemistry."""
    failed = result.status == "error"
    return {
        "status": result.status,
        "message": result.message,
        "parent_smiles": None if failed else result.parent_smiles,
        "sites": None if failed else [_site_row(s) for s in result.sites],
        "macro_pka": None if failed else sorted(result.macro_pka),
        "ph_states": None if failed else [_ph_state_row(p) for p in result.ph_states],
    }


def annotation_table(
    results: Sequence[MoleculeResult], *, library: str, input_index: Sequence[int], ids: Sequence[str]
) -> pa.Table:
    """The contract columns for a run of results, in :data:`ANNOTATION_SCHEMA` order."""
    if not len(results) == len(input_index) == len(ids):
        raise ValueError(
            f"{len(results)} results for {len(input_index)} indices and {len(ids)} ids; these must match"
        )
    rows = [
        {"library": library, "input_index": i, "id": id_, **result_row(r)}
        for r, i, id_ in zip(results, input_index, ids, strict=True)
    ]
    return pa.Table.from_pylist(rows, schema=ANNOTATION_SCHEMA)
