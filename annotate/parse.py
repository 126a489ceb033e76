"""Turn record text into an RDKit molecule, or a reason a chemist can act on."""

from __future__ import annotations

from rdkit import Chem, RDLogger

RDLogger.DisableLog("rdApp.*")  # reasons are returned per record, not printed


def mol_from_smiles(text: str | None) -> tuple[Chem.Mol | None, str | None]:
    """Parse a SMILES; on failure return (None, reason)."""
    if text is None or not text.strip():
        return None, "empty SMILES"
    mol = Chem.MolFromSmiles(text.strip(), sanitize=False)
    if mol is None:
        return None, "unparsable SMILES"
    return _sanitized(mol)


def mol_from_molblock(text: str | None) -> tuple[Chem.Mol | None, str | None]:
    """Parse a V2000 or V3000 molblock, keeping explicit H and coordinates for now."""
    if text is None or not text.strip():
        return None, "empty molblock"
    mol = Chem.MolFromMolBlock(text, sanitize=False, removeHs=False, strictParsing=True)
    if mol is None:
        return None, "unreadable molblock (bad counts line, atom or bond block)"
    return _sanitized(mol)


def _sanitized(mol: Chem.Mol) -> tuple[Chem.Mol | None, str | None]:
    problems = Chem.DetectChemistryProblems(mol)
    if problems:
        kinds = sorted({_describe(p.GetType()) for p in problems})
        return None, f"{'; '.join(kinds)}: {problems[0].Message()}"
    try:
        Chem.SanitizeMol(mol)
    except Exception as exc:  # RDKit raises several exception types here
        return None, f"sanitization failed: {exc}"
    Chem.AssignStereochemistry(mol, cleanIt=True, force=True)
    return mol, None


def _describe(kind: str) -> str:
    return {
        "AtomValenceException": "valence error",
        "AtomKekulizeException": "aromaticity cannot be kekulized",
        "KekulizeException": "aromaticity cannot be kekulized",
    }.get(kind, kind)
