"""Reduce an input record to the neutral parent that ionization is computed for."""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem
from rdkit.Chem import rdqueries
from rdkit.Chem.MolStandardize import rdMolStandardize

#: elements the group and substituent tables are written for
ORGANIC = frozenset({1, 5, 6, 7, 8, 9, 14, 15, 16, 17, 34, 35, 53})
#: heavy atoms above which a molecule is annotated but flagged as outside the
#: drug-like range the constants were collected on (common practice)
LARGE_MOLECULE = 150


class RecordError(ValueError):
    """A record that cannot be annotated; the message is shown to the user."""


@dataclass(frozen=True, slots=True)
class Parent:
    mol: Chem.Mol
    messages: tuple[str, ...]
    warning: bool


def parent_of(
    mol: Chem.Mol, *, keep_largest_fragment: bool = True, neutralize: bool = True, copy: bool = True
) -> Parent:
    """Largest organic fragment, neutralised where a charge only reflects a salt form.

    Stereochemistry, isotopes and coordinates are kept. Permanent charges
    (quaternary N, N-oxides as drawn) stay. Raises RecordError for records
    Ionotate cannot treat (radicals, metals bonded in the parent, no heavy atoms).
    ``mol`` is not modified; with ``copy=False`` it may be, and may become the
    parent: for a caller that made ``mol`` itself, as the copy costs more than the checks.
    """
    messages: list[str] = []
    warning = False
    scan = _scan(mol)
    if scan.dummy:
        raise RecordError("dummy atom '*' (attachment point or query atom): not a complete molecule")
    if mol.GetNumAtoms() == 0:
        raise RecordError("empty structure (no atoms)")
    if mol.GetNumHeavyAtoms() == 0:
        raise RecordError("no heavy atoms (hydrogen only)")
    if len(Chem.GetMolFrags(mol)) > 1:
        fragments = Chem.GetMolFrags(mol, asMols=True, sanitizeFrags=True)
        if not keep_largest_fragment:
            raise RecordError(f"{len(fragments)} fragments and fragment removal is switched off")
        ranked = sorted(fragments, key=_fragment_rank, reverse=True)
        kept, dropped = ranked[0], ranked[1:]
        names = ", ".join(sorted(Chem.MolToSmiles(f) for f in dropped))
        messages.append(f"removed {len(dropped)} fragment(s): {names}")
        mol = kept
        scan = _scan(mol)
    elif copy:
        mol = Chem.Mol(mol)
    if scan.unsupported:
        raise RecordError(f"unsupported element(s) in the parent: {', '.join(scan.unsupported)}")
    if scan.radical:
        raise RecordError("radical: an atom has unpaired electrons")
    if scan.hydrogens:
        exchangeable = [a for a in mol.GetAtoms() if _exchangeable_isotope(a)]
        for atom in exchangeable:
            atom.SetIsotope(0)  # a copy, a new fragment, or a molecule the caller lets go
        if exchangeable:
            messages.append(
                f"replaced {len(exchangeable)} hydrogen isotope(s) on N/O/S by H: they exchange with water"
            )
        mol = Chem.RemoveHs(mol, sanitize=True)
    if neutralize and scan.charged:
        before = len(mol.GetAtomsMatchingQuery(_CHARGED))
        uncharged = _UNCHARGER.uncharge(mol)
        if Chem.SanitizeMol(uncharged, catchErrors=True) == Chem.SanitizeFlags.SANITIZE_NONE:
            mol = uncharged
        else:  # e.g. PF6-: the neutral form would break a valence rule
            messages.append("kept the drawn charges: the neutral form is not a valid structure")
        after = len(mol.GetAtomsMatchingQuery(_CHARGED))
        if after < before:
            messages.append(f"neutralised {before - after} charged atom(s)")
    heavy = mol.GetNumHeavyAtoms()
    if heavy > LARGE_MOLECULE:
        messages.append(f"large molecule ({heavy} heavy atoms): constants collected on small molecules")
        warning = True
    return Parent(mol, tuple(messages), warning)


_UNCHARGER = rdMolStandardize.Uncharger(canonicalOrder=True)


@dataclass(frozen=True, slots=True)
class _Scan:
    dummy: bool
    hydrogens: bool
    charged: bool
    radical: bool
    unsupported: tuple[str, ...]


def _scan(mol: Chem.Mol) -> _Scan:
    """Every check in one pass, over only the atoms some check is about.

    Atom iteration from Python is the slow part, and most molecules have no such
    atom: one query (``_NOTABLE``) finds them in RDKit. The matches are read by index:
    iterating RDKit's sequence ends by throwing a C++ exception, which costs more
    than the whole query.
    """
    dummy = hydrogens = charged = radical = False
    unsupported: set[str] = set()
    matches = mol.GetAtomsMatchingQuery(_NOTABLE)
    for i in range(len(matches)):
        atom = matches[i]
        z = atom.GetAtomicNum()
        dummy |= z == 0
        hydrogens |= z == 1
        charged |= atom.GetFormalCharge() != 0
        radical |= atom.GetNumRadicalElectrons() != 0
        if z and z not in ORGANIC:
            unsupported.add(atom.GetSymbol())
    return _Scan(dummy, hydrogens, charged, radical, tuple(sorted(unsupported)))


def _notable_atoms() -> Chem.Atom:
    """Query for every atom that may set a _Scan flag: charged, radical, or outside B..F.

    Outside B..F covers dummies, H and every element not in ORGANIC (which holds all of
    B..F); the organic ones above F (P, S, halogens) are few per molecule and sorted
    out in Python. One flat query: a nested one listing ORGANIC element by element took
    five times longer.
    """
    query = rdqueries.AtomNumLessQueryAtom(5)
    for extra in (
        rdqueries.AtomNumGreaterQueryAtom(9),
        rdqueries.FormalChargeEqualsQueryAtom(0, negate=True),
        rdqueries.NumRadicalElectronsGreaterQueryAtom(0),
    ):
        query.ExpandQuery(extra, Chem.CompositeQueryType.COMPOSITE_OR)
    return query


_NOTABLE = _notable_atoms()
_CHARGED = rdqueries.FormalChargeEqualsQueryAtom(0, negate=True)


def _exchangeable_isotope(atom: Chem.Atom) -> bool:
    """A D or T on a heteroatom: kept as a graph atom it would count as a substituent of
    the site and block deprotonation, yet in water it is an ordinary H within seconds."""
    return (
        atom.GetAtomicNum() == 1
        and atom.GetIsotope() > 0
        and any(n.GetAtomicNum() not in (1, 6) for n in atom.GetNeighbors())
    )


def _fragment_rank(frag: Chem.Mol) -> tuple[bool, bool, int, int, str]:
    """Carbon-bearing fragments first (a sulfate or PF6 counter-ion can outweigh a small
    amine), then supported elements only, most heavy atoms, most carbons, SMILES order,
    so ties break the same way. An organometallic is kept, to be reported, not dropped."""
    carbons = sum(1 for a in frag.GetAtoms() if a.GetAtomicNum() == 6)
    supported = all(a.GetAtomicNum() in ORGANIC for a in frag.GetAtoms())
    return carbons > 0, supported, frag.GetNumHeavyAtoms(), carbons, Chem.MolToSmiles(frag)
