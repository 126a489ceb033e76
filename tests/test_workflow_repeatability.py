"""Same input and config give the same annotated Parquet: twice, on 1 or 2 cores, in any chunk size.

The same config runs on one core and on two cores (chunks of 3), and once more
with the whole library as one chunk; tests/test_workflow_faults.py adds a run of the one-core
command that is killed twice and finished by rerunning, compared with the same
reference.

"Same" is checked on content: every column, value and type, the row order and the
run metadata. The files are not byte-identical across chunk sizes, and need not
be: each chunk becomes one Parquet row group, so the physical layout follows the
chunk size while the rows do not.

The library is a small SDF whose properties appear in some records only and
first appear in different chunks, with a broken record and a last record
without ``$$$$``, so that the merge of chunk schemas is exercised as well.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import polars as pl
import pyarrow.parquet as pq
import pytest
from polars.testing import assert_frame_equal

from annotate.io.schema import ANNOTATION_SCHEMA

from tests.helpers import molblock
from tests.helpers import sd_items as items
from tests.test_workflow_bad_input import snakemake, workdir

pytestmark = pytest.mark.slow

LIBRARY = "lib"
MOLECULES = [
    ("CC(=O)O", {"mw": b"60.05"}),
    ("CCN", {}),
    ("c1ccccc1O", {"vendor": b"acme"}),
    ("CCCC(=O)O", {"mw": b"88.11"}),
    ("NCCN", {}),
    ("OC(=O)c1ccccc1", {"vendor": b"zeta", "mw": b"122.12"}),
    ("CCCCN", {}),
    ("c1ccncc1", {}),
    ("OCC(N)C(=O)O", {"batch": b"7"}),
    ("CC(C)N", {}),
    ("Oc1ccc(Cl)cc1", {"mw": b"128.56"}),
    ("CS(=O)(=O)O", {}),
]


def library_sdf() -> bytes:
    """Twelve records plus a broken one at position 4; the last has no terminator."""
    records = [molblock(smiles, f"m{i}") + items(**props) for i, (smiles, props) in enumerate(MOLECULES)]
    records.insert(4, b"broken\n  cut short\n\n  4  3  0  0\n")
    return b"$$$$\n".join(records)


RECORDS = len(MOLECULES) + 1


def annotated(root: Path) -> Path:
    return root / "out" / LIBRARY / "annotated.parquet"


def fresh_workdir(root: Path, *, chunk_size: int) -> Path:
    """A run directory with the library and its config; nothing run yet."""
    root = workdir(root, libraries={LIBRARY: "lib.sdf"}, ph=[7.4, 3.0], chunk_size=chunk_size)
    (root / "lib.sdf").write_bytes(library_sdf())
    return root


def finished_run(factory: pytest.TempPathFactory, *, cores: int, chunk_size: int) -> Path:
    """The run directory of one uninterrupted run, made once per test session.

    Cached by its settings below the session's base temporary directory, so that the
    fault tests compare against the very run these tests check.
    """
    done = factory.getbasetemp() / f"finished_cores{cores}_chunk{chunk_size}"
    if annotated(done).exists():
        return done
    shutil.rmtree(done, ignore_errors=True)
    root = fresh_workdir(done, chunk_size=chunk_size)
    snakemake(root, "--cores", str(cores), str(annotated(root).relative_to(root)))
    return root


REFERENCE_CHUNK_SIZE = 3


def reference_run(factory: pytest.TempPathFactory) -> Path:
    """One core, chunks of 3: the run every other run is compared with."""
    return finished_run(factory, cores=1, chunk_size=REFERENCE_CHUNK_SIZE)


@pytest.fixture(scope="module")
def one_core(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return reference_run(tmp_path_factory)


@pytest.fixture(scope="module")
def two_cores(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return finished_run(tmp_path_factory, cores=2, chunk_size=REFERENCE_CHUNK_SIZE)


@pytest.fixture(scope="module")
def other_chunks(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return finished_run(tmp_path_factory, cores=2, chunk_size=RECORDS)  # one chunk


def assert_same_content(a: Path, b: Path) -> None:
    """Every column (names, order, types, values, exactly) and the run metadata."""
    assert_frame_equal(pl.read_parquet(annotated(a)), pl.read_parquet(annotated(b)), check_exact=True)
    assert pq.read_schema(annotated(a)).equals(pq.read_schema(annotated(b)), check_metadata=True)


def test_the_library_is_split_as_intended(one_core: Path, other_chunks: Path) -> None:
    """The control: the runs compared below really did cut the library differently."""
    assert pq.ParquetFile(annotated(one_core)).num_row_groups == 5
    assert pq.ParquetFile(annotated(other_chunks)).num_row_groups == 1
    frame = pl.read_parquet(annotated(one_core))
    assert frame["input_index"].to_list() == list(range(RECORDS))
    assert frame["status"].value_counts().sort("status").rows() == [("error", 1), ("ok", 11), ("warning", 1)]
    assert frame.columns[len(ANNOTATION_SCHEMA) :] == ["mw", "vendor", "batch"]  # first seen first


def test_same_config_on_one_or_two_cores_gives_the_same_content(one_core: Path, two_cores: Path) -> None:
    assert_same_content(one_core, two_cores)


def test_another_chunk_size_gives_the_same_rows_order_and_values(one_core: Path, other_chunks: Path) -> None:
    assert_same_content(one_core, other_chunks)
