"""Docking-ready species structures: each protonation state as a molecule with hydrogens.

Species are rebuilt by editing the parent's atoms in place, so 3D input keeps
its heavy-atom coordinates exactly and no stereo tag is created or dropped.
A base nitrogen that becomes a potential stereocentre on protonation stays
unspecified: its configuration is not known, only drawn (in 3D input the new
hydrogen's position is a geometric choice, not a claim).
"""

from __future__ import annotations

import logging
import os
from collections.abc import Iterable, Mapping
from typing import Literal

from rdkit import Chem
from rdkit.Chem import AllChem

from annotate.engine import Annotated, annotate_with_parent
from annotate.io.atomic import atomic_path
from annotate.results import MoleculeResult, Species
from annotate.ruleset import load_ruleset
from annotate.settings import Settings
from annotate.species.build import species_mol

Which = Literal["dominant", "all"]
SMILES_HEADER = ("smiles", "id", "ph", "charge", "fraction")
_LOG = logging.getLogger(__name__)
#: force-field steps for the clean-up after embedding; a quick relaxation, not a minimum
_CLEANUP_ITERATIONS = 200


def docking_records(
    mol: Chem.Mol | None,
    *,
    id: str,
    settings: Settings,
    which: Which,
    max_per_molecule: int,
    embed_3d: bool,
    seed: int,
) -> list[Chem.Mol]:
    """Species of one input molecule, at every configured pH, as molecules with explicit H.

    Annotates ``mol`` and hands the result to :func:`species_records`; the
    molecule's own SD properties are carried. A record that cannot be built
    gives ``[]`` (the reason is logged) so one molecule never stops a library.
    """
    load_ruleset(settings.user_rules)  # a bad rule file stops the export, not a record
    if mol is None:
        return []
    annotated = annotate_with_parent(mol, id=id, settings=settings)
    return species_records(
        annotated,
        id=id,
        properties=_input_properties(mol),
        which=which,
        max_per_molecule=max_per_molecule,
        embed_3d=embed_3d,
        seed=seed,
    )


def species_records(
    annotated: Annotated,
    *,
    id: str,
    properties: Mapping[str, str],
    which: Which,
    max_per_molecule: int,
    embed_3d: bool,
    seed: int,
) -> list[Chem.Mol]:
    """Docking records of an annotation already made, so a chunk job parses and annotates once.

    ``which="dominant"`` gives the most abundant species per pH; ``"all"`` every
    species the annotation keeps (above ``settings.min_fraction``). At most
    ``max_per_molecule`` records per pH, in pH order then rank, so that each
    pH's export gets the same cap whatever other pH values are configured. 3D input keeps
    its coordinates (``embed_3d`` is ignored); otherwise 2D input coordinates
    are kept or one depiction drawn for all species, or with ``embed_3d`` one
    seeded conformer per species is generated. ``properties`` become SD fields.
    Never raises for a record: a failure gives ``[]`` and a logged reason.
    """
    if which not in ("dominant", "all"):
        raise ValueError(f"which must be 'dominant' or 'all', not {which!r}")
    if max_per_molecule < 1:
        raise ValueError(f"max_per_molecule must be at least 1, not {max_per_molecule}")
    result = annotated.result
    if result.status == "error" or annotated.parent is None:
        _LOG.warning("%s: no structures written: %s", id, result.message or "annotation failed")
        return []
    try:
        return _records(
            annotated,
            id=id,
            properties=properties,
            which=which,
            limit=max_per_molecule,
            embed_3d=embed_3d,
            seed=seed,
        )
    except Exception as exc:  # one bad record must never stop an export
        _LOG.warning("%s: no structures written: %s: %s", id, type(exc).__name__, exc)
        return []


def _records(
    annotated: Annotated,
    *,
    id: str,
    properties: Mapping[str, str],
    which: Which,
    limit: int,
    embed_3d: bool,
    seed: int,
) -> list[Chem.Mol]:
    result, parent, sites = annotated.result, annotated.parent, annotated.parent_sites
    assert parent is not None
    has_3d = parent.GetNumConformers() > 0 and parent.GetConformer().Is3D()
    if not has_3d and not embed_3d and parent.GetNumConformers() == 0:
        parent = Chem.Mol(parent)  # one depiction serves every species: they share the heavy atoms
        AllChem.Compute2DCoords(parent)
    records: list[Chem.Mol] = []
    for state in result.ph_states:
        chosen = state.species[:1] if which == "dominant" else state.species[:limit]
        for rank, species in enumerate(chosen, start=1):
            structure = _placed(species_mol(parent, sites, species.protonated), has_3d=has_3d, embed_3d=embed_3d, seed=seed)
            _label(structure, id=id, ph=state.ph, rank=rank, species=species, result=result, properties=properties)
            records.append(structure)
    return records


