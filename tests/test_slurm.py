"""The workflow on a real one-node SLURM cluster, through Snakemake's SLURM executor plugin.

Opt-in: runs only with IONOTATE_SLURM_TEST=1 as root (.ci/run does that after
installing the `slurm` extra). `.ci/slurm-local.sh` installs and starts munged,
MariaDB, slurmdbd, slurmctld and slurmd on localhost; the module fixture stops
every one of them again, by PID. One small library (120 records, chunks of 40, so
3 chunks) is annotated locally and through the cluster, with the repository's
slurm profile as it is: account and partition come from the two environment
variables the profile reads.

The target is the annotated Parquet: split -> chunks -> gather, three DAG layers.
Every layer costs a SLURM round trip of 15-40 s here, so QC and export (three more
layers of the same kind of jobs) are left to the local workflow tests. The gather
job still shows the whole-library sizing of the profile at work: its requests
depend on the size of chunk files that do not exist when the run starts.

Each cluster run cancels one chunk job with `scancel` while it runs:
- with the profile's restart-times the run resubmits the job and completes;
- with --restart-times 0 the run fails, and the same command, run again, completes
  by redoing only the cancelled chunk and what depends on it.
Every cluster run's outputs must equal the local run's.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from collections import Counter
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import datetime, timedelta
from pathlib import Path

import polars as pl
import pyarrow.parquet as pq
import pytest
import yaml
from polars.testing import assert_frame_equal

from annotate.pipeline.manifest import read_manifest

pytestmark = [
    pytest.mark.slurm,
    pytest.mark.slow,
    pytest.mark.skipif(
        os.environ.get("IONOTATE_SLURM_TEST") != "1",
        reason="real-SLURM test: set IONOTATE_SLURM_TEST=1 (as root) to install and start a local cluster",
    ),
    pytest.mark.skipif(os.geteuid() != 0, reason="starting SLURM daemons needs root"),
]

ROOT = Path(__file__).resolve().parents[1]
CLUSTER_SCRIPT = ROOT / ".ci" / "slurm-local.sh"
ACCOUNT, PARTITION = "testacct", "debug"  # created by .ci/slurm-local.sh
LIBRARY, RECORDS, CHUNK_SIZE = "tiny", 120, 40
# Upper bound of one Snakemake run; SIGINT first (Snakemake ignores SIGTERM while it
# waits for jobs), KILL 30 s later.
RUN_TIMEOUT_S = 300
# The plugin's first status check waits 40 s by default; 2 s keeps the test short.
SLURM_ARGS = (
    "--workflow-profile",
    "workflow/profiles/slurm",
    "--slurm-init-seconds-before-status-checks",
    "2",
)
TIMINGS: dict[str, float] = {}


@dataclass(frozen=True, slots=True)
class SlurmJob:
    """One row of sacct; the plugin's comment names the rule and its wildcards."""

    job_id: str
    state: str
    account: str
    partition: str
    comment: str


def run_logged(args: list[str], *, what: str, **kwargs: object) -> subprocess.CompletedProcess[str]:
    """Run a command, remember how long it took, fail with its output if it fails."""
    started = time.monotonic()
    done = subprocess.run(args, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True, **kwargs)
    TIMINGS[what] = time.monotonic() - started
    assert done.returncode == 0, f"{what} failed:\n{done.stdout[-6000:]}"
    return done


