"""End to end: the real workflow, via the Snakemake CLI, on small inputs of every format.

One run (module fixture) annotates SDF, SDF.gz, SMILES, CSV, Parquet and an empty
library with chunks of two records, from a working directory laid out like a
clone of the repository whose config/config.yaml names demo libraries that do
exist, so that a leak of the demo into a user's --configfile run would show.
"""

from __future__ import annotations

import gzip
import os
import re
import subprocess
import sys
from pathlib import Path

import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
import yaml

from annotate.io.records import NO_MOLBLOCK_END
from annotate.io.schema import ANNOTATION_SCHEMA, NOTICE, read_run_metadata
from tests.helpers import molblock
from tests.helpers import run_snakemake as snakemake
from tests.helpers import sd_items as items

pytestmark = pytest.mark.slow

ROOT = Path(__file__).resolve().parents[1]
CHUNK_SIZE = 2




SDF = b"".join(
    [
        molblock("CC(=O)O", "acid-1") + items(mw=b"60.05", vendor=b"acme") + b"$$$$\n",
        b"broken-2\n  cut short\n\n  4  3  0  0\n$$$$\n",
        molblock("CCN", "amine-3", v3000=True) + items(vendor=b"b\xe9ta") + b"$$$$\n",
        molblock("c1ccccc1", "neutral-4") + items(mw=b"78.11") + b"$$$$\n",
        molblock("CCO", "") + items(mw=b"46.07"),  # last record: no $$$$ terminator
    ]
)
SMI = "CC(=O)O acetic\nCCN\n# a comment line\nc1ccccc1 benzene\nnot_a_smiles bad\n"
CSV = "Code,SMILES,mass\n1,CC(=O)O,60.05\n2,,0\n3,CCN,45.08\n4,c1ccccc1,78.11\n"
PARQUET = pa.table(
    {
        "id": ["p1", "p2", "p3"],
        "smiles": ["CC(=O)O", "CCN", "c1ccccc1"],
        "n": pa.array([1, 2, 3], pa.int16()),
        "tags": pa.array([["a"], [], ["b", "c"]], pa.list_(pa.string())),
    }
)
LIBRARIES = {
    "sdf": "inputs/lib.sdf",
    "sdf_gz": "inputs/lib.sdf.gz",
    "smi": "inputs/lib.smi",
    "csv": {"path": "inputs/lib.csv", "id_column": "code"},
    "parquet": "inputs/lib.parquet",
    "empty": "inputs/empty.smi",
}
RECORDS = {"sdf": 5, "sdf_gz": 5, "smi": 4, "csv": 4, "parquet": 3, "empty": 0}



