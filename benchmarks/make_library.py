"""Seeded, streaming enumerator of invented building-block libraries.

Why one tool: the committed demo library and the million-molecule benchmark inputs come from
the same chemistry and the same writers, so a benchmark measures what the demo shows. Example:
  python benchmarks/make_library.py --demo --n 3000 --seed 7 --id-prefix DEMO \\
      --format sdf,parquet,smi --out workflow/demo/library
"""

import argparse
import bisect
import functools
import hashlib
import itertools
import random
import sys
import time
from collections import deque
from collections.abc import Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
from rdkit import Chem, rdBase
from rdkit.Chem import AllChem, Descriptors, rdDepictor

BLOCKS_TSV = Path(__file__).with_name("building_blocks.tsv")
AMINES = ("primary_amine", "secondary_amine", "aniline")
ARYL_HALIDES = ("aryl_halide", "heteroaryl_halide")
# Nucleophilic N: NH2/NH bonded to carbon only and not part of an amide, amidine or thioamide.
_NUC = "[NX3;H2,H1;+0;!$(N-[!#6]);!$(N-[#6]=[O,S,N]):9]"
REACTIONS: dict[str, tuple[str, tuple[str, ...], tuple[str, ...]]] = {  # name -> (SMARTS, roles 1, roles 2)
    "amide_coupling": (f"[CX3:1](=[O:2])[OX2H1].{_NUC}>>[C:1](=[O:2])[N:9]", ("carboxylic_acid",), AMINES),
    "sulfonamide_formation": (
        f"[SX4:1](=[O:2])(=[O:3])Cl.{_NUC}>>[S:1](=[O:2])(=[O:3])[N:9]", ("sulfonyl_chloride",), AMINES),
    "reductive_amination": (f"[CX3H1:1](=O)[#6:2].{_NUC}>>[#6:2][C:1][N:9]", ("aldehyde",), AMINES),
    "suzuki_biaryl": ("[c:1]-[Br,I].[c:2]-[BX3](-[OH])-[OH]>>[c:1]-[c:2]", ARYL_HALIDES, ("boronic_acid",)),
    "cn_coupling": (f"[c:1]-[Cl,Br,I].{_NUC}>>[c:1]-[N:9]", ARYL_HALIDES, AMINES),
    "ether_formation": ("[c:1]-[OX2H1:2].[CX4,c;!$(C(F)(F)F):3]-[Cl,Br,I]>>[c:1]-[O:2]-[*:3]",
                        ("phenol",), ("alkyl_halide", "heteroaryl_halide")),
}
MAX_STEPS = 3
CHUNK_SIZE = 64  # walks per independently seeded chunk; small so short libraries start fast
MAX_BARREN_CHUNKS = 50  # guards against an exhausted or mis-specified block set
SPECIAL_SEARCH = 10_000  # products tried before a demo special is declared impossible with these blocks
# Reactive handles that should not survive into a screening library.
_LEFTOVER = Chem.MolFromSmarts("[$([CX3H1](=O)[#6]),$(S(=O)(=O)Cl),$([BX3](O)O),$([CX4][Br,I]),$(C(=O)[Cl,Br])]")
_BASIC_N = Chem.MolFromSmarts("[NX3;+0;!$(N~[!#6]);!$(N-[#6]=,#,:*)]")
_TERTIARY_N = Chem.MolFromSmarts("[NX3;H0;+0;!$(N~[!#6]);!$(N-[#6]=,#,:*)]")
_ACID_OH = Chem.MolFromSmarts("[CX3](=O)[OX2H1]")
# Conservative: anything that could carry a charge (non-amide N, OH, SH, B, P, charges) disqualifies.
_SITE_LIKE = Chem.MolFromSmarts("[$([#7;!$([NX3]([#6])C(=O)[#6])]),$([OX2H]),$([SX2H]),#5,#15,$([*+]),$([*-])]")

DEMO_MIX: dict[str, tuple[float, tuple[str, ...]]] = {  # note -> (share of records, variants cycled through)
    "salt": (0.03, ("Cl", "O=C(O)C(F)(F)F", "CS(=O)(=O)O", "O", "[Na+]")),
    "pre-ionized": (0.01, ("protonated-amine", "carboxylate")),
    "quaternary": (0.004, ("methylated-amine",)),
    "no-site": (0.004, ("neutral",)),
    "broken": (0.01, ("unparsable", "valence", "aromaticity", "empty")),
}
_ATOM = "{:>10.4f}{:>10.4f}    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0\n"


