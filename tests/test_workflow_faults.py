"""Faults: killed jobs and a killed Snakemake lose nothing and leave nothing that looks finished.

End to end (one test, real processes): a run on one core is started; once a chunk
is annotated, the running ``annotate_chunk`` job is killed with SIGKILL. The same
command is started again and, while it annotates, Snakemake itself and its job
are killed with SIGKILL (a lost login node). Snakemake then needs ``--unlock``
once, for the lock it could not remove; after that the same command completes,
and its annotated Parquet has the same content as an uninterrupted run.

Outputs are written to a temporary name and renamed when complete
(:mod:`annotate.io.atomic`). Snakemake deletes the outputs of a job that failed,
but not when it is killed itself, so the check that every file under a final
name is complete matters after the second kill. The fast test at the end kills a
writer in the middle of a Parquet file to show the mechanism directly.
"""

from __future__ import annotations

import os
import re
import signal
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from annotate.io.atomic import atomic_path
from annotate.pipeline import read_manifest
from tests.test_workflow_bad_input import snakemake, snakemake_command
from tests.test_workflow_repeatability import (
    LIBRARY,
    REFERENCE_CHUNK_SIZE,
    annotated,
    assert_same_content,
    fresh_workdir,
    reference_run,
)

ROOT = Path(__file__).resolve().parents[1]
PROFILE = ROOT / "workflow" / "profiles" / "default"
CHUNK_LOG = re.compile(rf"/out/logs/{LIBRARY}/annotate_chunk/(\d+)\.log$")
WAIT_S = 180


def command() -> list[str]:
    """What a user runs: the default profile; one core and the annotated file, as in the reference run."""
    target = f"out/{LIBRARY}/annotated.parquet"
    return snakemake_command("--workflow-profile", str(PROFILE), "--cores", "1", target)


def start(root: Path) -> subprocess.Popen[str]:
    """Start the run in a session of its own, so that its jobs can be told from anybody else's."""
    with open(root / "runs.log", "a") as log:  # the child keeps its own handle
        return subprocess.Popen(
            command(), cwd=root, stdout=log, stderr=subprocess.STDOUT, start_new_session=True
        )


def session_pids(session: int) -> Iterator[int]:
    """Processes of one session, from /proc (the session id is field 6 of /proc/<pid>/stat)."""
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        if int(fields[3]) == session:
            yield int(entry.name)


def running_chunk_job(session: int) -> tuple[int, str] | None:
    """A running annotate_chunk job of the session and its chunk, known by the log it holds open."""
    for pid in session_pids(session):
        try:
            targets = [os.readlink(fd) for fd in Path(f"/proc/{pid}/fd").iterdir()]
        except OSError:
            continue
        for target in targets:
            if match := CHUNK_LOG.search(target):
                return pid, match.group(1)
    return None


def kill_during_a_chunk_job(run: subprocess.Popen[str], root: Path, *, whole_run: bool) -> str:
    """SIGKILL a running chunk job (or the whole run) once another chunk is annotated; returns its chunk."""
    done_dir = root / "out" / LIBRARY / "chunks" / "annotated"
    deadline = time.monotonic() + WAIT_S
    while time.monotonic() < deadline:
        assert run.poll() is None, "the run ended before a chunk job could be killed"
        found = running_chunk_job(run.pid)
        others_done = found is not None and any(p.stem != found[1] for p in done_dir.glob("*.parquet"))
        if not others_done:
            time.sleep(0.05)
            continue
        pid, chunk = found
        try:
            os.killpg(run.pid, signal.SIGKILL) if whole_run else os.kill(pid, signal.SIGKILL)
        except ProcessLookupError:  # the job ended meanwhile; wait for the next one
            continue
        run.wait(timeout=WAIT_S)
        return chunk
    pytest.fail("no chunk job was seen running")


def finished_chunks(root: Path) -> dict[str, int]:
    """Annotated chunk files under their final names, each checked complete; name -> mtime."""
    manifest = read_manifest(root / "out" / LIBRARY / "chunks" / "input")
    entries = {c.name: c for c in manifest.chunks}
    found = {}
    for path in sorted((root / "out" / LIBRARY / "chunks" / "annotated").glob("*.parquet")):
        entry = entries[path.stem]
        index = pq.read_table(path).column("input_index").to_pylist()  # a partial file would not read
        assert index == list(range(entry.first_index, entry.first_index + entry.records)), path
        found[path.stem] = path.stat().st_mtime_ns
    return found


@pytest.mark.slow
def test_killed_jobs_and_a_killed_run_finish_with_the_same_content(
    tmp_path: Path, tmp_path_factory: pytest.TempPathFactory
) -> None:
    reference = reference_run(tmp_path_factory)
    root = fresh_workdir(tmp_path, chunk_size=REFERENCE_CHUNK_SIZE)

    first = start(root)
    killed = kill_during_a_chunk_job(first, root, whole_run=False)
    assert first.returncode not in (0, None)
    chunks = read_manifest(root / "out" / LIBRARY / "chunks" / "input").chunk_names
    kept = finished_chunks(root)
    assert killed not in kept and 0 < len(kept) < len(chunks)

    second = start(root)
    kill_during_a_chunk_job(second, root, whole_run=True)
    assert second.returncode == -signal.SIGKILL
    after = finished_chunks(root)
    assert {name: after[name] for name in kept} == kept  # finished work is kept, not redone
    assert not annotated(root).exists()

    snakemake(root, "--unlock")
    third = start(root)
    assert third.wait(timeout=WAIT_S) == 0, (root / "runs.log").read_text()[-6000:]
    assert list(finished_chunks(root)) == chunks
    assert {name: finished_chunks(root)[name] for name in kept} == kept
    assert_same_content(root, reference)
    assert not [p for p in (root / "out").rglob("*") if ".partial-" in p.name or ".replaced-" in p.name]


def test_a_writer_killed_midway_leaves_no_file_under_the_final_name(tmp_path: Path) -> None:
    final = tmp_path / "000003.parquet"
    writer = f"""
import os, signal
import pyarrow as pa, pyarrow.parquet as pq
from annotate.io.atomic import atomic_path
with atomic_path({str(final)!r}) as tmp, pq.ParquetWriter(tmp, pa.schema([("x", pa.int64())])) as out:
    out.write_table(pa.table({{"x": list(range(10_000))}}))
    os.kill(os.getpid(), signal.SIGKILL)
"""
    run = subprocess.run([sys.executable, "-c", writer], cwd=ROOT, check=False)
    assert run.returncode == -signal.SIGKILL
    assert not final.exists()
    (partial,) = tmp_path.glob(".000003.parquet.partial-*")
    with pytest.raises(pa.ArrowInvalid):  # what a rerun would have taken for done, were it renamed
        pq.read_table(partial)
    with atomic_path(final) as tmp:
        pq.write_table(pa.table({"x": [1]}), tmp)
    assert [p.name for p in tmp_path.iterdir()] == [final.name]  # the next writer cleared the leftover
