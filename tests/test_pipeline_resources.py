"""Scheduler requests of a chunk job follow the chunk size, the pH count and the docking work."""

from __future__ import annotations

from annotate.pipeline.resources import chunk_resources


def test_memory_is_one_gigabyte_plus_a_hundredth_of_a_megabyte_per_record() -> None:
    # 230 MB at 10,000 and 265 MB at 50,000 records were measured (README "Sizing chunks")
    assert chunk_resources(10_000, n_ph=1, build_docking=False, embed_3d=False).mem_mb == 1100
    assert chunk_resources(50_000, n_ph=3, build_docking=True, embed_3d=True).mem_mb == 1500


def test_wall_time_grows_with_docking_work_per_ph_and_with_each_retry() -> None:
    plain = chunk_resources(10_000, n_ph=2, build_docking=False, embed_3d=False)
    assert plain.runtime_min == 10 + 300 // 60  # 0.03 s per record
    docked = chunk_resources(10_000, n_ph=2, build_docking=True, embed_3d=False)
    assert docked.runtime_min == 10 + int(10_000 * (0.03 + 2 * 0.05) / 60)
    embedded = chunk_resources(10_000, n_ph=2, build_docking=True, embed_3d=True)
    assert embedded.runtime_min > docked.runtime_min > plain.runtime_min
    assert [embedded.runtime(attempt) for attempt in (1, 2, 3)] == [embedded.runtime_min * k for k in (1, 2, 3)]


def test_the_docking_cost_does_not_count_when_no_docking_records_are_built() -> None:
    one = chunk_resources(5_000, n_ph=1, build_docking=False, embed_3d=True)
    many = chunk_resources(5_000, n_ph=6, build_docking=False, embed_3d=True)
    assert one == many
