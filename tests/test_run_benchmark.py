"""Smoke tests of benchmarks/run_benchmark.py's helpers; nothing here times anything.

The ratio checks use hand-picked synthetic timings, worked out by hand in the comments.
"""

from pathlib import Path

import pytest

from tests.helpers import load_script

rb = load_script("benchmarks/run_benchmark.py")


def _smi(tmp_path: Path, n: int) -> Path:
    path = tmp_path / "lib.smi"
    path.write_text("smiles\tid\n" + "".join(f"C{'C' * i}O\tB-{i}\n" for i in range(n)))
    return path


def test_sample_is_strided_over_the_whole_file_and_capped(tmp_path: Path) -> None:
    records = rb.read_sample(_smi(tmp_path, 10), size=10, sample=3)  # stride 10 // 3 = 3
    assert [rid for _, rid in records] == ["B-0", "B-3", "B-6"]
    assert records[1][0] == "CCCCO"


def test_sample_larger_than_library_takes_every_record(tmp_path: Path) -> None:
    assert len(rb.read_sample(_smi(tmp_path, 4), size=4, sample=100)) == 4


def test_floor_writes_canonical_smiles_and_an_empty_field_for_unparsable_records(tmp_path: Path) -> None:
    out = tmp_path / "floor.smi"
    # RDKit writes ethanol as CCO whatever atom order it was given in (RDKit canonical SMILES)
    with out.open("w") as handle:
        count = rb.floor_pass([("OCC", "a"), ("C1CC", "bad"), ("", "empty")], handle)
    assert count == 3
    assert out.read_text().splitlines() == ["CCO\ta", "\tbad", "\tempty"]


def test_passes_take_turns_over_the_same_records_block_by_block() -> None:
    records = [(f"C{i}", str(i)) for i in range(7)]
    seen: list[tuple[str, list[str]]] = []

    def recorder(name: str):  # noqa: ANN202
        def work(part) -> int:  # noqa: ANN001
            seen.append((name, [rid for _, rid in part]))
            return len(part)
        return work

    timings = rb.timed_in_turns({"a": recorder("a"), "b": recorder("b")}, records, block=3)
    assert seen == [("a", ["0", "1", "2"]), ("b", ["0", "1", "2"]), ("a", ["3", "4", "5"]),
                    ("b", ["3", "4", "5"]), ("a", ["6"]), ("b", ["6"])]
    assert {name: t.molecules for name, t in timings.items()} == {"a": 7, "b": 7}
    assert all(t.cpu_s >= 0 and t.wall_s >= 0 for t in timings.values())


def test_job_benchmarks_take_the_largest_rss_and_sum_seconds_per_rule(tmp_path: Path) -> None:
    header = "s\th:m:s\tmax_rss\tmax_vms\tmax_uss\tmax_pss\tio_in\tio_out\tmean_load\tcpu_time\n"
    (tmp_path / "annotate_chunk").mkdir()
    (tmp_path / "annotate_chunk" / "000000.tsv").write_text(header + "10.5\t0:00:10\t300.0\t1\t1\t1\t0\t0\t50\t9.0\n")
    (tmp_path / "annotate_chunk" / "000001.tsv").write_text(header + "2.0\t0:00:02\t410.5\t1\t1\t1\t0\t0\t50\t1.5\n")
    (tmp_path / "gather_annotations.tsv").write_text(header + "0.2\t0:00:00\tNA\tNA\tNA\tNA\tNA\tNA\tNA\tNA\n")
    peaks, seconds = rb.read_job_benchmarks(tmp_path)
    assert peaks == {"annotate_chunk": 410.5, "gather_annotations": None}
    assert seconds["annotate_chunk"] == {"wall": 12.5, "cpu": 10.5, "jobs": 2}
    assert seconds["gather_annotations"] == {"wall": 0.2, "cpu": 0.0, "jobs": 1}


def test_config_extra_cannot_move_the_library_or_its_outputs(tmp_path: Path) -> None:
    extra = {"ph": [5.0], "docking": {"formats": []}, "outdir": "elsewhere", "chunk_size": 1}
    config = rb.workflow_config(library=tmp_path / "x.parquet", outdir=tmp_path / "res", chunk_size=500, extra=extra)
    assert config["libraries"] == {rb.LIBRARY_NAME: str(tmp_path / "x.parquet")}
    assert (config["outdir"], config["chunk_size"]) == (str(tmp_path / "res"), 500)
    assert config["ph"] == [5.0] and config["docking"] == {"formats": []}
    assert rb.workflow_config(library=tmp_path, outdir=tmp_path, chunk_size=1, extra={})["ph"] == list(rb.ONE_PH)


