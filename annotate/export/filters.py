"""Charge filters over the annotated Parquet: keep the rows whose state at one pH fits.

Filters read the dominant species at a configured pH (no pKa is recomputed),
so a filter is only as good as the estimates behind it; verify decisions that
matter (formulation, safety, dosing) with measurements and qualified review.
"""

from __future__ import annotations

import json
import os
from collections.abc import Mapping, Sequence
from contextlib import ExitStack
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Literal

import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq
from rdkit import Chem

from annotate.io.atomic import atomic_path
from annotate.io.schema import META_PREFIX
from annotate.io.tables import parquet_batches
from annotate.settings import PH_TOLERANCE

IonClass = Literal["neutral", "acid", "base", "zwitterion", "permanent"]
ION_CLASSES: frozenset[str] = frozenset({"neutral", "acid", "base", "zwitterion", "permanent"})


@dataclass(frozen=True, slots=True)
class FilterSpec:
    """One named filter; ``None`` bounds and an empty ``classes`` set mean "any"."""

    name: str
    ph: float
    charge_min: int | None = None
    charge_max: int | None = None
    classes: frozenset[str] = field(default_factory=frozenset)
    min_neutral_fraction: float | None = None

    def __post_init__(self) -> None:
        unknown = set(self.classes) - ION_CLASSES
        if unknown:
            raise ValueError(f"filter {self.name!r}: unknown class(es) {sorted(unknown)}; use {sorted(ION_CLASSES)}")
        if self.charge_min is not None and self.charge_max is not None and self.charge_min > self.charge_max:
            raise ValueError(f"filter {self.name!r}: charge_min {self.charge_min} > charge_max {self.charge_max}")
        if not self.name or "/" in self.name or self.name.startswith("."):
            raise ValueError(f"filter name {self.name!r} must be a plain file name")
        object.__setattr__(self, "classes", frozenset(self.classes))


def ionization_class(parent_smiles: str, site_atoms: Sequence[int], dominant_smiles: str) -> IonClass:
    """What kind of charge the dominant species carries.

    ``permanent`` wins: the parent (already neutralised) holds a charged atom that
    is no ionizable site, such as a quaternary N, so no pH removes it. A bonded
    +/- pair (nitro, N-oxide) is one neutral group, not two ions, and is ignored
    everywhere. Otherwise the dominant species' charged centres decide.
    """
    parent = _charge_graph(parent_smiles)
    sites = set(site_atoms)
    if any(atom.GetIdx() not in sites for atom in _ionic_atoms(parent)):
        return "permanent"
    charges = {atom.GetFormalCharge() > 0 for atom in _ionic_atoms(_charge_graph(dominant_smiles))}
    if charges == {True, False}:
        return "zwitterion"
    if charges == {True}:
        return "base"
    if charges == {False}:
        return "acid"
    return "neutral"


def _charge_graph(smiles: str) -> Chem.Mol:
    """Charges and bonds are all that is read, so sanitization is skipped for speed."""
    mol = Chem.MolFromSmiles(smiles, sanitize=False)
    if mol is None:
        raise ValueError(f"unparsable SMILES in the annotated file: {smiles!r}")
    return mol


def _ionic_atoms(mol: Chem.Mol) -> list[Chem.Atom]:
    """Charged atoms not bonded to an atom of opposite charge."""
    return [
        atom
        for atom in mol.GetAtoms()
        if atom.GetFormalCharge()
        and not any(n.GetFormalCharge() * atom.GetFormalCharge() < 0 for n in atom.GetNeighbors())
    ]


def _state_at(ph: float) -> pl.Expr:
    """The ph_states entry at ``ph`` as a struct (null on error rows or an absent pH)."""
    return (
        pl.col("ph_states")
        .list.eval(pl.element().filter((pl.element().struct.field("ph") - ph).abs() < PH_TOLERANCE))
        .list.first()
    )


def _neutral_fraction(state: pl.Expr) -> pl.Expr:
    """Summed over the stored species only, so it is a lower bound on the true value."""
    species = state.struct.field("species")
    return species.list.eval(
        pl.when(pl.element().struct.field("charge") == 0)
        .then(pl.element().struct.field("fraction"))
        .otherwise(0.0)
    ).list.sum()