def _molblock(atoms: Sequence[tuple[float, float]], bonds: Sequence[tuple[int, int, int]], *,
              claimed: int | None = None) -> str:
    """SDF body after the title line, written by hand so the defect is exactly the one intended."""
    counts = f"{len(atoms) if claimed is None else claimed:>3}{len(bonds):>3}  0  0  0  0  0  0  0  0999 V2000\n"
    return ("\n  handmade\n\n" + counts + "".join(_ATOM.format(x, y) for x, y in atoms)
            + "".join(f"{a:>3}{b:>3}{order:>3}  0\n" for a, b, order in bonds) + "M  END\n")


_STAR = ((0, 0), (1.5, 0), (-1.5, 0), (0, 1.5), (0, -1.5), (1, 1))
_RING = ((0, 1.2), (1.1, 0.4), (0.7, -1), (-0.7, -1), (-1.1, 0.4))
BROKEN: dict[str, tuple[str, str]] = {  # kind -> (SMILES text, SDF body): the same defect in every format
    "unparsable": ("CC(=O)Nc1ccc(cc1", _molblock([(0, 0)], [], claimed=12)),  # SDF: counts line promises 12 atoms
    "valence": ("CC(C)(C)(C)C", _molblock(_STAR, [(1, j, 1) for j in range(2, 7)])),  # five-bonded carbon
    "aromaticity": ("c1cccc1", _molblock(_RING, [(i, i % 5 + 1, 4) for i in range(1, 6)])),  # aromatic C5 ring
    "empty": ("", _molblock([], [])),
}


@dataclass(frozen=True, slots=True)
class Product:
    smiles: str
    reaction: str  # route, e.g. "amide_coupling>suzuki_biaryl"
    mw: float


@dataclass(frozen=True, slots=True)
class Record:
    id: str
    smiles: str
    reaction: str | None  # None for deliberately broken records
    mw: float | None
    note: str = "ok-design"


@dataclass(frozen=True, slots=True, eq=False)  # identity hash: the object is a cache key
class _Reaction:
    name: str
    rxn: AllChem.ChemicalReaction
    templates: tuple[Chem.Mol, Chem.Mol]
    lost: tuple[int, int]  # unmapped template atoms = heavy atoms each reactant loses
    pools: tuple[list[Chem.Mol], list[Chem.Mol]]  # sorted by heavy-atom count
    heavy: tuple[list[int], list[int]]


@functools.cache
def load_reactions(blocks_path: Path = BLOCKS_TSV) -> tuple[_Reaction, ...]:
    """Pools are role-filtered AND template-matched, so every draw can react."""
    lines = blocks_path.read_text().splitlines()
    if lines[0].split("\t") != ["role", "name", "smiles"]:
        raise ValueError(f"{blocks_path}: header must be role<TAB>name<TAB>smiles")
    named = [(role, name, Chem.MolFromSmiles(smi)) for role, name, smi in (ln.split("\t") for ln in lines[1:] if ln)]
    if unparsable := [name for _, name, mol in named if mol is None]:
        raise ValueError(f"{blocks_path}: unparsable SMILES for {', '.join(unparsable)}")
    blocks = [(role, mol) for role, _, mol in named]
    shared: dict[str, Chem.Mol] = {}  # one object per distinct template, so handle tests can be cached
    reactions = []
    for name, (smarts, *slot_roles) in REACTIONS.items():
        rxn = AllChem.ReactionFromSmarts(smarts)
        templates = tuple(shared.setdefault(Chem.MolToSmarts(t), t) for t in rxn.GetReactants())
        pools = tuple(sorted((m for role, m in blocks if role in roles and m.HasSubstructMatch(t)),
                             key=Chem.Mol.GetNumHeavyAtoms) for roles, t in zip(slot_roles, templates))
        if all(pools):  # a block file may serve only some reactions
            lost = tuple(sum(a.GetAtomMapNum() == 0 for a in t.GetAtoms()) for t in templates)
            heavy = tuple([m.GetNumHeavyAtoms() for m in pool] for pool in pools)
            reactions.append(_Reaction(name, rxn, templates, lost, pools, heavy))
    if not reactions:
        raise ValueError(f"{blocks_path}: no reaction has blocks for both of its reactants")
    return tuple(reactions)


@functools.cache
def _pair_counts(reactions: tuple[_Reaction, ...]) -> list[int]:
    return list(itertools.accumulate(len(r.pools[0]) * len(r.pools[1]) for r in reactions))