@pytest.fixture(scope="module", autouse=True)
def cluster() -> Iterator[None]:
    """A running one-node cluster for this module; its daemons are stopped afterwards, by PID."""
    run_logged([str(CLUSTER_SCRIPT), "install"], what="install SLURM packages")
    try:
        run_logged([str(CLUSTER_SCRIPT), "start"], what="start SLURM daemons")
        yield
    finally:
        run_logged([str(CLUSTER_SCRIPT), "stop"], what="stop SLURM daemons")
        print("\nSLURM test timings:", *(f"  {k}: {v:.1f} s" for k, v in TIMINGS.items()), sep="\n")


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A clone-like working directory (the real workflow and profiles) with a small library."""
    work = tmp_path_factory.mktemp("slurm")
    for part in ("Snakefile", "workflow", "config"):
        (work / part).symlink_to(ROOT / part)
    run_logged(
        [
            sys.executable,
            str(ROOT / "benchmarks" / "make_library.py"),
            *("--n", str(RECORDS), "--seed", "3", "--demo", "--format", "sdf"),
            *("--out", str(work / "inputs" / LIBRARY)),
        ],
        what="make library",
    )
    config = {"libraries": {LIBRARY: f"inputs/{LIBRARY}.sdf"}, "chunk_size": CHUNK_SIZE}
    (work / "test.yaml").write_text(yaml.safe_dump(config, sort_keys=False))
    return work


def snakemake_args(outdir: str, *extra: str) -> list[str]:
    """One Snakemake command line for the test's target, wrapped in `timeout`."""
    return [
        *("timeout", "-s", "INT", "-k", "30", str(RUN_TIMEOUT_S)),
        *(sys.executable, "-m", "snakemake", "--configfile", "test.yaml", "--config", f"outdir={outdir}"),
        *extra,
        f"{outdir}/{LIBRARY}/annotated.parquet",
    ]


def cluster_env() -> dict[str, str]:
    return {**os.environ, "IONOTATE_SLURM_ACCOUNT": ACCOUNT, "IONOTATE_SLURM_PARTITION": PARTITION}


def slurm_run_id(output: str) -> str:
    """The plugin's run id, which it uses as the SLURM job name of every job of the run."""
    lines = [line for line in output.splitlines() if "SLURM run ID:" in line]
    assert len(lines) == 1, output[-4000:]
    return lines[0].split("SLURM run ID:")[1].strip()


