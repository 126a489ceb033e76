"""Turn record text into an RDKit molecule, or a reason a chemist can act on."""

from __future__ import annotations

from collections.abc import Callable

from rdkit import Chem, RDLogger

RDLogger.DisableLog("rdApp.*")  # reasons are returned per record, not printed


def mol_from_smiles(text: str | None) -> tuple[Chem.Mol | None, str | None]:
    """Parse a SMILES; on failure return (None, reason)."""
    if text is None or not text.strip():
        return None, "empty SMILES"
    text = text.strip()
    stray = _stray_character(text)
    if stray:
        return None, stray
    mol = Chem.MolFromSmiles(text)  # the common case: parsed and sanitized in one call
    if mol is not None:
        return mol, None
    mol = Chem.MolFromSmiles(text, sanitize=False)
    if mol is None:
        return None, "unparsable SMILES"
    return _sanitized(mol)


def _stray_character(text: str) -> str | None:
    """RDKit stops reading at a space, a NUL or some non-ASCII bytes and returns the
    part before it, so 'CC(=O)O junk' would pass as acetic acid. SMILES is printable
    ASCII; the one thing allowed after a space is a CXSMILES block ``|...|``."""
    if text.isascii() and text.isprintable() and " " not in text:
        return None  # the common case, checked in C: every character is in '!'..'~'
    for position, char in enumerate(text, start=1):
        if char.isspace():
            extension = text[position:].strip()
            if len(extension) > 1 and extension[0] == extension[-1] == "|" and not _stray_character(extension):
                return None
            return f"SMILES contains whitespace at position {position}; the text after it would be ignored"
        if not " " < char <= "~":
            return f"SMILES contains a non-ASCII or control character {char!r} at position {position}"
    return None


def mol_from_molblock(text: str | None) -> tuple[Chem.Mol | None, str | None]:
    """Parse a V2000 or V3000 molblock, keeping explicit H and coordinates for now."""
    if text is None or not text.strip():
        return None, "empty molblock"
    mol = Chem.MolFromMolBlock(text, sanitize=False, removeHs=False, strictParsing=True)
    if mol is None:
        return None, f"unreadable molblock: {_molblock_problem(text)}"
    return _sanitized(mol)


def _molblock_problem(text: str) -> str:
    """Where a V2000 block RDKit rejected goes wrong, measured against its own counts line."""
    lines = text.splitlines()
    if len(lines) < 4 or not lines[3].strip():
        return "no counts line (line 4)"
    counts = lines[3]
    if "V3000" in counts:
        return "V3000 blocks are read by RDKit only; it rejected this one"
    try:
        n_atoms, n_bonds = int(counts[0:3]), int(counts[3:6])
    except ValueError:
        return f"counts line {counts.strip()!r} does not start with the atom and bond numbers"
    body = lines[4:]
    atoms = _leading(body, _is_atom_line)
    if atoms < n_atoms and atoms == len(body):
        return f"text ends inside the atom block ({atoms} of {n_atoms} atom lines)"
    if atoms != n_atoms:
        return f"counts line says {n_atoms} atoms but the atom block has {atoms} lines"
    bonds = _leading(body[atoms:], _is_bond_line)
    if bonds < n_bonds and atoms + bonds == len(body):
        return f"text ends inside the bond block ({bonds} of {n_bonds} bond lines)"
    if bonds != n_bonds:
        return f"counts line says {n_bonds} bonds but the bond block has {bonds} lines"
    if not any(line.startswith("M  END") for line in body):
        return "no 'M  END' line"
    return "malformed atom, bond or property line"


def _leading(lines: list[str], test: Callable[[str], bool]) -> int:
    count = 0
    for line in lines:
        if not test(line):
            break
        count += 1
    return count


def _is_atom_line(line: str) -> bool:
    words = line.split()
    if len(words) < 4 or words[3].lstrip("-").isdigit():
        return False
    try:
        [float(w) for w in words[:3]]
    except ValueError:
        return False
    return True


def _is_bond_line(line: str) -> bool:
    words = line.split()
    return len(words) >= 3 and all(w.isdigit() for w in words[:3]) and not line.startswith("M  ")


def _sanitized(mol: Chem.Mol) -> tuple[Chem.Mol | None, str | None]:
    """Sanitize once; only a failure pays for the diagnosis."""
    probe = Chem.Mol(mol)
    if Chem.SanitizeMol(probe, catchErrors=True) == Chem.SanitizeFlags.SANITIZE_NONE:
        Chem.AssignStereochemistry(probe, cleanIt=True, force=True)
        return probe, None
    problems = Chem.DetectChemistryProblems(mol)
    if problems:
        kinds = sorted({_describe(p.GetType()) for p in problems})
        return None, f"{'; '.join(kinds)}: {problems[0].Message()}"
    try:
        Chem.SanitizeMol(mol)
    except Exception as exc:  # RDKit raises several exception types here
        return None, f"sanitization failed: {exc}"
    return None, "sanitization failed"


def _describe(kind: str) -> str:
    return {
        "AtomValenceException": "valence error",
        "AtomKekulizeException": "aromaticity cannot be kekulized",
        "KekulizeException": "aromaticity cannot be kekulized",
    }.get(kind, kind)