def _react(reaction: _Reaction, reactants: tuple[Chem.Mol, Chem.Mol], rng: random.Random) -> Chem.Mol | None:
    outcomes = reaction.rxn.RunReactants(reactants, 8)
    if not outcomes:
        return None
    mol = rng.choice(outcomes)[0]
    try:  # rings and aromatic flags come over from the sanitized reactants; only valences need a check
        mol.UpdatePropertyCache(strict=True)
    except (ValueError, RuntimeError):
        return None
    Chem.FastFindRings(mol)
    return mol


def _partner(reaction: _Reaction, slot: int, mol: Chem.Mol, max_heavy: int, rng: random.Random) -> Chem.Mol | None:
    """Partner for `mol` in `slot`, drawn only among those that keep the product inside the window."""
    kept = mol.GetNumHeavyAtoms() - reaction.lost[slot]
    fitting = bisect.bisect_right(reaction.heavy[1 - slot], max_heavy - kept + reaction.lost[1 - slot])
    return reaction.pools[1 - slot][rng.randrange(fitting)] if fitting else None


def _free_handle(mol: Chem.Mol, reactions: tuple[_Reaction, ...], rng: random.Random) -> tuple[_Reaction, int] | None:
    """First match in a seeded shuffle = a uniform pick among all free handles, with fewer matches run."""
    tested: dict[int, bool] = {}
    for reaction, slot in rng.sample([(r, s) for r in reactions for s in (0, 1)], 2 * len(reactions)):
        template = reaction.templates[slot]
        if tested.setdefault(id(template), mol.HasSubstructMatch(template)):
            return reaction, slot
    return None


def _sample(rng: random.Random, reactions: tuple[_Reaction, ...], *, min_heavy: int, max_heavy: int) -> Product | None:
    """One random walk over the reaction graph: two blocks, then more blocks on free handles."""
    reaction = rng.choices(reactions, cum_weights=_pair_counts(reactions))[0]  # uniform over block pairs
    mol = first = rng.choice(reaction.pools[0])
    slot, route = 0, []
    while (partner := _partner(reaction, slot, mol, max_heavy, rng)) is not None:
        mol = _react(reaction, (mol, partner) if slot == 0 else (partner, mol), rng)
        route.append(reaction.name)
        if mol is None or len(route) == MAX_STEPS:
            break
        # Stopping grows likelier with size and steps: few-step products are a small space, soon exhausted.
        window_share = (mol.GetNumHeavyAtoms() - min_heavy + 1) / (max_heavy - min_heavy + 1)
        if rng.random() < window_share * len(route) / MAX_STEPS:
            break
        if (handle := _free_handle(mol, reactions, rng)) is None:
            break
        reaction, slot = handle
    if mol is None or mol is first or mol.GetNumHeavyAtoms() < min_heavy or mol.HasSubstructMatch(_LEFTOVER):
        return None
    return Product(Chem.MolToSmiles(mol), ">".join(route), round(Descriptors.MolWt(mol), 2))


def _sample_chunk(job: tuple[int, Path, int, int]) -> list[Product]:
    """A chunk depends only on its own seed, so the output is the same for any number of workers."""
    chunk_seed, blocks_path, min_heavy, max_heavy = job
    rng, reactions = random.Random(chunk_seed), load_reactions(blocks_path)
    with rdBase.BlockLogs():  # failed sanitizations are expected and silently dropped
        samples = [_sample(rng, reactions, min_heavy=min_heavy, max_heavy=max_heavy) for _ in range(CHUNK_SIZE)]
    return [p for p in samples if p is not None]


def _chunks(jobs: Iterator[tuple[int, Path, int, int]], workers: int) -> Iterator[list[Product]]:
    if workers <= 1:
        yield from map(_sample_chunk, jobs)
        return
    with ProcessPoolExecutor(workers) as pool:  # a bounded window of chunks in flight keeps memory flat
        window = deque(pool.submit(_sample_chunk, next(jobs)) for _ in range(2 * workers))
        try:
            while True:
                window.append(pool.submit(_sample_chunk, next(jobs)))
                yield window.popleft().result()
        finally:
            pool.shutdown(cancel_futures=True)


def enumerate_products(*, seed: int, min_heavy: int = 20, max_heavy: int = 35, workers: int = 1,
                       blocks_path: Path = BLOCKS_TSV) -> Iterator[Product]:
    """Endless stream of unique products; memory grows only by one 8-byte hash per product."""
    master = random.Random(seed)
    jobs = ((master.getrandbits(64), blocks_path, min_heavy, max_heavy) for _ in itertools.count())
    seen: set[int] = set()
    barren = 0
    for chunk in _chunks(jobs, workers):
        barren += 1
        for product in chunk:
            key = int.from_bytes(hashlib.blake2b(product.smiles.encode(), digest_size=8).digest())
            if key not in seen:
                seen.add(key)
                barren = 0
                yield product
        if barren >= MAX_BARREN_CHUNKS:
            raise RuntimeError(f"{MAX_BARREN_CHUNKS} chunks without a new product: the block set is exhausted")


