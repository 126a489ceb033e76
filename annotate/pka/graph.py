"""One molecule's atoms as plain Python data, read from RDKit once per atom.

Each RDKit accessor costs about a microsecond of wrapper overhead (more when
iterating ``GetAtoms()`` or ``AtomRings()``), and estimating a molecule's sites
asks the same few questions (element, neighbours, aromatic flag, rings) many
times over. So an atom is read on first use only, and only atoms the estimate
reaches are read at all. ``atoms`` and ``bonded`` are dicts that read a missing
atom when asked for it, so a repeated question costs one dict lookup. Reading
an atom's neighbours also keeps their RDKit atoms and elements: a walk outwards
needs nothing more of them before it reads their own neighbours.
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


class _AtomTable(dict[int, AtomData]):
    __slots__ = ("graph",)

    def __missing__(self, index: int) -> AtomData:
        graph = self.graph
        atom = graph.rdkit_atoms.get(index)
        if atom is None:
            atom = graph.rdkit_atom(index)
        data = self[index] = (atom.GetAtomicNum(), atom.GetIsAromatic(), atom.GetDegree())
        return data


class _BondedTable(dict[int, Bonded]):
    __slots__ = ("graph",)

    def __missing__(self, index: int) -> Bonded:
        graph = self.graph
        atom = graph.rdkit_atoms.get(index)
        if atom is None:
            atom = graph.rdkit_atom(index)
        atoms = atom.GetNeighbors()
        indices = tuple(map(_INDEX, atoms))
        elements = tuple(map(_ELEMENT, atoms))
        graph.rdkit_atoms.update(zip(indices, atoms))
        graph.elements.update(zip(indices, elements))
        found = self[index] = (indices, elements)
        return found


class MolGraph:
    """Atom data, neighbours and rings of one (unchanging) molecule.

    ``atoms[i]`` is atom ``i``'s (element, aromatic, degree), ``bonded[i]`` its
    (neighbour indices, neighbour elements); both ask RDKit the first time only.
    """

    __slots__ = ("mol", "atoms", "bonded", "elements", "rdkit_atoms", "_rings", "_has")

    def __init__(self, mol: Chem.Mol) -> None:
        self.mol = mol
        self.atoms = _AtomTable()
        self.atoms.graph = self
        self.bonded = _BondedTable()
        self.bonded.graph = self
        #: elements and RDKit atoms known so far (from reads of the atom or a neighbour)
        self.elements: dict[int, int] = {}
        self.rdkit_atoms: dict[int, Chem.Atom] = {}
        self._rings: tuple[tuple[int, ...], ...] | None = None
        self._has: dict[int, bool] = {}

    def rdkit_atom(self, index: int) -> Chem.Atom:
        atom = self.rdkit_atoms.get(index)
        if atom is None:
            atom = self.rdkit_atoms[index] = self.mol.GetAtomWithIdx(index)
        return atom

    def element(self, index: int) -> int:
        z = self.elements.get(index)
        if z is None:
            z = self.elements[index] = self.atoms[index][0]
        return z

    @property
    def rings(self) -> tuple[tuple[int, ...], ...]:
        """The ring perception's atom rings, in RDKit's order."""
        if self._rings is None:
            self._rings = self.mol.GetRingInfo().AtomRings()
        return self._rings

    def has_element(self, z: int) -> bool:
        """Whether an atom of atomic number ``z`` occurs: known if an atom read so
        far has it, else one search, once per element."""
        found = self._has.get(z)
        if found is None:
            found = z in self.elements.values() or self.mol.HasSubstructMatch(_element_query(z))
            self._has[z] = found
        return found


@lru_cache(maxsize=None)
def _element_query(z: int) -> Chem.Mol:
    """A query matching any atom of atomic number ``z``."""
    return Chem.MolFromSmarts(f"[#{z}]")