def _result() -> object:
    floor = rb.Timing(1000, wall_s=2.0, cpu_s=1.0)  # 1000 mol/CPU-s
    engine = {"1ph": rb.Timing(1000, 6.0, 5.0), "3ph": rb.Timing(1000, 7.0, 6.0)}  # 200 and 166.7 mol/CPU-s
    result = rb.SizeResult(10_000, 1000, 2_000, floor, engine, {"1ph": {"ok": 1000}, "3ph": {"ok": 1000}})
    runs = {1: rb.Timing(10_000, 70.0, 60.0, 1), 2: rb.Timing(10_000, 40.0, 62.0, 2)}
    for cores, timing in runs.items():
        jobs = {"annotate_chunk": {"wall": 50.0, "cpu": 45.0, "jobs": 2}}
        result.workflow[cores] = rb.WorkflowRun(timing, {"annotate_chunk": 300.0}, jobs, (0.5, 1.0))
    return result


def test_ratios_follow_the_issue_definitions() -> None:
    ratios = _result().ratios()
    assert ratios["engine_x_floor"] == pytest.approx(5.0)  # 1000 / 200
    assert ratios["three_ph_x_one_ph"] == pytest.approx(1.2)  # 6 CPU-s / 5 CPU-s
    assert ratios["workflow_1c_x_engine"] == pytest.approx(1.2)  # 60 CPU-s per 10k vs 50 for the engine
    assert ratios["workflow_2c_x_floor"] == pytest.approx(6.2)  # 62 CPU-s per 10k vs 10 for the floor
    assert ratios["speedup_2_cores"] == pytest.approx(1.75)  # 70 s / 40 s of wall time


def test_split_only_runs_give_no_workflow_ratios() -> None:
    result = _result()
    result.workflow = {1: rb.WorkflowRun(rb.Timing(10_000, 5.0, 4.0), {}, {}, (0.0, 0.0), until="split_library")}
    assert not any(key.startswith(("workflow_", "speedup")) for key in result.ratios())


def test_table_marks_met_and_missed_targets() -> None:
    report = {"settings": {"chunk_size": 500, "workflow_input": "parquet"}, "sizes": [_result().as_json()]}
    lines = rb.format_table(report).splitlines()
    engine_row = next(line for line in lines if "(b) engine, pH 7.4" in line)
    speedup_row = next(line for line in lines if "speed-up" in line)
    assert "ok (<= 5)" in engine_row  # exactly on the target counts as met
    assert "1.75 MISSED (>= 1.8)" in speedup_row
    assert "chunk_size 2,000;" in lines[0]  # the size's own, not a run-wide setting
    assert "annotate_chunk 2x 45.0s/300MB" in rb.format_table(report)


def test_quick_mode_overrides_sizes_and_makes_the_workdir_absolute() -> None:
    args = rb.parse_args(["--quick", "--workdir", "relative/out", "--sizes", "5"])
    assert (args.sizes, args.engine_sample, args.chunk_size) == (
        rb.QUICK["sizes"],
        rb.QUICK["engine_sample"],
        rb.QUICK["chunk_size"],
    )
    assert args.workdir.is_absolute() and args.json == args.workdir / "benchmark_quick.json"


@pytest.mark.slow
def test_library_is_generated_once_and_reused(tmp_path: Path) -> None:
    prefix = rb.ensure_library(tmp_path, size=25, seed=3, workers=1)
    smi = prefix.with_name(prefix.name + ".smi")
    assert len(smi.read_text().splitlines()) == 26  # header + 25 records
    assert all(prefix.with_name(f"{prefix.name}.{ext}").exists() for ext in ("sdf", "parquet"))
    before = smi.stat().st_mtime_ns
    assert rb.ensure_library(tmp_path, size=25, seed=3, workers=1) == prefix
    assert smi.stat().st_mtime_ns == before


def test_table_reports_a_failed_workflow_run_by_its_first_line() -> None:
    result = _result()
    del result.workflow[2]
    result.errors.append("--cores 2: workflow failed; see run/snakemake.log:\nlast lines of the log")
    table = rb.format_table({"settings": {"chunk_size": 500, "workflow_input": "sdf"}, "sizes": [result.as_json()]})
    assert "FAILED workflow --cores 2: workflow failed; see run/snakemake.log" in table
    assert "last lines of the log" not in table and "speed-up" not in table