def _with_charge(smiles: str, pattern: Chem.Mol, atom_in_match: int, charge: int) -> Chem.RWMol | None:
    """Works on a fresh parse so implicit hydrogens follow the new charge."""
    mol = Chem.RWMol(Chem.MolFromSmiles(smiles))
    matches = mol.GetSubstructMatches(pattern)
    if matches:
        mol.GetAtomWithIdx(matches[0][atom_in_match]).SetFormalCharge(charge)
    return mol if matches else None


def _special(note: str, variant: str, smiles: str) -> Chem.Mol | None:
    """Derive a demo special from an enumerated product, or None if this product does not fit."""
    if note == "salt":
        parent = _with_charge(smiles, _ACID_OH, 2, -1) if variant == "[Na+]" else Chem.MolFromSmiles(smiles)
        if parent is None or (variant not in ("O", "[Na+]") and not parent.HasSubstructMatch(_BASIC_N)):
            return None
        out = Chem.CombineMols(parent, Chem.MolFromSmiles(variant))
    elif note == "pre-ionized":
        protonate = variant == "protonated-amine"
        out = _with_charge(smiles, _BASIC_N, 0, 1) if protonate else _with_charge(smiles, _ACID_OH, 2, -1)
    elif note == "quaternary":
        out = _with_charge(smiles, _TERTIARY_N, 0, 1)
        if out is not None:
            nitrogen = next(a.GetIdx() for a in out.GetAtoms() if a.GetFormalCharge() == 1)
            out.AddBond(nitrogen, out.AddAtom(Chem.Atom(6)), Chem.BondType.SINGLE)
    else:  # no-site
        out = Chem.MolFromSmiles(smiles)
        out = None if out.HasSubstructMatch(_SITE_LIKE) else out
    if out is not None:
        Chem.SanitizeMol(out)
    return out


def demo_plan(*, n: int, seed: int) -> dict[int, tuple[str, str]]:
    """Fixed seeded positions for the demo specials, independent of the product stream."""
    rng = random.Random(f"demo-mix-{seed}")
    kinds = [(note, variants[k % len(variants)])
             for note, (share, variants) in DEMO_MIX.items() for k in range(max(len(variants), round(n * share)))]
    if len(kinds) > n:
        raise ValueError(f"--n {n} is too small for the demo mix ({len(kinds)} special records)")
    rng.shuffle(kinds)
    return dict(zip(sorted(rng.sample(range(n), len(kinds))), kinds))


def library_records(*, n: int, seed: int, id_prefix: str, demo: bool = False, min_heavy: int = 20,
                    max_heavy: int = 35, workers: int = 1, blocks_path: Path = BLOCKS_TSV) -> Iterator[Record]:
    """Ids are zero-padded to max(6, digits of n) so they sort in file order."""
    products = enumerate_products(seed=seed, min_heavy=min_heavy, max_heavy=max_heavy, workers=workers,
                                  blocks_path=blocks_path)
    plan = demo_plan(n=n, seed=seed) if demo else {}
    width = max(6, len(str(n)))
    for i in range(n):
        rid = f"{id_prefix}-{i + 1:0{width}d}"
        note, variant = plan.get(i, ("ok-design", ""))
        if note == "broken":
            yield Record(rid, BROKEN[variant][0], None, None, f"broken-{variant}")
            continue
        if note == "ok-design":
            product = next(products)
            yield Record(rid, product.smiles, product.reaction, product.mw)
            continue
        for product in itertools.islice(products, SPECIAL_SEARCH):  # the special's parent must stay in the window
            if (special := _special(note, variant, product.smiles)) is not None and min_heavy <= max(
                    f.GetNumHeavyAtoms() for f in Chem.GetMolFrags(special, asMols=True)) <= max_heavy:
                break
        else:
            raise RuntimeError(f"none of {SPECIAL_SEARCH} products can serve as a '{note}' record")
        yield Record(rid, Chem.MolToSmiles(special), product.reaction, round(Descriptors.MolWt(special), 2), note)


