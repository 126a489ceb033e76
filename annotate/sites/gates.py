"""Cheap patterns that every match of a group rule must also match (its gates).

Why: asking RDKit whether a pattern matches costs about a microsecond however
simple the pattern is, and most of the ~100 rules never match a given molecule.
Each rule gets two gates, coarse to fine: its site atom alone, then the site atom
bonded to its most specific neighbour. Rules sharing gates share their test, so
about 25 one-atom gates are tried on every molecule, the two-atom gates only
behind a one-atom gate that matched, and the rules only behind a two-atom gate
that matched. A gate only ever lets through more molecules than its rule (it is
a relaxation), so the sites found do not change.
"""

from __future__ import annotations

from rdkit import Chem


def gates_for(pattern: Chem.Mol, site_index: int, parent: Chem.Mol) -> tuple[str, ...]:
    """The gates of a rule, coarse to fine, each a relaxation of ``pattern``.

    A user's SMARTS may use forms the derivation does not foresee; a gate that
    does not parse, or that misses the rule's own parent compound, is left out.
    """
    query = Chem.Mol(pattern)
    for atom in query.GetAtoms():
        atom.SetAtomMapNum(0)
    gates: list[str] = []
    for atoms in _gate_atoms(query, site_index):
        try:
            smarts = without_recursion(Chem.MolFragmentToSmarts(query, atomsToUse=atoms, bondsToUse=_bonds(query, atoms)))
        except (ValueError, RuntimeError):
            continue
        gate = Chem.MolFromSmarts(smarts)
        if gate is not None and parent.HasSubstructMatch(gate) and smarts not in gates:
            gates.append(smarts)
    return tuple(gates)


def _gate_atoms(query: Chem.Mol, site_index: int) -> list[list[int]]:
    """The site atom; then it and its most specific neighbour (longest query text, so most selective)."""
    neighbours = [n.GetIdx() for n in query.GetAtomWithIdx(site_index).GetNeighbors()]
    if not neighbours:
        return [[site_index]]
    other = max(neighbours, key=lambda k: (len(query.GetAtomWithIdx(k).GetSmarts()), -k))
    return [[site_index], [site_index, other]]


def _bonds(query: Chem.Mol, atoms: list[int]) -> list[int] | None:
    """Dropping atoms and bonds of a query can only make it match more."""
    if len(atoms) < 2:
        return None
    return [query.GetBondBetweenAtoms(atoms[0], atoms[1]).GetIdx()]


def without_recursion(smarts: str) -> str:
    """Each ``$(...)`` and ``!$(...)`` replaced by ``*`` (true for any atom)."""
    out: list[str] = []
    i = 0
    while i < len(smarts):
        negated = smarts.startswith("!$(", i)
        if not (negated or smarts.startswith("$(", i)):
            out.append(smarts[i])
            i += 1
            continue
        i += 3 if negated else 2
        depth = 1
        while depth:
            if i >= len(smarts):
                raise ValueError(f"unbalanced recursive SMARTS in {smarts!r}")
            depth += {"(": 1, ")": -1}.get(smarts[i], 0)
            i += 1
        out.append("*")
    return "".join(out)