def jobs_of(rule: str, output: str) -> int:
    return len(re.findall(rf"^(?:local)?rule {rule}:$", output, flags=re.MULTILINE))


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A clone-like working directory: the real workflow, a default config, existing demo files."""
    work = tmp_path_factory.mktemp("workflow")
    (work / "Snakefile").symlink_to(ROOT / "Snakefile")
    for part in ("rules", "scripts", "schemas", "report", "envs"):
        (work / "workflow" / part).parent.mkdir(exist_ok=True)
        (work / "workflow" / part).symlink_to(ROOT / "workflow" / part)
    (work / "config").mkdir()
    (work / "config" / "config.yaml").write_text((ROOT / "config" / "config.yaml").read_text())
    demo = work / "workflow" / "demo"
    demo.mkdir()
    (demo / "library.sdf").write_bytes(molblock("CCO", "demo") + b"$$$$\n")
    pq.write_table(pa.table({"smiles": ["CCO"]}), demo / "library.parquet")

    inputs = work / "inputs"
    inputs.mkdir()
    (inputs / "lib.sdf").write_bytes(SDF)
    (inputs / "lib.sdf.gz").write_bytes(gzip.compress(SDF))
    (inputs / "lib.smi").write_text(SMI)
    (inputs / "lib.csv").write_text(CSV)
    pq.write_table(PARQUET, inputs / "lib.parquet")
    (inputs / "empty.smi").write_text("# nothing here\n")
    config = {"libraries": LIBRARIES, "ph": [7.4, 2.0], "outdir": "out", "chunk_size": CHUNK_SIZE}
    (work / "mine.yaml").write_text(yaml.safe_dump(config, sort_keys=False))
    return work


@pytest.fixture(scope="module")
def first_run(workdir: Path) -> str:
    return snakemake(workdir, "--cores", "2", "--configfile", "mine.yaml").stdout


def annotated(workdir: Path, library: str) -> Path:
    return workdir / "out" / library / "annotated.parquet"


@pytest.mark.parametrize("library", list(LIBRARIES))
def test_one_row_per_record_in_input_order(workdir: Path, first_run: str, library: str) -> None:
    table = pq.read_table(annotated(workdir, library))
    assert table.num_rows == RECORDS[library]
    assert table.column("input_index").to_pylist() == list(range(RECORDS[library]))
    assert set(table.column("library").to_pylist()) <= {library}
    counts = pl.read_csv(workdir / "out" / library / "qc" / "counts.tsv", separator="\t").row(0, named=True)
    assert counts["read"] == RECORDS[library] == counts["ok"] + counts["warning"] + counts["error"]


@pytest.mark.parametrize(
    ("library", "carried"),
    [
        ("sdf", [("mw", pa.string()), ("vendor", pa.string())]),
        ("smi", []),
        ("csv", [("Code", pa.int64()), ("SMILES", pa.string()), ("mass", pa.float64())]),
        (
            "parquet",
            [
                ("input_id", pa.string()),
                ("smiles", pa.string()),
                ("n", pa.int16()),
                ("tags", pa.list_(pa.string())),
            ],
        ),
        ("empty", []),
    ],
)
def test_pyarrow_schema_is_the_contract_plus_input_columns(
    workdir: Path, first_run: str, library: str, carried: list[tuple[str, pa.DataType]]
) -> None:
    schema = pq.read_schema(annotated(workdir, library))
    assert schema.remove_metadata().equals(pa.schema([*ANNOTATION_SCHEMA, *carried]))
    assert read_run_metadata(schema)["notice"] == NOTICE


def test_polars_reads_the_declared_types(workdir: Path, first_run: str) -> None:
    frame = pl.read_parquet(annotated(workdir, "parquet"))
    declared = pl.from_arrow(ANNOTATION_SCHEMA.empty_table()).schema
    assert {name: frame.schema[name] for name in declared} == dict(declared)
    assert frame.schema["n"] == pl.Int16 and frame.schema["tags"] == pl.List(pl.String)
    assert frame["input_id"].to_list() == frame["id"].to_list() == ["p1", "p2", "p3"]
    assert frame["tags"].to_list() == [["a"], [], ["b", "c"]]


@pytest.mark.parametrize("library", ["sdf", "sdf_gz"])
def test_sdf_ids_properties_and_reading_problems(workdir: Path, first_run: str, library: str) -> None:
    frame = pl.read_parquet(annotated(workdir, library))
    assert frame["id"].to_list() == ["acid-1", "broken-2", "amine-3", "neutral-4", f"{library}:4"]
    assert frame["mw"].to_list() == ["60.05", None, None, "78.11", "46.07"]
    assert frame["vendor"].to_list() == ["acme", None, "b\ufffdta", None, None]
    broken, amine, last = frame.row(1, named=True), frame.row(2, named=True), frame.row(4, named=True)
    assert (broken["status"], broken["message"], broken["ph_states"]) == ("error", NO_MOLBLOCK_END, None)
    assert (
        amine["status"] == "warning" and "non-UTF-8 bytes replaced in property 'vendor'" in amine["message"]
    )
    assert last["status"] == "warning" and "no '$$$$' terminator" in last["message"]
    assert [s["ph"] for s in frame.row(0, named=True)["ph_states"]] == [7.4, 2.0]


def test_csv_and_smiles_rows(workdir: Path, first_run: str) -> None:
    csv = pl.read_parquet(annotated(workdir, "csv"))
    assert csv["id"].to_list() == ["1", "2", "3", "4"]
    assert csv["Code"].to_list() == [1, 2, 3, 4] and csv["mass"].to_list() == [60.05, 0.0, 45.08, 78.11]
    assert (csv["status"][1], csv["message"][1]) == ("error", "missing SMILES")
    smi = pl.read_parquet(annotated(workdir, "smi"))
    assert smi["id"].to_list() == ["acetic", "smi:1", "benzene", "bad"]
    assert smi["status"][3] == "error"  # not a SMILES: the engine must refuse it
    assert "error" not in smi["status"][:3].to_list()


def test_each_chunk_ran_as_its_own_job(workdir: Path, first_run: str) -> None:
    chunks = {lib: -(-n // CHUNK_SIZE) or 1 for lib, n in RECORDS.items()}
    assert jobs_of("annotate_chunk", first_run) == sum(chunks.values())
    for library, n in chunks.items():
        logs = sorted((workdir / "out" / "logs" / library / "annotate_chunk").glob("*.log"))
        benchmarks = sorted((workdir / "out" / "benchmarks" / library / "annotate_chunk").glob("*.tsv"))
        assert [p.stem for p in logs] == [p.stem for p in benchmarks] == [f"{i:06d}" for i in range(n)]
        for log in logs:
            assert f"{log.stem}.parquet: " in log.read_text()
    assert chunks["sdf"] >= 2


def test_only_the_user_libraries_were_annotated(workdir: Path, first_run: str) -> None:
    assert sorted(os.listdir(workdir / "out")) == sorted([*LIBRARIES, "logs", "benchmarks"])
    assert "demo_sdf" not in first_run and "demo_parquet" not in first_run


def test_without_filters_no_filter_job_runs_and_qc_does_not_wait_for_one(workdir: Path, first_run: str) -> None:
    """The default config has a filter (the control: the first run's filter jobs)."""
    assert jobs_of("filter_library", first_run) == len(LIBRARIES)
    dry = snakemake(workdir, "--dry-run", "--config", "outdir=nofilters", "filters=[]").stdout
    assert jobs_of("filter_library", dry) == 0
    assert jobs_of("summarize_qc", dry) == 2  # the two demo libraries
    assert "filters.tsv" not in dry


def test_without_a_configfile_the_demo_libraries_run(workdir: Path, first_run: str) -> None:
    """The control for the test above: the default config does name demo libraries that exist."""
    dry = snakemake(workdir, "--dry-run", "--config", "outdir=control").stdout
    assert "library=demo_sdf" in dry and "library=demo_parquet" in dry
    assert "library=sdf" not in dry


def test_qc_outputs_exist_for_every_library(workdir: Path, first_run: str) -> None:
    names = [
        "counts.tsv",
        "errors_by_reason.tsv",
        "charge_by_ph.tsv",
        "group_frequency.tsv",
        "pka_by_group.tsv",
        "sites_per_molecule.tsv",
        "summary.json",
        "settings_and_versions.json",
        "charge_by_ph.png",
        "pka_by_group.png",
        "filters.tsv",
        "charge_profile.png",
        "gallery",
    ]
    for library in LIBRARIES:
        qc = workdir / "out" / library / "qc"
        assert sorted(p.name for p in qc.iterdir()) == sorted(names)


def test_polars_one_liner_for_neutral_at_ph_7_4(workdir: Path, first_run: str) -> None:
    path = annotated(workdir, "parquet")
    neutral = (
        pl.scan_parquet(path)
        .filter(
            pl.col("ph_states")
            .list.eval((pl.element().struct.field("ph") == 7.4) & (pl.element().struct.field("charge") == 0))
            .list.any()
        )
        .collect()
    )
    by_hand = [
        row["id"]
        for row in pq.read_table(path).to_pylist()
        if any(s["ph"] == 7.4 and s["charge"] == 0 for s in row["ph_states"] or [])
    ]
    assert neutral["id"].to_list() == by_hand


def test_rerun_after_interruption_redoes_only_the_missing_chunk(workdir: Path, first_run: str) -> None:
    chunk_dir = workdir / "out" / "sdf" / "chunks" / "annotated"
    kept = chunk_dir / "000000.parquet"
    kept_mtime = kept.stat().st_mtime_ns
    (chunk_dir / "000001.parquet").unlink()
    annotated(workdir, "sdf").unlink()
    rerun = snakemake(workdir, "--cores", "2", "--configfile", "mine.yaml").stdout
    assert jobs_of("annotate_chunk", rerun) == 1
    assert jobs_of("split_library", rerun) == 0
    assert jobs_of("gather_annotations", rerun) == 1
    assert kept.stat().st_mtime_ns == kept_mtime
    assert pq.read_table(annotated(workdir, "sdf")).num_rows == RECORDS["sdf"]


def test_html_report_includes_the_qc(workdir: Path, first_run: str) -> None:
    snakemake(workdir, "--configfile", "mine.yaml", "--report", "report.html")
    html = (workdir / "report.html").read_text()
    assert f"Ionotate annotated {len(LIBRARIES)} libraries at pH 7.4, 2.0." in html
    for name in ("counts.tsv", "pka_by_group.png", "charge_by_ph.png", "summary.json"):
        assert name in html


def test_lint_is_clean_and_rule_files_are_formatted(workdir: Path) -> None:
    lint = snakemake(workdir, "--lint", "--configfile", "mine.yaml").stdout
    assert "Congratulations, your workflow is in a good condition!" in lint
    rule_files = [ROOT / "Snakefile", *sorted((ROOT / "workflow" / "rules").glob("*.smk"))]
    fmt = subprocess.run(
        [sys.executable, "-m", "snakefmt", "--check", *map(str, rule_files)],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
        check=False,
    )
    assert fmt.returncode == 0, fmt.stdout
