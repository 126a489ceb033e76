"""Bad input through the whole workflow: bad records become rows, bad runs stop before any work.

Bad records (one Snakemake run, module fixture): every record comes back as one
row, in input order, with a status and a message that names its problem, and the
run goes on to QC, docking files and filters. Bad runs (one Snakemake call
each): the command fails at once, the message names the library, file, column or
setting at fault, and no output file exists afterwards.

A table whose SMILES column is not text (say int64) is refused like a table
without one: the whole column is unusable, so the setting is wrong, not the
records. Duplicate ids are kept as given, one row each: vendors reuse an id for
salt forms and batches, so a duplicate is not a reason to drop or flag a record;
``(library, input_index)`` is the row key that is always unique.

This module also holds the helpers that the other workflow test modules share
(``workdir``, ``snakemake_command``, ``snakemake``; structure builders come from tests.helpers).
"""

from __future__ import annotations

import gzip
import hashlib
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
import yaml
from rdkit import Chem

from annotate.io.library import LibrarySpec
from annotate.io.records import NO_MOLBLOCK_END
from annotate.io.schema import ANNOTATION_SCHEMA, read_run_metadata
from annotate.pipeline import annotate_chunk, split_library
from annotate.pipeline.preflight import RunCheckError, check_run, library_problem
from annotate.settings import Settings
from annotate.tables import RuleFileError
from tests.helpers import molblock, run_snakemake
from tests.helpers import sd_items as items

ROOT = Path(__file__).resolve().parents[1]
SNAKEFILE = ROOT / "Snakefile"

# Python code where data is expected: it must come back as text and never run.
CODE = "__import__('os').system('touch PWNED')"
SHELL = "$(touch PWNED) `touch PWNED`"


# --- helpers shared by the workflow test modules ----------------------------------------


def workdir(root: Path, *, libraries: dict[str, object], **settings: object) -> Path:
    """A run directory with ``run.yaml``; inputs are written by the caller below ``root``."""
    root.mkdir(parents=True, exist_ok=True)
    config = {"libraries": libraries, "outdir": "out", **settings}
    (root / "run.yaml").write_text(yaml.safe_dump(config, sort_keys=False))
    return root


def snakemake_args(*args: str, config: str = "run.yaml") -> list[str]:
    """Snakemake arguments for the real workflow with a config file, run in the run directory."""
    return ["--snakefile", str(SNAKEFILE), "--configfile", config, *args]


def snakemake_command(*args: str, config: str = "run.yaml") -> list[str]:
    """The whole Snakemake command line, for tests that start it as a process of their own."""
    return [sys.executable, "-m", "snakemake", *snakemake_args(*args, config=config)]


def snakemake(
    root: Path, *args: str, config: str = "run.yaml", ok: bool = True
) -> subprocess.CompletedProcess[str]:
    """Run the workflow in ``root`` with a config file; ``ok`` says which exit code to expect."""
    return run_snakemake(root, *snakemake_args(*args, config=config), ok=ok)




def output_files(root: Path) -> list[Path]:
    """Every file below the outdir: outputs, job logs and benchmarks alike."""
    out = root / "out"
    return [p for p in out.rglob("*") if p.is_file()] if out.exists() else []


# --- bad records ------------------------------------------------------------------------