class _TextWriter:
    def __init__(self, path: Path, *, with_note: bool) -> None:
        self._file = path.open("w")
        self._with_note = with_note

    def close(self) -> None:
        self._file.close()


class SmiWriter(_TextWriter):
    """Header line, then SMILES<TAB>ID (plus the note in demo mode) per record."""

    def __init__(self, path: Path, *, with_note: bool) -> None:
        super().__init__(path, with_note=with_note)
        self._file.write("smiles\tid\tnote\n" if with_note else "smiles\tid\n")

    def write(self, record: Record) -> None:
        self._file.write(f"{record.smiles}\t{record.id}" + (f"\t{record.note}\n" if self._with_note else "\n"))


class SdfWriter(_TextWriter):
    """Text-level writer so broken records can carry hand-written molblocks."""

    def write(self, record: Record) -> None:
        if record.reaction is None:
            block = record.id + BROKEN[record.note.removeprefix("broken-")][1]
        else:
            mol = Chem.MolFromSmiles(record.smiles)
            rdDepictor.Compute2DCoords(mol)
            mol.SetProp("_Name", record.id)
            block = Chem.MolToMolBlock(mol)
        props = {"scaffold_family": record.reaction, "mw": None if record.mw is None else f"{record.mw:.2f}",
                 "note": record.note if self._with_note else None}
        self._file.write(block + "".join(f">  <{k}>\n{v}\n\n" for k, v in props.items() if v is not None) + "$$$$\n")


class ParquetWriter:
    """Buffers one row group at a time so a million-row library never sits in memory."""

    def __init__(self, path: Path, *, with_note: bool, row_group_size: int = 50_000) -> None:
        fields = [("id", pa.string()), ("smiles", pa.string()), ("reaction", pa.string()), ("mw", pa.float64())]
        self._schema = pa.schema(fields + ([("note", pa.string())] if with_note else []))
        self._writer = pq.ParquetWriter(path, self._schema)
        self._rows: list[Record] = []
        self._row_group_size = row_group_size

    def write(self, record: Record) -> None:
        self._rows.append(record)
        if len(self._rows) >= self._row_group_size:
            self._flush()

    def _flush(self) -> None:
        if self._rows:
            columns = {name: [getattr(r, name) for r in self._rows] for name in self._schema.names}
            self._writer.write_table(pa.table(columns, schema=self._schema), row_group_size=self._row_group_size)
            self._rows = []

    def close(self) -> None:
        self._flush()
        self._writer.close()


WRITERS = {"smi": SmiWriter, "sdf": SdfWriter, "parquet": ParquetWriter}


def write_library(records: Iterator[Record], *, out: Path, formats: Sequence[str], with_note: bool) -> int:
    """One pass over the stream feeds every requested format, so all files share ids and order."""
    count = 0
    with ExitStack() as stack:
        writers = [WRITERS[fmt](out.with_name(f"{out.name}.{fmt}"), with_note=with_note) for fmt in formats]
        for writer in writers:
            stack.callback(writer.close)
        for count, record in enumerate(records, 1):
            for writer in writers:
                writer.write(record)
    return count


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--n", type=int, required=True, help="number of records to write")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--id-prefix", default="BENCH")
    parser.add_argument("--format", default="smi", help="comma-separated subset of: smi,sdf,parquet")
    parser.add_argument("--out", type=Path, required=True, help="output prefix; .<format> is appended")
    parser.add_argument("--demo", action="store_true", help="mix in salts, charged, no-site and broken records")
    parser.add_argument("--min-heavy", type=int, default=20)
    parser.add_argument("--max-heavy", type=int, default=35)
    parser.add_argument("--workers", type=int, default=1, help="processes; the output does not depend on it")
    parser.add_argument("--blocks", type=Path, default=BLOCKS_TSV)
    args = parser.parse_args(argv)
    formats = [f.strip() for f in args.format.split(",") if f.strip()]
    if unknown := set(formats) - set(WRITERS):
        parser.error(f"unknown format(s): {', '.join(sorted(unknown))}")
    args.out.parent.mkdir(parents=True, exist_ok=True)
    started = time.perf_counter()
    records = library_records(n=args.n, seed=args.seed, id_prefix=args.id_prefix, demo=args.demo, workers=args.workers,
                              min_heavy=args.min_heavy, max_heavy=args.max_heavy, blocks_path=args.blocks)
    count = write_library(records, out=args.out, formats=formats, with_note=args.demo)
    seconds = time.perf_counter() - started
    print(f"wrote {count} records ({','.join(formats)}) in {seconds:.1f} s, {count / seconds:.0f}/s", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
