"""Public entry points: one record in, one MoleculeResult out, never an exception.

The steps, each in its own module: parse (annotate.parse), neutral parent
(annotate.standardize), sites (annotate.sites), site pKa (annotate.pka),
microstates and species (annotate.species).
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import replace

import numpy as np
from rdkit import Chem

from annotate.parse import mol_from_molblock, mol_from_smiles
from annotate.pka.estimate import estimate_site
from annotate.pka.substituents import SubstituentIndex
from annotate.results import MoleculeResult, PhState, Site, Species, Term
from annotate.ruleset import RuleSet, load_ruleset
from annotate.settings import Settings
from annotate.sites.perceive import find_sites
from annotate.species.build import species_smiles
from annotate.species.microstates import MicrostateModel, build_model
from annotate.standardize import RecordError, parent_of

DEFAULT = Settings()
#: microstates below min_fraction * this are not turned into structures
_STRUCTURE_FLOOR = 0.1
#: most microstates turned into structures per pH, unless max_species asks for more
#: (a fixed 64 once cut off 1% of the population when every species was requested)
_STRUCTURE_BUDGET = 64


def annotate_smiles(smiles: str, *, id: str = "", settings: Settings = DEFAULT) -> MoleculeResult:
    mol, reason = mol_from_smiles(smiles)
    return annotate_mol(mol, id=id, settings=settings, reason=reason)


def annotate_molblock(block: str, *, id: str = "", settings: Settings = DEFAULT) -> MoleculeResult:
    mol, reason = mol_from_molblock(block)
    return annotate_mol(mol, id=id, settings=settings, reason=reason)


def annotate_many(smiles: Iterable[str], *, settings: Settings = DEFAULT) -> Iterator[MoleculeResult]:
    """Annotate SMILES in order; ids are the 0-based positions."""
    for i, smi in enumerate(smiles):
        yield annotate_smiles(smi, id=str(i), settings=settings)


def annotate_mol(
    mol: Chem.Mol | None, *, id: str = "", settings: Settings = DEFAULT, reason: str | None = None
) -> MoleculeResult:
    """Annotate an RDKit molecule (not modified). A None molecule becomes an error row."""
    rules = load_ruleset(settings.user_rules)  # a bad rule file stops the run, not a record
    if mol is None:
        return MoleculeResult(id=id, status="error", messages=(reason or "no molecule",))
    try:
        parent = parent_of(
            mol, keep_largest_fragment=settings.keep_largest_fragment, neutralize=settings.neutralize
        )
        return _annotate_parent(parent.mol, parent.messages, parent.warning, id, settings, rules)
    except RecordError as exc:
        return MoleculeResult(id=id, status="error", messages=(str(exc),))
    except Exception as exc:  # a record must never stop a library
        return MoleculeResult(id=id, status="error", messages=(f"internal error: {type(exc).__name__}: {exc}",))


def annotate_parent(mol: Chem.Mol, *, settings: Settings = DEFAULT) -> tuple[tuple[Site, ...], MicrostateModel]:
    """Sites and microstate model of an already standardised parent (used by exporters)."""
    rules = load_ruleset(settings.user_rules)
    sites = _sites(mol, rules)
    return sites, _model(mol, sites, settings, rules)


def _sites(mol: Chem.Mol, rules: RuleSet) -> tuple[Site, ...]:
    index = SubstituentIndex(mol, rules.substituents)
    return tuple(
        estimate_site(mol, m, table=rules.substituents, index=index, parent_terms=rules.parent_terms[m.rule.name])
        for m in find_sites(mol, rules.groups, rules.contexts)
    )


def _model(mol: Chem.Mol, sites: tuple[Site, ...], settings: Settings, rules: RuleSet) -> MicrostateModel:
    atoms = [s.atom for s in sites]
    distances, second = _site_distances(mol, atoms)
    return build_model(
        [s.kind for s in sites],
        [s.pka for s in sites],
        distances,
        second,
        base_charge=Chem.GetFormalCharge(mol),
        ph_values=settings.ph,
        table=rules.interactions,
    )


def _annotate_parent(
    mol: Chem.Mol, messages: tuple[str, ...], warning: bool, id: str, settings: Settings, rules: RuleSet
) -> MoleculeResult:
    sites = _sites(mol, rules)
    if not sites and not any(a.GetAtomicNum() == 6 for a in mol.GetAtoms()):
        # a lone counter-ion, water or a mineral acid the rules do not cover
        raise RecordError(f"no organic parent: {Chem.MolToSmiles(mol)} has no carbon and no ionizable site")
    model = _model(mol, sites, settings, rules)
    sites = _with_interactions(sites, model)
    parent_smiles = Chem.MolToSmiles(mol)
    notes = list(messages)
    if model.truncated:
        warning = True  # populations are approximate; a filter on status must see it
        notes.append(
            f"approximation: {len(sites)} sites exceed the exact limit; "
            f"{model.truncated} sites near the pH window fixed in their dominant form"
        )
    cache: dict[bytes, str] = {}
    states = tuple(_ph_state(mol, sites, model, ph, settings, cache) for ph in settings.ph)
    status = "warning" if warning else "ok"
    return MoleculeResult(
        id=id,
        status=status,
        messages=tuple(notes),
        parent_smiles=parent_smiles,
        sites=_renumbered(mol, sites),
        macro_pka=model.macro_pka,
        ph_states=states,
    )


def _with_interactions(sites: tuple[Site, ...], model: MicrostateModel) -> tuple[Site, ...]:
    """Report each site at its titration midpoint; the shift is a term of its own."""
    apparent = model.titration_pka([s.kind for s in sites], [s.pka for s in sites])
    out = []
    for site, value in zip(sites, apparent, strict=True):
        shift = round(float(value) - site.pka, 3)
        if abs(shift) < 0.01:
            out.append(site)
            continue
        term = Term("charge interaction with other sites", shift)
        out.append(replace(site, pka=round(site.pka + shift, 3), terms=site.terms + (term,)))
    return tuple(out)


def _renumbered(mol: Chem.Mol, sites: tuple[Site, ...]) -> tuple[Site, ...]:
    """Atom indices as in the molecule RDKit parses from ``parent_smiles`` (call after MolToSmiles)."""
    order = mol.GetProp("_smilesAtomOutputOrder").strip("[]").rstrip(",").split(",")
    position = {int(original): k for k, original in enumerate(order)}
    return tuple(replace(s, atom=position[s.atom]) for s in sites)


def _ph_state(
    mol: Chem.Mol,
    sites: tuple[Site, ...],
    model: MicrostateModel,
    ph: float,
    settings: Settings,
    cache: dict[bytes, str],
) -> PhState:
    fractions = model.fractions(ph)
    charge_mean = float((fractions * model.charges).sum())
    order = np.argsort(-fractions, kind="stable")
    floor = settings.min_fraction * _STRUCTURE_FLOOR
    merged: dict[str, list] = {}
    for k in order[: max(_STRUCTURE_BUDGET, settings.max_species)]:
        f = float(fractions[k])
        if f < floor and merged:
            break
        pattern = model.protonated[k]
        key = pattern.tobytes()
        if key not in cache:
            cache[key] = species_smiles(mol, sites, tuple(bool(x) for x in pattern))
        smi = cache[key]
        entry = merged.setdefault(smi, [0.0, int(model.charges[k]), tuple(bool(x) for x in pattern)])
        entry[0] += f
    ranked = sorted(merged.items(), key=lambda kv: -kv[1][0])
    kept = [
        Species(smi, charge, round(f, 6), pattern)
        for i, (smi, (f, charge, pattern)) in enumerate(ranked)
        if i == 0 or f >= settings.min_fraction
    ][: settings.max_species]
    return PhState(ph=ph, charge_mean=round(charge_mean, 4), species=tuple(kept))


def _site_distances(mol: Chem.Mol, atoms: list[int]) -> tuple[np.ndarray, np.ndarray]:
    """Bond counts between site atoms, and the other way round a shared ring (0 if none)."""
    n = len(atoms)
    dist = np.zeros((n, n), dtype=int)
    second = np.zeros((n, n), dtype=int)
    if n < 2:
        return dist, second
    matrix = Chem.GetDistanceMatrix(mol)
    rings = mol.GetRingInfo().AtomRings()
    for i, a in enumerate(atoms):
        for j, b in enumerate(atoms):
            if i == j:
                continue
            d = int(matrix[a, b])
            dist[i, j] = d
            shared = [len(r) for r in rings if a in r and b in r]
            if shared:
                second[i, j] = min(shared) - d
    return dist, second
