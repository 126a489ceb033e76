"""benchmarks/measure_memory.py's helpers: the fake library is the seed, copied with moved positions.

Nothing here measures memory or time; the script's figures are its own output.
"""

from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from annotate.pipeline.manifest import ChunkEntry, Manifest, read_manifest
from tests.helpers import load_script

mm = load_script("benchmarks/measure_memory.py")


def seed_rows() -> pa.Table:
    """Three records; record 1 has two rows (two species), record 2 none."""
    return pa.table({"input_index": pa.array([0, 1, 1], pa.int64()), "id": ["a", "b", "b"], "x": [10, 11, 12]})


def test_copied_rows_move_positions_and_suffix_ids_of_later_copies() -> None:
    rows = mm.copied_rows(seed_rows(), first=2, stop=7, seed_records=3)
    # positions 2..6 are seed records 2, 0, 1, 2, 0 (copies 0, 1, 1, 1, 2); record 2 has no rows
    assert rows.column("input_index").to_pylist() == [3, 4, 4, 6]
    assert rows.column("id").to_pylist() == ["a~1", "b~1", "b~1", "a~2"]
    assert rows.column("x").to_pylist() == [10, 11, 12, 10]


def test_fake_library_has_the_manifest_and_chunks_of_its_size(tmp_path: Path) -> None:
    seed = tmp_path / "seed"
    for stage in ("annotated", "docking"):
        (seed / "chunks" / stage).mkdir(parents=True)
        pq.write_table(seed_rows(), seed / "chunks" / stage / "000000.parquet")
    manifest = Manifest("bench", {"path": "x"}, "smiles", 3, (ChunkEntry("000000", 0, 3),))
    (seed / "chunks" / "input").mkdir()
    manifest.write(seed / "chunks" / "input")
    out = mm.fake_library(seed, tmp_path / "fake", size=8, chunk_size=5)
    fake = read_manifest(out / "chunks" / "input")
    assert [(c.name, c.first_index, c.records) for c in fake.chunks] == [("000000", 0, 5), ("000001", 5, 3)]
    second = pq.read_table(out / "chunks" / "annotated" / "000001.parquet")
    assert second.column("input_index").to_pylist() == [6, 7, 7]  # seed records 2, 0, 1 of copies 1, 2, 2


def test_table_shows_growth_between_the_smallest_and_largest_size() -> None:
    results = {
        "100": {"split": {"peak_rss_mb": 200.0, "cpu_s": 1.0}},
        "1000": {"split": {"peak_rss_mb": 250.5, "cpu_s": 9.0}},
    }
    lines = mm.format_table(results, ["split", "gather"]).splitlines()
    assert lines[1] == "split\t200.0\t250.5\t50.5\t1.0\t9.0"
    assert lines[2] == "gather\t-\t-\t-\t-\t-"
    assert lines[-1].startswith("largest peak RSS of any job: 250.5 MB")