GARBAGE = bytes(range(256)).replace(b"\n", b"") + b"\n\x00\xff\xfe binary\n\x1b[31m\n"
SDF = b"".join(
    [
        molblock("CC(=O)O", "acid-1") + items(note=CODE.encode(), shell=SHELL.encode()) + b"$$$$\n",
        molblock("CCN", "v3000-2", v3000=True) + b"$$$$\n",
        GARBAGE + b"$$$$\n",
        molblock("CCCC(=O)O", "title").replace(b"title", b"caf\xe9-4", 1)
        + items(vendor=b"\xff\xfeacme")
        + b"$$$$\n",
        molblock("c1ccccc1O", "acid-1") + b"$$$$\n",  # duplicate id
        molblock("CCCN", "") + b"$$$$\n",  # no id
        b"png-7\n\x89PNG\r\n\x1a\nM  END\n$$$$\n",  # has an end line but is no molfile
        molblock("NCCN", "last-8") + items(mw=b"60.10"),  # no $$$$ at the end of the file
    ]
)
ALL_BROKEN = b"".join(
    [
        GARBAGE + b"$$$$\n",
        b"\n\n$$$$\n",  # empty record
        molblock("CC(=O)O", "short-3").replace(b"  4  3  0", b"  9  3  0") + b"$$$$\n",  # wrong atom count
        b"cut-4\n  RDKit\n\n  4  3  0  0  0  0  0  0  0  0999 V2000\n    0.0000",  # truncated mid-record
    ]
)
# Ids and values with line breaks, tabs or an SD terminator are legal in a table.
AWKWARD_ID = "two\nline\tid"
AWKWARD_NOTE = "a\n$$$$\nb"
PARQUET = pa.table(
    {
        "id": ["x1", "x1", None, "  ", "x5", "x6", AWKWARD_ID],
        "smiles": ["CC(=O)O", "CCN", "c1ccccc1O", CODE, None, "C1CC", "CCCCN"],
        "note": [CODE, SHELL, None, "", "x", "y", AWKWARD_NOTE],
    }
)
EMPTY = pa.table(
    {
        "smiles": pa.array([], pa.string()),
        "id": pa.array([], pa.string()),
        "weight": pa.array([], pa.float32()),
    }
)
BAD_LIBRARIES = {
    "sdf_mixed": "in/mixed.sdf",
    "all_broken": "in/broken.sdf.gz",
    "pq_ids": "in/ids.parquet",
    "empty": "in/empty.parquet",
}
RECORDS = {"sdf_mixed": 8, "all_broken": 4, "pq_ids": 7, "empty": 0}


