"""Where a library lives and how to read it: format, structure column, id column.

Defaults match the library entry in ``workflow/schemas/config.schema.yaml``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

Format = Literal["sdf", "smi", "csv", "tsv", "parquet"]
RecordKind = Literal["smiles", "molblock"]

_EXTENSIONS: dict[str, Format] = {
    ".sdf": "sdf",
    ".sd": "sdf",
    ".smi": "smi",
    ".smiles": "smi",
    ".csv": "csv",
    ".tsv": "tsv",
    ".tab": "tsv",
    ".parquet": "parquet",
    ".pq": "parquet",
}
GZIP_FORMATS: frozenset[Format] = frozenset({"sdf", "smi"})


@dataclass(frozen=True, slots=True)
class LibrarySpec:
    """One configured library; ``format="auto"`` means "from the file extension"."""

    name: str
    path: Path
    format: Literal["auto"] | Format = "auto"
    structure: Literal["auto"] | RecordKind = "auto"
    smiles_column: str = "smiles"
    molblock_column: str = "molblock"
    id_column: str = "id"

    @classmethod
    def from_config(cls, name: str, entry: str | Mapping[str, object]) -> LibrarySpec:
        """Build from a config entry: a plain path string or a mapping with ``path``."""
        if isinstance(entry, str):
            return cls(name=name, path=Path(entry))
        options: dict[str, Any] = {k: v for k, v in entry.items() if k != "path"}
        return cls(name=name, path=Path(str(entry["path"])), **options)

    @property
    def resolved_format(self) -> Format:
        """The format to read; an unknown extension needs ``format`` set explicitly."""
        if self.format != "auto":
            return self.format
        suffixes = [s.lower() for s in self.path.suffixes]
        if suffixes and suffixes[-1] == ".gz":
            suffixes = suffixes[:-1]
        found = _EXTENSIONS.get(suffixes[-1]) if suffixes else None
        if found is None:
            known = ", ".join(sorted(_EXTENSIONS))
            raise ValueError(
                f"library {self.name!r}: cannot tell the format of {str(self.path)!r} from its "
                f"extension (known: {known}, optionally .gz for SDF and SMILES); set 'format'"
            )
        return found

    @property
    def gzipped(self) -> bool:
        """Whether to decompress while reading; only text record formats support it."""
        compressed = self.path.suffix.lower() == ".gz"
        if compressed and self.resolved_format not in GZIP_FORMATS:
            raise ValueError(
                f"library {self.name!r}: gzip is supported for SDF and SMILES files only, "
                f"not for {self.resolved_format} ({str(self.path)!r})"
            )
        return compressed

    def source(self) -> dict[str, str]:
        """A plain description for metadata and manifests."""
        return {"path": str(self.path), "format": self.resolved_format, "structure": self.structure}


def find_column(names: Sequence[str], wanted: str) -> str | None:
    """The column called ``wanted``, ignoring case; an exact match wins over others."""
    if wanted in names:
        return wanted
    matches = [n for n in names if n.lower() == wanted.lower()]
    if len(matches) > 1:
        raise ValueError(f"columns {matches} all match {wanted!r} when case is ignored; name one exactly")
    return matches[0] if matches else None


def structure_column(spec: LibrarySpec, names: Sequence[str]) -> tuple[str, RecordKind]:
    """Pick the structure column of a table: SMILES first, else molblock, unless told."""
    kinds: tuple[RecordKind, ...] = ("smiles", "molblock") if spec.structure == "auto" else (spec.structure,)
    wanted = {"smiles": spec.smiles_column, "molblock": spec.molblock_column}
    for kind in kinds:
        found = find_column(names, wanted[kind])
        if found is not None:
            return found, kind
    asked = " or ".join(repr(wanted[k]) for k in kinds)
    raise ValueError(
        f"library {spec.name!r}: {str(spec.path)!r} has no column {asked} (case ignored); "
        f"its columns are {list(names)}. Set 'smiles_column' or 'molblock_column' for this library."
    )
