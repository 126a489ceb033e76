"""Shared helpers for the test suite (imported as tests.helpers)."""

from __future__ import annotations

import importlib.util
import subprocess
import sys
from pathlib import Path
from collections.abc import Iterable
from types import ModuleType

from rdkit import Chem

from annotate.export.filters import FilterSpec

ROOT = Path(__file__).resolve().parent.parent
DATA = Path(__file__).resolve().parent / "data"


def load_script(relative: str) -> ModuleType:
    """Import a script that is not part of the package (benchmarks/, workflow/)."""
    path = ROOT / relative
    name = path.stem
    if name in sys.modules:
        return sys.modules[name]
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    return module


def molblock(smiles: str, title: str, *, v3000: bool = False) -> bytes:
    """A molblock (V2000, or V3000) with a title, as bytes for building SDF test files."""
    mol = Chem.MolFromSmiles(smiles)
    mol.SetProp("_Name", title)
    return (Chem.MolToV3KMolBlock(mol) if v3000 else Chem.MolToMolBlock(mol)).encode()


def sd_items(**props: bytes) -> bytes:
    """SD data items to follow a molblock."""
    return b"".join(b"> <" + k.encode() + b">\n" + v + b"\n\n" for k, v in props.items())


def run_snakemake(root: Path, *args: str, ok: bool = True) -> subprocess.CompletedProcess[str]:
    """Run the Snakemake CLI in ``root``; ``ok`` says which outcome to expect."""
    run = subprocess.run(
        [sys.executable, "-m", "snakemake", *args],
        cwd=root,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
        check=False,
    )
    assert (run.returncode == 0) == ok, run.stdout[-6000:]
    return run


def filter_outputs(directory: Path, specs: Iterable[FilterSpec], ext: str = "parquet") -> list[Path]:
    """One output path per filter, named as the workflow's filter_library rule names them."""
    return [directory / f"{spec.name}.{ext}" for spec in specs]