def _class_batch(batch: pl.Series) -> pl.Series:
    rows = batch.to_list()
    return pl.Series(
        [
            None
            if row["parent"] is None or row["dominant"] is None
            else ionization_class(row["parent"], row["atoms"] or [], row["dominant"])
            for row in rows
        ],
        dtype=pl.String,
    )


def class_expression(ph: float) -> pl.Expr:
    """The ionization class of every row at ``ph`` (null where there is no state)."""
    return pl.struct(
        parent=pl.col("parent_smiles"),
        atoms=pl.col("sites").list.eval(pl.element().struct.field("atom")),
        dominant=_state_at(ph).struct.field("smiles"),
    ).map_batches(_class_batch, return_dtype=pl.String, is_elementwise=True)


def filter_expression(spec: FilterSpec) -> pl.Expr:
    """A boolean expression: true where the row passes; error rows and absent pH never pass."""
    state = _state_at(spec.ph)
    charge = state.struct.field("charge")
    keep = (pl.col("status") != "error") & charge.is_not_null()
    if spec.charge_min is not None:
        keep &= charge >= spec.charge_min
    if spec.charge_max is not None:
        keep &= charge <= spec.charge_max
    if spec.min_neutral_fraction is not None:
        keep &= _neutral_fraction(state) >= spec.min_neutral_fraction
    if spec.classes:
        keep &= class_expression(spec.ph).is_in(sorted(spec.classes))
    return keep.fill_null(False)


def apply_filters(
    annotated_parquet: str | os.PathLike[str],
    specs: Sequence[FilterSpec],
    outputs: Sequence[str | os.PathLike[str]],
) -> dict[str, int]:
    """Write each filter's kept rows to its path in ``outputs`` (all columns, input order); returns kept counts.

    One pass over the file, a batch at a time, every filter at once: memory is one
    batch whatever the library's size, and the kept rows keep the source's exact
    Arrow types. A filter at a pH that was never computed fails the whole call,
    and then no file is written.
    """
    names = [s.name for s in specs]
    if len(set(names)) != len(names):
        raise ValueError(f"filter names must be unique: {names}")
    if len(outputs) != len(specs):
        raise ValueError(f"{len(specs)} filters but {len(outputs)} output paths")
    source = Path(annotated_parquet)
    schema = pq.read_schema(source)
    counts = dict.fromkeys(names, 0)
    present: set[float] = set()
    with ExitStack() as stack:
        writers = [_writer(stack, Path(out), schema, spec) for spec, out in zip(specs, outputs, strict=True)]
        for batch in parquet_batches(source):
            frame = pl.from_arrow(batch)
            present.update(_computed_phs(frame))
            masks = frame.select(filter_expression(spec).alias(str(k)) for k, spec in enumerate(specs))
            for spec, writer, mask in zip(specs, writers, masks.iter_columns(), strict=True):
                kept = batch.filter(mask.to_arrow())
                if kept.num_rows:
                    writer.write_batch(kept)
                counts[spec.name] += kept.num_rows
        _require_phs(present, specs)
    return counts


def _writer(stack: ExitStack, final: Path, schema: pa.Schema, spec: FilterSpec) -> pq.ParquetWriter:
    """A Parquet writer on a temporary file that becomes ``final`` only if every filter succeeds."""
    tmp = stack.enter_context(atomic_path(final))
    return stack.enter_context(pq.ParquetWriter(tmp, schema.with_metadata(_file_metadata(schema.metadata or {}, spec))))


def _file_metadata(source: Mapping[bytes, bytes], spec: FilterSpec) -> dict[str, str]:
    """Keep the run's own metadata (settings, notice) and record the filter that was applied."""
    kept = {k.decode(): v.decode() for k, v in source.items()}
    described = asdict(spec) | {"classes": sorted(spec.classes)}
    return kept | {META_PREFIX + "filter": json.dumps(described, sort_keys=True)}


def _computed_phs(frame: pl.DataFrame) -> list[float]:
    return frame.select(pl.col("ph_states").explode().struct.field("ph").drop_nulls().unique()).to_series().to_list()


def _require_phs(present: set[float], specs: Sequence[FilterSpec]) -> None:
    """A filter at a pH that was never computed would silently keep nothing."""
    if not present:
        return  # no annotated rows: every filter keeps nothing, which is correct
    for spec in specs:
        if not any(abs(spec.ph - p) < PH_TOLERANCE for p in present):
            raise ValueError(f"filter {spec.name!r}: pH {spec.ph} was not computed; available: {sorted(present)}")
