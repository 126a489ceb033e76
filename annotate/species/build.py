"""Species structures: the parent with each site's proton added or removed."""

from __future__ import annotations

from collections.abc import Sequence

from rdkit import Chem

from annotate.results import Site

#: an atom's state before an edit: formal charge, no-implicit flag, explicit H count
_AtomState = tuple[int, bool, int]


def species_mol(parent: Chem.Mol, sites: Sequence[Site], protonated: Sequence[bool]) -> Chem.Mol:
    """Return a sanitized copy of ``parent`` in the given protonation pattern.

    The parent holds every acid protonated and every base neutral; only sites
    that differ from that are edited. Coordinates, stereo tags and isotopes are
    kept because atoms are edited in place, never re-created; the one atom ever
    removed is a drawn hydrogen (a C-D label) that leaves as the site's proton. Raises
    ``Chem.rdchem.MolSanitizeException`` if a pattern gives an impossible valence.
    """
    mol = _edited(parent, sites, protonated)
    Chem.SanitizeMol(mol)
    return mol.GetMol()


def species_smiles(parent: Chem.Mol, sites: Sequence[Site], protonated: Sequence[bool]) -> str:
    """Canonical SMILES of a species, without the full sanitization a structure needs.

    Aromaticity and ring perception carry over from the parent; only valences of
    the edited atoms change, so a property-cache update (which still rejects an
    impossible valence) is all the SMILES writer needs. Several times faster.
    """
    mol = _edited(parent, sites, protonated)
    mol.UpdatePropertyCache(strict=True)
    return Chem.MolToSmiles(mol)


class SpeciesSmiles:
    """``species_smiles`` for many patterns of one parent, written from the parent itself.

    Copying the parent cost a third of writing a SMILES, so each pattern is applied
    to ``parent`` in place and undone right after. Only edited atoms need their valence
    recomputed: an atom's valence depends on nothing but its own charge, H count and
    bonds. While in use, ``parent`` must not be read elsewhere; its SMILES output-order
    property ends up describing the last species written. A pattern whose proton is a
    drawn H atom (removed, so not undone) is built on a copy.
    """

    def __init__(self, parent: Chem.Mol, sites: Sequence[Site]) -> None:
        self._parent = parent
        self._sites = sites

    def __call__(self, protonated: Sequence[bool]) -> str:
        saved: dict[int, _AtomState] = {}
        try:
            if _edit(self._parent, self._sites, protonated, saved):
                _restore(self._parent, saved)
                saved = {}
                return species_smiles(self._parent, self._sites, protonated)
            for index in sorted(saved):  # index order, as a whole-molecule update reports errors
                self._parent.GetAtomWithIdx(index).UpdatePropertyCache(strict=True)
            return Chem.MolToSmiles(self._parent)
        finally:
            _restore(self._parent, saved)


def _edited(parent: Chem.Mol, sites: Sequence[Site], protonated: Sequence[bool]) -> Chem.RWMol:
    mol = Chem.RWMol(parent)
    for index in sorted(_edit(mol, sites, protonated, {}), reverse=True):
        mol.RemoveAtom(index)
    return mol


def _edit(mol: Chem.Mol, sites: Sequence[Site], protonated: Sequence[bool], saved: dict[int, _AtomState]) -> list[int]:
    """Edit site atoms in place, keeping each one's first state in ``saved``; return the
    drawn H atoms that leave as protons (the caller removes them)."""
    leaving: list[int] = []
    for site, has_proton in zip(sites, protonated, strict=True):
        if site.kind == "acid" and not has_proton:
            atom = _editable(mol, site.atom, saved)
            if atom.GetTotalNumHs() == 0:  # its only protons are drawn atoms, e.g. CD3NO2
                leaving += [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1][:1]
                atom.SetFormalCharge(atom.GetFormalCharge() - 1)
            else:
                _shift(atom, charge=-1, hydrogens=-1)
        elif site.kind == "base" and has_proton:
            _shift(_editable(mol, site.atom, saved), charge=+1, hydrogens=+1)
    return leaving


def _editable(mol: Chem.Mol, index: int, saved: dict[int, _AtomState]) -> Chem.Atom:
    atom = mol.GetAtomWithIdx(index)
    if index not in saved:
        saved[index] = (atom.GetFormalCharge(), atom.GetNoImplicit(), atom.GetNumExplicitHs())
    return atom


def _restore(mol: Chem.Mol, saved: dict[int, _AtomState]) -> None:
    for index, (charge, no_implicit, explicit_hs) in saved.items():
        atom = mol.GetAtomWithIdx(index)
        atom.SetFormalCharge(charge)
        atom.SetNoImplicit(no_implicit)
        atom.SetNumExplicitHs(explicit_hs)
        atom.UpdatePropertyCache(strict=False)


def _shift(atom: Chem.Atom, *, charge: int, hydrogens: int) -> None:
    total_h = atom.GetTotalNumHs()
    atom.SetFormalCharge(atom.GetFormalCharge() + charge)
    atom.SetNoImplicit(True)
    atom.SetNumExplicitHs(max(0, total_h + hydrogens))