def _placed(species: Chem.Mol, *, has_3d: bool, embed_3d: bool, seed: int) -> Chem.Mol:
    """Explicit hydrogens with coordinates that suit the input's dimensionality."""
    if embed_3d and not has_3d:
        return _embedded(species, seed=seed)
    return Chem.AddHs(species, addCoords=True)


def _embedded(species: Chem.Mol, *, seed: int) -> Chem.Mol:
    mol = Chem.AddHs(species)
    params = AllChem.ETKDGv3()
    params.randomSeed = seed
    if AllChem.EmbedMolecule(mol, params) < 0:
        raise RuntimeError("3D embedding failed")
    if AllChem.MMFFHasAllMoleculeParams(mol):
        AllChem.MMFFOptimizeMolecule(mol, maxIters=_CLEANUP_ITERATIONS)
    elif AllChem.UFFHasAllMoleculeParams(mol):
        AllChem.UFFOptimizeMolecule(mol, maxIters=_CLEANUP_ITERATIONS)
    return mol


def _input_properties(mol: Chem.Mol) -> dict[str, str]:
    """SD properties as text; private and computed RDKit properties are not data."""
    return {k: str(v) for k, v in mol.GetPropsAsDict(includePrivate=False, includeComputed=False).items()}


def one_line(text: str) -> str:
    """Text for a place where a line break or tab would end the field (SD title, SD field
    name, SMILES-file column): such characters become spaces."""
    return " ".join(text.splitlines()).replace("\t", " ")


def _sd_name(name: str) -> str:
    """An SD field name sits between angle brackets on one header line."""
    return one_line(name).replace("<", "_").replace(">", "_")


def _sd_value(text: str) -> str:
    """An SD data item ends at a blank line and a record at a ``$$$$`` line, so a value
    keeps its lines but loses blank ones, and a ``$$$$`` line gets a leading space."""
    lines = [line for line in text.splitlines() if line.strip()]
    return "\n".join(" " + line if line.startswith("$$$$") else line for line in lines)


def _label(
    mol: Chem.Mol,
    *,
    id: str,
    ph: float,
    rank: int,
    species: Species,
    result: MoleculeResult,
    properties: Mapping[str, str],
) -> None:
    """Input properties first, so our own names win a clash and always mean one thing.

    Numbers are stored as their shortest exact text (``7.4``, not the 17 digits RDKit
    would write for a double); ``GetDoubleProp`` still reads them back exactly. Ids
    and input properties are made safe for the SD and SMILES files (line breaks,
    tabs, ``$$$$`` lines); the annotated Parquet keeps them exactly as read.
    """
    for key, value in properties.items():
        mol.SetProp(_sd_name(key), _sd_value(value))
    mol.SetProp("_Name", one_line(id))
    mol.SetProp("ionotate_id", one_line(id))
    mol.SetProp("ionotate_ph", repr(float(ph)))
    mol.SetIntProp("ionotate_rank", rank)
    mol.SetIntProp("ionotate_charge", species.charge)
    mol.SetProp("ionotate_smiles", species.smiles)
    mol.SetProp("ionotate_fraction", repr(float(species.fraction)))
    mol.SetProp("ionotate_macro_pka", " ".join(f"{v:.2f}" for v in sorted(result.macro_pka)))


def sdf_text(mol: Chem.Mol) -> str:
    """One SD record (molblock, properties, ``$$$$``); chunk files store it so joining them is copying."""
    return Chem.SDWriter.GetText(mol)


def smiles_line(*, smiles: str, id: str, ph: float, charge: int, fraction: float) -> str:
    """One row of the SMILES file in :data:`SMILES_HEADER` order, newline included."""
    return "\t".join((smiles, id, f"{ph:g}", str(charge), f"{fraction:.6g}")) + "\n"


def record_smiles(mol: Chem.Mol) -> str:
    """The species' canonical SMILES, as in the annotated table (stored by the record's labels)."""
    return mol.GetProp("ionotate_smiles")


def write_sdf(records: Iterable[Chem.Mol], path: str | os.PathLike[str]) -> int:
    """Write records to an SD file atomically; returns how many were written."""
    count = 0
    with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8", newline="\n") as out:
        for mol in records:
            out.write(sdf_text(mol))
            count += 1
    return count


def write_smiles(records: Iterable[Chem.Mol], path: str | os.PathLike[str]) -> int:
    """Write a tab-separated SMILES file (with header) atomically; returns the row count."""
    count = 0
    with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8", newline="\n") as out:
        out.write("\t".join(SMILES_HEADER) + "\n")
        for mol in records:
            out.write(
                smiles_line(
                    smiles=record_smiles(mol),
                    id=mol.GetProp("ionotate_id"),
                    ph=mol.GetDoubleProp("ionotate_ph"),
                    charge=mol.GetIntProp("ionotate_charge"),
                    fraction=mol.GetDoubleProp("ionotate_fraction"),
                )
            )
            count += 1
    return count
