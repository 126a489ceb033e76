"""Public entry points: one record in, one MoleculeResult out, never an exception.

The steps, each in its own module: parse (annotate.parse), neutral parent
(annotate.standardize), sites (annotate.sites), site pKa (annotate.pka),
microstates and species (annotate.species).
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass, replace

from rdkit import Chem

from annotate.parse import mol_from_molblock, mol_from_smiles
from annotate.pka.estimate import estimate_site
from annotate.pka.substituents import SubstituentIndex
from annotate.results import MoleculeResult, PhState, Site, Species, Term
from annotate.ruleset import RuleSet, load_ruleset
from annotate.settings import Settings
from annotate.sites.perceive import find_sites
from annotate.species.build import SpeciesSmiles
from annotate.species.microstates import MicrostateModel, build_model
from annotate.standardize import RecordError, parent_of

DEFAULT = Settings()
#: most microstates turned into structures per pH, unless max_species asks for more
#: (a fixed 64 once cut off 1% of the population when every species was requested)
_STRUCTURE_BUDGET = 64


def annotate_smiles(smiles: str, *, id: str = "", settings: Settings = DEFAULT) -> MoleculeResult:
    mol, reason = mol_from_smiles(smiles)
    return annotate_with_parent(mol, id=id, settings=settings, reason=reason, owned=True).result


def annotate_molblock(block: str, *, id: str = "", settings: Settings = DEFAULT) -> MoleculeResult:
    mol, reason = mol_from_molblock(block)
    return annotate_with_parent(mol, id=id, settings=settings, reason=reason, owned=True).result


def annotate_many(smiles: Iterable[str], *, settings: Settings = DEFAULT) -> Iterator[MoleculeResult]:
    """Annotate SMILES in order; ids are the 0-based positions."""
    for i, smi in enumerate(smiles):
        yield annotate_smiles(smi, id=str(i), settings=settings)


def annotate_mol(
    mol: Chem.Mol | None, *, id: str = "", settings: Settings = DEFAULT, reason: str | None = None
) -> MoleculeResult:
    """Annotate an RDKit molecule (not modified). A None molecule becomes an error row."""
    return annotate_with_parent(mol, id=id, settings=settings, reason=reason).result


@dataclass(frozen=True, slots=True)
class Annotated:
    """A result plus what structure exporters need to rebuild its species.

    ``parent`` keeps the input's coordinates; ``parent_sites`` are the result's
    sites numbered in ``parent`` (the result numbers them as in ``parent_smiles``).
    Both are None / empty for an error row.
    """

    result: MoleculeResult
    parent: Chem.Mol | None = None
    parent_sites: tuple[Site, ...] = ()


def annotate_with_parent(
    mol: Chem.Mol | None,
    *,
    id: str = "",
    settings: Settings = DEFAULT,
    reason: str | None = None,
    owned: bool = False,
) -> Annotated:
    """As annotate_mol, keeping the parent, so exports need not annotate twice.

    ``owned=True`` says the caller made ``mol`` and will not use it again, so it is
    not copied first (it may be modified, and may become ``parent``).
    """
    rules = load_ruleset(settings.user_rules)  # a bad rule file stops the run, not a record
    if mol is None:
        return Annotated(MoleculeResult(id=id, status="error", messages=(reason or "no molecule",)))
    try:
        parent = parent_of(
            mol,
            keep_largest_fragment=settings.keep_largest_fragment,
            neutralize=settings.neutralize,
            copy=not owned,
        )
        return _annotate_parent(parent.mol, parent.messages, parent.warning, id, settings, rules)
    except RecordError as exc:
        return Annotated(MoleculeResult(id=id, status="error", messages=(str(exc),)))
    except Exception as exc:  # a record must never stop a library
        message = f"internal error: {type(exc).__name__}: {exc}"
        return Annotated(MoleculeResult(id=id, status="error", messages=(message,)))


def _sites(mol: Chem.Mol, rules: RuleSet) -> tuple[Site, ...]:
    index = SubstituentIndex(mol, rules.substituents)
    return tuple(
        estimate_site(mol, m, table=rules.substituents, index=index, parent_terms=rules.parent_terms[m.rule.name])
        for m in find_sites(mol, rules.matcher)
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
) -> Annotated:
    sites = _sites(mol, rules)
    if not sites and not mol.HasSubstructMatch(_CARBON):
        # a lone counter-ion, water or a mineral acid the rules do not cover
        raise RecordError(f"no organic parent: {Chem.MolToSmiles(mol)} has no carbon and no ionizable site")
    model = _model(mol, sites, settings, rules)
    sites = _with_interactions(sites, model)
    parent_smiles = Chem.MolToSmiles(mol)
    renumbered = _renumbered(mol, sites)  # before species SMILES are written from mol
    notes = list(messages)
    if model.truncated:
        warning = True  # populations are approximate; a filter on status must see it
        notes.append(
            f"approximation: {len(sites)} sites exceed the exact limit; "
            f"{model.truncated} sites near the pH window fixed in their dominant form"
        )
    species = _SpeciesTable(mol, sites, model, parent_smiles)
    states = tuple(_ph_state(species, model, ph, settings) for ph in settings.ph)
    status = "warning" if warning else "ok"
    result = MoleculeResult(
        id=id,
        status=status,
        messages=tuple(notes),
        parent_smiles=parent_smiles,
        sites=renumbered,
        macro_pka=model.macro_pka,
        ph_states=states,
    )
    return Annotated(result, mol, sites)


#: any carbon atom
_CARBON = Chem.MolFromSmarts("[#6]")


def _with_interactions(sites: tuple[Site, ...], model: MicrostateModel) -> tuple[Site, ...]:
    """Report each site at its titration midpoint; the shift is a term of its own."""
    if len(sites) < 2:  # no other site to shift it
        return sites
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
    if not sites:
        return sites
    order = mol.GetProp("_smilesAtomOutputOrder").strip("[]").rstrip(",").split(",")
    return tuple(_on_atom(s, order.index(str(s.atom))) for s in sites)


def _on_atom(site: Site, atom: int) -> Site:
    """``replace(site, atom=atom)`` without its generic machinery, which took twice as long."""
    return Site(atom, site.kind, site.group, site.category, site.pka, site.pka_sd, site.terms)


class _SpeciesTable:
    """What every pH of one molecule shares: per microstate, its symmetry key and species.

    The reference microstate (acids protonated, bases neutral) is the parent itself,
    so its SMILES is the parent's and is not built again. Other species are written
    from ``mol`` edited in place (see SpeciesSmiles).
    """

    def __init__(self, mol: Chem.Mol, sites: tuple[Site, ...], model: MicrostateModel, parent_smiles: str) -> None:
        self._mol = mol
        self._sites = sites
        self._model = model
        self._parent_smiles = parent_smiles
        self._reference = tuple(s.kind == "acid" for s in sites)
        self._write = SpeciesSmiles(mol, sites)
        self._ranks: list[int] | None = None
        self._keys: dict[int, tuple] = {}
        self._entries: dict[int, tuple[str, int, tuple[bool, ...]]] = {}

    def key(self, state: int) -> tuple:
        """Equal for microstates that differ only by which symmetry-equivalent site holds a proton."""
        key = self._keys.get(state)
        if key is None:
            if self._ranks is None:
                self._ranks = _site_symmetry(self._mol, self._sites)
            key = self._keys[state] = tuple(sorted(zip(self._ranks, self._model.pattern(state))))
        return key

    def entry(self, state: int) -> tuple[str, int, tuple[bool, ...]]:
        """SMILES, net charge and protonation pattern of a microstate."""
        entry = self._entries.get(state)
        if entry is None:
            pattern = self._model.pattern(state)
            smiles = self._parent_smiles if pattern == self._reference else self._write(pattern)
            entry = self._entries[state] = (smiles, self._model.charge(state), pattern)
        return entry


def _ph_state(species: _SpeciesTable, model: MicrostateModel, ph: float, settings: Settings) -> PhState:
    """Species at one pH: microstates merged when they are the same molecule.

    Microstates that differ only by which of several symmetry-equivalent sites
    holds the proton are one species (succinate monoanion). They are grouped by
    the symmetry classes of their protonated sites first, so structures are built
    only for groups that are kept; a group of two or more is checked by SMILES.
    """
    populations = model.populations(ph, max(_STRUCTURE_BUDGET, settings.max_species))
    negligible = settings.min_fraction * 1e-3
    groups: dict[tuple, list[tuple[int, float]]] = {}
    for k, fraction in populations.ranked:
        if fraction < negligible and groups:
            break
        groups.setdefault(species.key(k), []).append((k, fraction))
    merged: dict[str, list] = {}
    for members in sorted(groups.values(), key=_by_total):
        total = sum(fraction for _, fraction in members)
        if merged and total < settings.min_fraction:
            break
        for k, fraction in members:
            smiles, charge, pattern = species.entry(k)
            entry = merged.setdefault(smiles, [0.0, charge, pattern])
            entry[0] += fraction
    ranked = sorted(merged.items(), key=lambda kv: -kv[1][0])
    kept = [
        Species(smi, charge, round(f, 6), pattern)
        for i, (smi, (f, charge, pattern)) in enumerate(ranked)
        if i == 0 or f >= settings.min_fraction
    ][: settings.max_species]
    return PhState(ph=ph, charge_mean=round(populations.charge_mean, 4), species=tuple(kept))


def _by_total(members: list[tuple[int, float]]) -> float:
    """Sort key, most abundant group first. Added one by one, left to right, as numpy
    scalars were before (Python 3.12's sum() of floats compensates rounding)."""
    total = 0.0
    for _, fraction in members:
        total += fraction
    return -total


def _site_symmetry(mol: Chem.Mol, sites: tuple[Site, ...]) -> list[int]:
    """Symmetry class of each site atom (equal for atoms a symmetry maps onto each other)."""
    if len(sites) < 2:
        return [0] * len(sites)
    classes = Chem.CanonicalRankAtoms(mol, breakTies=False)
    return [classes[s.atom] for s in sites]


def _site_distances(mol: Chem.Mol, atoms: list[int]) -> tuple[list[list[int]], list[list[int]]]:
    """Bond counts between site atoms, and the other way round a shared ring (0 if none).

    A shortest-path search per pair is far cheaper than the full distance matrix
    for the handful of sites a molecule has. Rings are read per site atom (index
    and size): RDKit hands the full ring list to Python element by element.
    """
    n = len(atoms)
    dist = [[0] * n for _ in range(n)]
    second = [[0] * n for _ in range(n)]
    if n < 2:
        return dist, second
    ring_info = mol.GetRingInfo()
    rings = [_atom_rings(ring_info, a) for a in atoms]
    for i in range(n):
        for j in range(i + 1, n):
            a, b = atoms[i], atoms[j]
            d = len(Chem.GetShortestPath(mol, a, b)) - 1 if a != b else 0
            dist[i][j] = dist[j][i] = d
            shared = [size for ring, size in rings[i].items() if ring in rings[j]]
            if shared:
                second[i][j] = second[j][i] = min(shared) - d
    return dist, second


def _atom_rings(ring_info: Chem.RingInfo, atom: int) -> dict[int, int]:
    """Ring index -> ring size, for the rings holding ``atom``."""
    if not ring_info.NumAtomRings(atom):
        return {}
    return dict(zip(ring_info.AtomMembers(atom), ring_info.AtomRingSizes(atom), strict=True))
