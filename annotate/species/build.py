"""Species structures: the parent with each site's proton added or removed."""

from __future__ import annotations

from collections.abc import Sequence

from rdkit import Chem

from annotate.results import Site


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


def _edited(parent: Chem.Mol, sites: Sequence[Site], protonated: Sequence[bool]) -> Chem.RWMol:
    mol = Chem.RWMol(parent)
    leaving: list[int] = []
    for site, has_proton in zip(sites, protonated, strict=True):
        atom = mol.GetAtomWithIdx(site.atom)
        if site.kind == "acid" and not has_proton:
            if atom.GetTotalNumHs() == 0:  # its only protons are drawn atoms, e.g. CD3NO2
                leaving += [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1][:1]
                atom.SetFormalCharge(atom.GetFormalCharge() - 1)
            else:
                _shift(atom, charge=-1, hydrogens=-1)
        elif site.kind == "base" and has_proton:
            _shift(atom, charge=+1, hydrogens=+1)
    for index in sorted(leaving, reverse=True):
        mol.RemoveAtom(index)
    return mol


def _shift(atom: Chem.Atom, *, charge: int, hydrogens: int) -> None:
    total_h = atom.GetTotalNumHs()
    atom.SetFormalCharge(atom.GetFormalCharge() + charge)
    atom.SetNoImplicit(True)
    atom.SetNumExplicitHs(max(0, total_h + hydrogens))