def sacct_jobs(run_id: str) -> list[SlurmJob]:
    since = f"{datetime.now() - timedelta(hours=2):%Y-%m-%dT%H:%M}"
    fields = "JobIDRaw,State,Account,Partition,Comment"
    out = subprocess.run(
        ["sacct", "-X", "-n", "-P", "--starttime", since, "--name", run_id, "-o", fields],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    return [SlurmJob(*line.split("|", 4)) for line in out.splitlines() if line]


def comment(rule: str, *wildcards: str) -> str:
    """The comment the plugin gives a job of ``rule`` (its wildcard values joined by _)."""
    return f"rule_{rule}_wildcards_{'_'.join(wildcards)}"


def chunk_comments(workdir: Path, outdir: str) -> list[str]:
    chunks = read_manifest(workdir / outdir / LIBRARY / "chunks" / "input").chunk_names
    assert len(chunks) == -(-RECORDS // CHUNK_SIZE) >= 3
    return [comment("annotate_chunk", LIBRARY, chunk) for chunk in chunks]


def run_and_cancel_a_chunk(
    workdir: Path, args: list[str], *, what: str
) -> tuple[subprocess.CompletedProcess[str], str]:
    """Start a cluster run, scancel the first annotate_chunk job seen RUNNING, let the run end."""
    started = time.monotonic()
    log = workdir / f"snakemake-{len(TIMINGS)}.log"  # a file, not a pipe nobody reads while polling
    with log.open("w") as sink:
        process = subprocess.Popen(
            args, cwd=workdir, env=cluster_env(), stdout=sink, stderr=subprocess.STDOUT
        )
        cancelled = None
        while cancelled is None and process.poll() is None:
            queue = subprocess.run(["squeue", "-h", "-o", "%i|%T|%k"], capture_output=True, text=True).stdout
            for job_id, state, note in (line.split("|", 2) for line in queue.splitlines()):
                if state == "RUNNING" and note.startswith("rule_annotate_chunk_"):
                    subprocess.run(["scancel", job_id], check=True)
                    cancelled = job_id
                    break
            time.sleep(0.2)
        process.wait()  # `timeout` in args bounds this
    TIMINGS[what] = time.monotonic() - started
    output = log.read_text()
    assert cancelled is not None, f"no annotate_chunk job was seen running:\n{output[-4000:]}"
    return subprocess.CompletedProcess(args, process.returncode, output), cancelled


def assert_same_outputs(workdir: Path, outdir: str, reference: str) -> None:
    """Annotated Parquet equal in content, schema and run metadata."""
    ours, theirs = (workdir / d / LIBRARY for d in (outdir, reference))
    frame = pl.read_parquet(ours / "annotated.parquet")
    assert frame.height == RECORDS and set(frame["status"]) >= {"ok", "error"}
    assert_frame_equal(frame, pl.read_parquet(theirs / "annotated.parquet"), check_exact=True)
    assert pq.read_schema(ours / "annotated.parquet").equals(
        pq.read_schema(theirs / "annotated.parquet"), check_metadata=True
    )


def assert_account_and_partition(jobs: list[SlurmJob]) -> None:
    """The profile's placeholders reached sbatch for every job."""
    assert jobs and {(j.account, j.partition) for j in jobs} == {(ACCOUNT, PARTITION)}, jobs


@pytest.fixture(scope="module")
def local_run(workdir: Path) -> str:
    run_logged(snakemake_args("out_local", "--cores", "2"), what="local run (--cores 2)", cwd=workdir)
    return "out_local"


def test_cancelled_chunk_is_resubmitted_within_the_run(workdir: Path, local_run: str) -> None:
    """The profile as users run it: every chunk its own job, a cancelled one retried."""
    run, cancelled = run_and_cancel_a_chunk(
        workdir, snakemake_args("out_slurm", *SLURM_ARGS), what="cluster run, one chunk cancelled and retried"
    )
    assert run.returncode == 0, run.stdout[-6000:]
    assert "localrule annotate_chunk" not in run.stdout
    jobs = sacct_jobs(slurm_run_id(run.stdout))
    assert_account_and_partition(jobs)
    lost = next(job for job in jobs if job.job_id == cancelled)
    assert lost.state.startswith("CANCELLED"), jobs

    chunks = chunk_comments(workdir, "out_slurm")
    assert lost.comment in chunks
    completed = Counter(job.comment for job in jobs if job.state == "COMPLETED")
    expected = {
        comment("split_library", LIBRARY): 1,
        **dict.fromkeys(chunks, 1),
        comment("gather_annotations", LIBRARY): 1,
    }
    assert completed == expected, jobs
    assert_same_outputs(workdir, "out_slurm", local_run)


def test_rerunning_the_same_command_recovers_a_cancelled_chunk(workdir: Path, local_run: str) -> None:
    """Without retries the cancel fails the run; the same command again redoes only what is missing."""
    command = snakemake_args("out_rerun", *SLURM_ARGS, "--restart-times", "0")
    first, cancelled = run_and_cancel_a_chunk(
        workdir, command, what="cluster run, one chunk cancelled, no retry"
    )
    assert first.returncode != 0, first.stdout[-6000:]
    assert not (workdir / "out_rerun" / LIBRARY / "annotated.parquet").exists()
    first_jobs = sacct_jobs(slurm_run_id(first.stdout))
    lost = next(job for job in first_jobs if job.job_id == cancelled)
    assert lost.state.startswith("CANCELLED"), first_jobs

    again = run_logged(command, what="same command again", cwd=workdir, env=cluster_env())
    rerun_jobs = sacct_jobs(slurm_run_id(again.stdout))
    assert_account_and_partition(rerun_jobs)
    redone = Counter(job.comment for job in rerun_jobs if job.state == "COMPLETED")
    # the split and the chunks that had finished are not redone
    assert redone == {lost.comment: 1, comment("gather_annotations", LIBRARY): 1}, rerun_jobs
    assert len(rerun_jobs) == 2, rerun_jobs
    assert_same_outputs(workdir, "out_rerun", local_run)
