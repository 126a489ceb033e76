"""One molecule's atoms as plain Python data, read from RDKit once per atom.

Each RDKit accessor costs about a microsecond of wrapper overhead (more when
iterating ``GetAtoms()`` or ``AtomRings()``), and estimating a molecule's sites
asks the same few questions (element, neighbours, aromatic flag, rings) many
times over. So an atom is read on first use only, and only atoms the estimate
reaches are read at all. The tables are dicts that read a missing atom when
asked for it, so a repeated question costs one dict lookup. Reading an atom's
neighbours also keeps their RDKit atoms and elements: a walk outwards needs
nothing more of them before it reads their own neighbours.
"""

from __future__ import annotations

from functools import lru_cache

from rdkit import Chem

_INDEX = Chem.Atom.GetIdx
_ELEMENT = Chem.Atom.GetAtomicNum

#: (element, aromatic, explicit degree) of one atom
AtomData = tuple[int, bool, int]
#: (neighbour indices in RDKit's order, their elements) of one atom
Bonded = tuple[tuple[int, ...], tuple[int, ...]]


class _RDKitAtoms(dict[int, Chem.Atom]):
    __slots__ = ("mol",)

    def __missing__(self, index: int) -> Chem.Atom:
        atom = self[index] = self.mol.GetAtomWithIdx(index)
        return atom


class _Elements(dict[int, int]):
    __slots__ = ("atoms",)

    def __missing__(self, index: int) -> int:
        z = self[index] = self.atoms[index][0]
        return z


class _AtomData(dict[int, AtomData]):
    __slots__ = ("rdkit",)

    def __missing__(self, index: int) -> AtomData:
        atom = self.rdkit[index]
        data = self[index] = (atom.GetAtomicNum(), atom.GetIsAromatic(), atom.GetDegree())
        return data


class _Bonded(dict[int, Bonded]):
    __slots__ = ("rdkit", "elements")

    def __missing__(self, index: int) -> Bonded:
        atoms = self.rdkit[index].GetNeighbors()
        indices = tuple(map(_INDEX, atoms))
        elements = tuple(map(_ELEMENT, atoms))
        self.rdkit.update(zip(indices, atoms))
        self.elements.update(zip(indices, elements))
        found = self[index] = (indices, elements)
        return found


class MolGraph:
    """Atoms, neighbours and rings of one (unchanging) molecule, each read once.

    ``rdkit[i]`` is atom ``i``'s RDKit atom, ``element[i]`` its atomic number,
    ``atoms[i]`` its (element, aromatic, degree) and ``bonded[i]`` its
    (neighbour indices, neighbour elements).
    """

    __slots__ = ("mol", "rdkit", "element", "atoms", "bonded", "_rings", "_aromatic_rings", "_fused", "_has")

    def __init__(self, mol: Chem.Mol) -> None:
        self.mol = mol
        self.rdkit = _RDKitAtoms()
        self.rdkit.mol = mol
        self.atoms = _AtomData()
        self.atoms.rdkit = self.rdkit
        self.element = _Elements()
        self.element.atoms = self.atoms
        self.bonded = _Bonded()
        self.bonded.rdkit = self.rdkit
        self.bonded.elements = self.element
        self._rings: tuple[tuple[int, ...], ...] | None = None
        self._aromatic_rings: tuple[tuple[int, ...], ...] | None = None
        self._fused: dict[int, tuple[tuple[int, ...], ...]] | None = None
        self._has: dict[int, bool] = {}

    @property
    def rings(self) -> tuple[tuple[int, ...], ...]:
        """The ring perception's atom rings, in RDKit's order."""
        if self._rings is None:
            self._rings = self.mol.GetRingInfo().AtomRings()
        return self._rings

    @property
    def aromatic_rings(self) -> tuple[tuple[int, ...], ...]:
        """The rings whose atoms are all aromatic, in ring order; read once per molecule."""
        if self._aromatic_rings is None:
            # one search lists the aromatic atoms: cheaper than reading each ring atom
            aromatic = {m[0] for m in self.mol.GetSubstructMatches(_AROMATIC, uniquify=False, maxMatches=100000)}
            self._aromatic_rings = tuple(r for r in self.rings if aromatic.issuperset(r))
        return self._aromatic_rings

    def fused_aromatic_rings(self, atom: int) -> tuple[tuple[int, ...], ...]:
        """The aromatic rings fused (sharing a bond, directly or through each other)
        with an aromatic ring holding ``atom``; empty if none holds it. All systems
        of the molecule are found on the first call."""
        if self._fused is None:
            rings = self.aromatic_rings
            members = [set(r) for r in rings]
            group = list(range(len(rings)))  # union-find over rings sharing two atoms

            def root(k: int) -> int:
                while group[k] != k:
                    k = group[k]
                return k

            for a in range(len(rings)):
                for b in range(a + 1, len(rings)):
                    if len(members[a] & members[b]) >= 2:
                        group[root(b)] = root(a)
            systems: dict[int, list[tuple[int, ...]]] = {}
            for k, ring in enumerate(rings):
                systems.setdefault(root(k), []).append(ring)
            self._fused = {}
            for system in systems.values():
                for ring in system:
                    for i in ring:
                        self._fused.setdefault(i, tuple(system))
        return self._fused.get(atom, ())

    def has_element(self, z: int) -> bool:
        """Whether an atom of atomic number ``z`` occurs: known if an atom read so
        far has it, else one search, once per element."""
        found = self._has.get(z)
        if found is None:
            found = z in self.element.values() or self.mol.HasSubstructMatch(_element_query(z))
            self._has[z] = found
        return found


#: any aromatic atom
_AROMATIC = Chem.MolFromSmarts("a")


@lru_cache(maxsize=None)
def _element_query(z: int) -> Chem.Mol:
    """A query matching any atom of atomic number ``z``."""
    return Chem.MolFromSmarts(f"[#{z}]")