@pytest.fixture(scope="module")
def bad_records(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """One run of the whole workflow (QC, docking files, filters) over the libraries above."""
    root = workdir(tmp_path_factory.mktemp("bad_records"), libraries=BAD_LIBRARIES, chunk_size=10)
    (root / "in").mkdir()
    (root / "in" / "mixed.sdf").write_bytes(SDF)
    (root / "in" / "broken.sdf.gz").write_bytes(gzip.compress(ALL_BROKEN))
    pq.write_table(PARQUET, root / "in" / "ids.parquet")
    pq.write_table(EMPTY, root / "in" / "empty.parquet")
    snakemake(root, "--cores", "2")
    return root


def frame(root: Path, library: str) -> pl.DataFrame:
    return pl.read_parquet(root / "out" / library / "annotated.parquet")


def counts(root: Path, library: str) -> dict[str, int]:
    return pl.read_csv(root / "out" / library / "qc" / "counts.tsv", separator="\t").row(0, named=True)


@pytest.mark.slow
@pytest.mark.parametrize("library", list(BAD_LIBRARIES))
def test_every_record_is_one_row_in_order_and_counted_by_qc(bad_records: Path, library: str) -> None:
    rows = frame(bad_records, library)
    assert rows["input_index"].to_list() == list(range(RECORDS[library]))
    assert rows["status"].is_in(["ok", "warning", "error"]).all()
    assert rows.filter(pl.col("status") != "ok")["message"].is_not_null().all()
    tally = counts(bad_records, library)
    assert tally["read"] == RECORDS[library] == tally["ok"] + tally["warning"] + tally["error"]
    assert tally["error"] == rows.filter(pl.col("status") == "error").height


@pytest.mark.slow
def test_sdf_record_problems_are_named(bad_records: Path) -> None:
    rows = frame(bad_records, "sdf_mixed").rows_by_key("input_index", named=True, unique=True)
    assert rows[1]["status"] == "ok" and rows[1]["parent_smiles"] == "CCN"  # V3000
    assert (rows[2]["status"], rows[2]["message"]) == ("error", NO_MOLBLOCK_END)  # binary garbage
    assert rows[3]["id"] == "caf\ufffd-4" and rows[3]["status"] == "warning"
    assert "non-UTF-8 bytes replaced in the title" in rows[3]["message"]
    assert "non-UTF-8 bytes replaced in property 'vendor'" in rows[3]["message"]
    assert rows[3]["vendor"] == "\ufffd\ufffdacme"
    assert rows[6]["status"] == "error" and "molblock" in rows[6]["message"].lower()
    assert rows[7]["status"] == "warning" and "no '$$$$' terminator" in rows[7]["message"]
    assert rows[7]["mw"] == "60.10" and rows[7]["parent_smiles"] == "NCCN"


@pytest.mark.slow
def test_duplicate_and_missing_ids(bad_records: Path) -> None:
    sdf = frame(bad_records, "sdf_mixed")
    ids = sdf["id"].to_list()
    assert ids[:2] + ids[3:6] == ["acid-1", "v3000-2", "caf\ufffd-4", "acid-1", "sdf_mixed:5"]
    assert ids[2].startswith("\x00\x01\x02")  # the garbage record's first line is its title, as in any SDF
    duplicates = sdf.filter(pl.col("id") == "acid-1")
    assert duplicates["parent_smiles"].to_list() == ["CC(=O)O", "Oc1ccccc1"]
    assert duplicates["status"].to_list() == ["ok", "ok"]  # a reused id is not a problem of the record
    pq_ids = frame(bad_records, "pq_ids")
    assert pq_ids["id"].to_list() == ["x1", "x1", "pq_ids:2", "pq_ids:3", "x5", "x6", AWKWARD_ID]
    assert pq_ids["input_id"].to_list() == PARQUET.column("id").to_pylist()  # the input column, untouched


@pytest.mark.slow
def test_code_in_input_is_carried_as_text_and_never_run(bad_records: Path) -> None:
    sdf = frame(bad_records, "sdf_mixed").row(0, named=True)
    assert (sdf["note"], sdf["shell"], sdf["status"]) == (CODE, SHELL, "ok")
    pq_ids = frame(bad_records, "pq_ids")
    assert pq_ids["note"].to_list() == PARQUET.column("note").to_pylist()
    code_as_smiles = pq_ids.row(3, named=True)
    assert code_as_smiles["status"] == "error" and "smiles" in code_as_smiles["message"].lower()
    assert not list(bad_records.rglob("PWNED"))


@pytest.mark.slow
def test_missing_and_unparsable_smiles_in_a_table(bad_records: Path) -> None:
    rows = frame(bad_records, "pq_ids")
    assert rows["status"].to_list() == ["ok", "ok", "ok", "error", "error", "error", "ok"]
    assert "whitespace" in rows["message"][3]  # the code above, read as a SMILES
    assert rows["message"][4] == "missing SMILES"
    assert "unparsable smiles" in rows["message"][5].lower()


@pytest.mark.slow
def test_a_library_of_broken_records_is_all_errors_and_qc_says_so(bad_records: Path) -> None:
    rows = frame(bad_records, "all_broken")
    assert rows["status"].to_list() == ["error"] * 4
    assert rows["parent_smiles"].null_count() == rows["ph_states"].null_count() == 4
    messages = rows["message"].to_list()
    assert messages[0] == messages[3] == NO_MOLBLOCK_END
    assert messages[1] == "unreadable record: empty"
    assert "counts line says 9 atoms" in messages[2]
    tally = counts(bad_records, "all_broken")
    assert (tally["ok"], tally["warning"], tally["error"]) == (0, 0, 4)
    reasons = pl.read_csv(bad_records / "out" / "all_broken" / "qc" / "errors_by_reason.tsv", separator="\t")
    assert reasons.height >= 3
    summary = json.loads((bad_records / "out" / "all_broken" / "qc" / "summary.json").read_text())
    assert summary["records"]["error"] == summary["records"]["read"] == 4
    assert summary["sites"]["molecules_with_sites"] == 0


@pytest.mark.slow
def test_an_empty_library_gives_typed_empty_outputs(bad_records: Path) -> None:
    schema = pq.read_schema(bad_records / "out" / "empty" / "annotated.parquet").remove_metadata()
    carried = [("smiles", pa.string()), ("input_id", pa.string()), ("weight", pa.float32())]
    assert schema.equals(pa.schema([*ANNOTATION_SCHEMA, *carried]))
    assert counts(bad_records, "empty")["read"] == 0


@pytest.mark.slow
@pytest.mark.parametrize("library", ["all_broken", "empty"])
def test_libraries_without_a_good_record_still_get_every_output(bad_records: Path, library: str) -> None:
    """Same files (QC, plots, docking, filters) as a library with good records."""
    assert finished_outputs(bad_records, library) == finished_outputs(bad_records, "pq_ids")


def finished_outputs(root: Path, library: str) -> set[str]:
    base = root / "out" / library
    found = {p.relative_to(base).as_posix() for p in base.rglob("*") if p.is_file()}
    # the gallery holds one card per chosen molecule, so only its presence compares
    found = {"qc/gallery/" if name.startswith("qc/gallery/") else name for name in found}
    return {name for name in found if not name.startswith("chunks/")}


@pytest.mark.slow
def test_docking_files_survive_line_breaks_tabs_and_terminators_in_input(bad_records: Path) -> None:
    """Line breaks and tabs in an id become spaces in the structure files (annotate/export)."""
    docking = bad_records / "out" / "pq_ids" / "docking"
    lines = (docking / "ph7.4.smi").read_text().splitlines()[1:]
    assert all(len(line.split("\t")) == 5 for line in lines)
    flattened = " ".join(AWKWARD_ID.split())
    assert [line.split("\t")[1] for line in lines].count(flattened) == 1
    sdf = list(Chem.SDMolSupplier(str(docking / "ph7.4.sdf"), sanitize=False))
    assert len(sdf) == len(lines) and None not in sdf


# --- bad runs ---------------------------------------------------------------------------

RULE_HEADER = "name\tcategory\tkind\tsmarts\tpka\tparent\tmodel\tsd\tsource\n"
BAD_RULES = {
    "invalid SMARTS": (
        RULE_HEADER + "my acid\tcarboxylic\tacid\t[C(=O)[OH1:1]\t4.0\tCC(=O)O\tfixed\t0.5\tcommon practice\n",
        "rules.tsv:2: invalid SMARTS '[C(=O)[OH1:1]'",
    ),
    "missing columns": (
        "name\tcategory\tkind\tsmarts\tpka\n",
        "rules.tsv:1: header lacks column(s) parent, model, sd, source",
    ),
}


UNUSABLE = {  # library name -> (input path, what the error must say)
    "missing": ("in/nothere.sdf", "'in/nothere.sdf' does not exist"),
    "unsupported": ("in/lib.mol2", "cannot tell the format of 'in/lib.mol2'"),
    "cut_gz": ("in/cut.smi.gz", "'in/cut.smi.gz' is a truncated gzip file"),
    "plain_gz": ("in/plain.smi.gz", "'in/plain.smi.gz' is not gzip-compressed"),
    "cut_parquet": ("in/cut.parquet", "'in/cut.parquet' is not a readable parquet file"),
    "damaged_parquet": ("in/damaged.parquet", "'in/damaged.parquet' is a corrupt Parquet file"),
    "noise_parquet": ("in/noise.parquet", "'in/noise.parquet' is not a readable parquet file"),
    "no_smiles": (
        "in/nosmiles.parquet",
        "has no column 'smiles' or 'molblock' (case ignored); its columns are ['structure']",
    ),
    "int_smiles": ("in/intsmiles.parquet", "the SMILES column 'smiles' holds int64 values, not text"),
}


def write_unusable_inputs(directory: Path) -> None:
    """The files of :data:`UNUSABLE`, plus a good Parquet file they are cut from."""
    directory.mkdir(parents=True, exist_ok=True)
    text = "".join(f"CC(=O)O m{i}\n" for i in range(3000)).encode()
    packed = gzip.compress(text)
    (directory / "cut.smi.gz").write_bytes(packed[: len(packed) // 2])
    (directory / "plain.smi.gz").write_bytes(text)
    table = pa.table({"smiles": ["CCO"] * 500, "id": [f"m{i}" for i in range(500)]})
    pq.write_table(table, directory / "good.parquet", compression="snappy")
    whole = (directory / "good.parquet").read_bytes()
    (directory / "cut.parquet").write_bytes(whole[: len(whole) // 2])
    start, end = len(whole) // 8, len(whole) // 2  # data pages; the footer stays intact
    (directory / "damaged.parquet").write_bytes(whole[:start] + b"\xab" * (end - start) + whole[end:])
    (directory / "noise.parquet").write_bytes(b"\x00\x01 not a table " * 40)
    pq.write_table(pa.table({"structure": ["CCO"]}), directory / "nosmiles.parquet")
    pq.write_table(pa.table({"smiles": [1, 2]}), directory / "intsmiles.parquet")
    (directory / "lib.mol2").write_text("@<TRIPOS>MOLECULE\n")


def assert_refused(root: Path, run: subprocess.CompletedProcess[str], *needles: str) -> None:
    """Failed at once, said why, and wrote nothing: no job ran, no output exists."""
    assert run.returncode != 0
    for needle in needles:
        assert needle in run.stdout, (needle, run.stdout[-4000:])
    assert "Select jobs to execute" not in run.stdout
    assert output_files(root) == []


@pytest.mark.slow
def test_unusable_inputs_stop_the_run_naming_each_library(tmp_path: Path) -> None:
    write_unusable_inputs(tmp_path / "in")
    (tmp_path / "in" / "fine.smi").write_text("CCO ethanol\n")
    libraries = {name: path for name, (path, _) in UNUSABLE.items()} | {"fine": "in/fine.smi"}
    root = workdir(tmp_path, libraries=libraries)
    run = snakemake(root, "--cores", "1", ok=False)
    assert_refused(root, run, "Ionotate cannot start this run; nothing was done")
    for name, (_, says) in UNUSABLE.items():
        assert f"library {name!r}: " in run.stdout and says in run.stdout, (name, run.stdout[-4000:])
    assert "library 'fine'" not in run.stdout


SCHEMA_REFUSES = "Error validating config file"


@pytest.mark.slow
@pytest.mark.parametrize(
    ("setting", "says"),
    [
        ({"ph": [7.4, 15]}, (SCHEMA_REFUSES, "15 is greater than the maximum of 14", "On instance['ph']")),
        (
            {"chunk_size": -5},
            (SCHEMA_REFUSES, "-5 is less than the minimum of 1", "On instance['chunk_size']"),
        ),
        (
            {"chunk_size": "100"},
            (SCHEMA_REFUSES, "'100' is not of type 'integer'", "On instance['chunk_size']"),
        ),
        # NaN passes every JSON Schema bound, since every comparison with it is false
        ({"ph": [float("nan")]}, ("config['ph'][0] is NaN; give a number",)),
    ],
)
def test_a_bad_setting_stops_the_run_naming_it(tmp_path: Path, setting: dict, says: tuple[str, ...]) -> None:
    (tmp_path / "lib.smi").write_text("CCO ethanol\n")
    root = workdir(tmp_path, libraries={"lib": "lib.smi"}, **setting)
    assert_refused(root, snakemake(root, "--cores", "1", ok=False), *says)


@pytest.mark.slow
@pytest.mark.parametrize("problem", list(BAD_RULES))
def test_a_bad_rule_file_stops_the_run_naming_file_and_line(tmp_path: Path, problem: str) -> None:
    content, says = BAD_RULES[problem]
    (tmp_path / "rules.tsv").write_text(content)
    (tmp_path / "lib.smi").write_text("CCO ethanol\n")
    root = workdir(tmp_path, libraries={"lib": "lib.smi"}, user_rules="rules.tsv")
    assert_refused(root, snakemake(root, "--cores", "1", ok=False), "user_rules: ", says)


@pytest.mark.slow
@pytest.mark.parametrize(
    ("value", "says"),
    [
        ('!!python/object/apply:os.system ["touch PWNED"]', "Config file is not valid JSON or YAML"),
        ("!!python/name:os.system", "is not of type 'integer'"),
    ],
)
def test_a_config_with_python_tags_is_refused_and_nothing_runs(tmp_path: Path, value: str, says: str) -> None:
    (tmp_path / "lib.smi").write_text("CCO ethanol\n")
    root = workdir(tmp_path, libraries={"lib": "lib.smi"})
    (root / "run.yaml").write_text((root / "run.yaml").read_text() + f"chunk_size: {value}\n")
    assert_refused(root, snakemake(root, "--cores", "1", ok=False), says)
    assert not list(tmp_path.rglob("PWNED"))


# --- the checks themselves, without Snakemake (fast) -------------------------------------


@pytest.fixture(scope="module")
def damaged(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("damaged")
    write_unusable_inputs(root / "in")
    return root


@pytest.mark.parametrize("name", list(UNUSABLE))
def test_each_unusable_input_is_named(damaged: Path, name: str, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(damaged)
    path, says = UNUSABLE[name]
    problem = library_problem(LibrarySpec(name=name, path=Path(path)), read_whole=True)
    assert problem is not None and problem.startswith(f"library {name!r}: ") and says in problem


def test_readable_inputs_pass(damaged: Path, tmp_path: Path) -> None:
    two_members = tmp_path / "two.smi.gz"  # concatenated gzip files are one valid gzip file
    two_members.write_bytes(gzip.compress(b"CCO a\n") + gzip.compress(b"CCN b\n"))
    for path in (damaged / "in" / "good.parquet", two_members):
        assert library_problem(LibrarySpec(name="lib", path=path), read_whole=True) is None


def test_an_empty_gzip_file_is_an_empty_library_not_a_problem(tmp_path: Path) -> None:
    (tmp_path / "empty.sdf.gz").write_bytes(b"")
    assert library_problem(LibrarySpec(name="lib", path=tmp_path / "empty.sdf.gz"), read_whole=True) is None


def test_gzip_is_read_through_only_while_the_split_is_pending(damaged: Path, tmp_path: Path) -> None:
    """A finished split makes the whole-file read unnecessary; a newer input makes it needed again."""
    spec = LibrarySpec(name="cut", path=tmp_path / "cut.smi.gz")
    spec.path.write_bytes((damaged / "in" / "cut.smi.gz").read_bytes())
    chunk_dir = tmp_path / "chunks"
    with pytest.raises(RunCheckError, match="truncated gzip"):
        check_run({"cut": spec}, config={}, chunk_dirs={"cut": chunk_dir})
    chunk_dir.mkdir()
    (chunk_dir / "manifest.json").write_text("{}")
    os.utime(spec.path, (1, 1))  # input older than the split's manifest
    check_run({"cut": spec}, config={}, chunk_dirs={"cut": chunk_dir})
    os.utime(spec.path)  # touched after the split: the split will rerun, so read it through again
    os.utime(chunk_dir / "manifest.json", (2, 2))
    with pytest.raises(RunCheckError, match="truncated gzip"):
        check_run({"cut": spec}, config={}, chunk_dirs={"cut": chunk_dir})


def test_every_problem_of_a_run_is_listed_at_once(damaged: Path, tmp_path: Path) -> None:
    (tmp_path / "rules.tsv").write_text(BAD_RULES["invalid SMARTS"][0])
    specs = {
        name: LibrarySpec(name=name, path=damaged / "in" / file)
        for name, file in [("a", "cut.parquet"), ("b", "nosmiles.parquet"), ("c", "good.parquet")]
    }
    with pytest.raises(RunCheckError) as caught:
        check_run(
            specs,
            config={"ph": [7.4, math.nan], "user_rules": str(tmp_path / "rules.tsv")},
            chunk_dirs={n: tmp_path / n for n in specs},
        )
    listed = [line for line in str(caught.value).splitlines() if line.startswith("  - ")]
    assert [line.split(":")[0] for line in listed] == [
        "  - config['ph'][1] is NaN; give a number",
        "  - library 'a'",
        "  - library 'b'",
        "  - user_rules",
    ]


def test_a_bad_rule_file_fails_the_chunk_job_instead_of_every_record(tmp_path: Path) -> None:
    """The job's own guard, for a rule file changed after the run started: no file of error rows."""
    (tmp_path / "lib.smi").write_text("CCO ethanol\nCCN amine\n")
    split_library(LibrarySpec(name="lib", path=tmp_path / "lib.smi"), tmp_path / "chunks", chunk_size=10)
    (tmp_path / "rules.tsv").write_text(BAD_RULES["invalid SMARTS"][0])
    out = tmp_path / "annotated.parquet"
    with pytest.raises(RuleFileError, match="invalid SMARTS"):
        annotate_chunk(
            tmp_path / "chunks" / "000000.parquet", out, settings=Settings(user_rules=tmp_path / "rules.tsv")
        )
    assert not out.exists()


@pytest.mark.slow
def test_an_edited_user_rule_file_reruns_the_annotation_and_names_its_checksum(tmp_path: Path) -> None:
    """The file's checksum is a param of the annotation jobs: an edit reruns them even with the old mtime."""
    header = "name\tcategory\tkind\tsmarts\tpka\tparent\tmodel\trho\tsigma\tortho_k\tortho_c\toverlap\tsd\tsource\n"
    row = "phenol\tphenol\tacid\t[OX2H1:1][c:2]\t{pka}\tOc1ccccc1\thammett\t2.23\tp-\t0.85\t0\tseparate\t0.3\tdemo\n"
    rules = tmp_path / "rules.tsv"
    rules.write_text(header + row.format(pka="9.00"))
    (tmp_path / "lib.smi").write_text("Oc1ccccc1 phenol\nCCO ethanol\n")
    root = workdir(tmp_path, libraries={"lib": "lib.smi"}, user_rules="rules.tsv")
    snakemake(root, "--cores", "1")
    annotated = root / "out" / "lib" / "annotated.parquet"
    sums = json.loads(read_run_metadata(pq.read_schema(annotated))["rule_tables"])
    assert sums["user_rules/rules.tsv"] == hashlib.sha256(rules.read_bytes()).hexdigest()
    assert {"data/groups.tsv", "data/substituents.tsv", "data/interactions.tsv", "data/contexts.tsv"} <= set(sums)
    qc = json.loads((root / "out" / "lib" / "qc" / "settings_and_versions.json").read_text())
    assert qc["rule_tables_sha256"] == sums

    assert "annotate_chunk" not in snakemake(root, "--cores", "1", "--dry-run").stdout
    stat = rules.stat()
    rules.write_text(header + row.format(pka="9.50"))
    os.utime(rules, ns=(stat.st_atime_ns, stat.st_mtime_ns))  # the same mtime: only the content tells
    assert "annotate_chunk" in snakemake(root, "--cores", "1", "--dry-run").stdout
    snakemake(root, "--cores", "1")
    sites = pq.read_table(annotated).to_pylist()[0]["sites"]
    assert sites[0]["pka"] == pytest.approx(9.5)
