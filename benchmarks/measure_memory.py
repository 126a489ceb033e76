"""Peak memory of each whole-library job at two (or more) library sizes, without annotating the big library.

Why: issue 4 asks that no job hold a whole library in memory, i.e. that each job's peak RSS
stays flat from 100k to 1M molecules. Annotating 1M molecules takes hours, but the jobs after
the chunks only read chunk files. So the annotated and docking chunks of one real (small)
workflow run are replicated, with shifted ``input_index`` and suffixed ids, into a fake library
output of any size; the split jobs read SMILES, SDF and Parquet inputs made by repeating the
benchmark library. Each job then runs alone in a fresh Python process, calling the same package
function as its workflow script.
    python benchmarks/measure_memory.py --sizes 100000 1000000 --json benchmarks/out/memory.json
    python benchmarks/measure_memory.py --seed-dir results/bench   # chunks of a run you already have

What the figures mean. Peak RSS is the kernel's high-water mark of the job's process (VmHWM):
interpreter, imports and data, exact. The ``imports`` line is the floor every job pays before
reading a record. Snakemake's own ``max_rss`` samples every few seconds, so it can miss a short
peak and reads lower. CPU seconds are the job's user + system time. A job is flat when its
peak hardly moves between the sizes (a few MB of allocator warm-up are normal).
"""

# No `from __future__ import annotations`: tests load this file by path (see tests/helpers.py).
import argparse
import json
import os
import shutil
import subprocess
import sys
import time
from collections.abc import Iterator, Sequence
from pathlib import Path
from types import ModuleType

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq
import yaml

from annotate.pipeline.manifest import ChunkEntry, Manifest, chunk_name, read_manifest

ROOT = Path(__file__).resolve().parents[1]
LIBRARY_NAME = "bench"  # as run_benchmark.py names it
SEED_SIZE = 20_000  # molecules really annotated; everything bigger is made of copies of them
SPLIT_BASE = 100_000  # benchmark library repeated to make the split inputs
CHUNK_SIZE = 10_000  # as run_benchmark.py's default
KIB_PER_MB = 1024.0
TEXT_FORMATS = ("smi", "sdf", "parquet")
JOBS = (
    "imports",
    "split_library_smi",
    "split_library_sdf",
    "split_library_parquet",
    "gather_annotations",
    "filter_library",
    "summarize_qc",
    "plot_qc",
    "export_docking_structures",
)


# ---------------------------------------------------------------- the fake library output


def seed_run(workdir: Path, *, seed_dir: Path | None, seed_size: int, chunk_size: int, workers: int) -> Path:
    """``{outdir}/{library}`` of a finished real workflow run: the chunks every fake library is copied from."""
    if seed_dir is not None:
        return seed_dir
    run_dir = workdir / "memory" / f"seed_{seed_size}_{chunk_size}"
    library_dir = run_dir / "results" / LIBRARY_NAME
    stamp = run_dir / "seed.done"
    if stamp.exists():
        return library_dir
    bench = _run_benchmark()
    prefix = bench.ensure_library(workdir, size=seed_size, seed=0, workers=workers)
    config = bench.workflow_config(
        library=prefix.with_name(prefix.name + ".parquet").resolve(),
        outdir=run_dir / "results",
        chunk_size=chunk_size,
        extra={},
    )
    print(f"seed: real workflow on {seed_size} molecules ...", file=sys.stderr, flush=True)
    bench.run_workflow(run_dir, molecules=seed_size, cores=2, config=config)
    stamp.write_text("done\n")
    return library_dir


def _run_benchmark() -> ModuleType:
    """Its library cache and workflow runner; imported only when needed, as it loads the engine."""
    sys.path.insert(0, str(ROOT / "benchmarks"))
    import run_benchmark

    return run_benchmark


def _read_stage(library_dir: Path, stage: str) -> pa.Table:
    names = read_manifest(library_dir / "chunks" / "input").chunk_names
    return pa.concat_tables(
        [pq.read_table(library_dir / "chunks" / stage / f"{n}.parquet") for n in names], promote_options="default"
    )


def copied_rows(seed: pa.Table, *, first: int, stop: int, seed_records: int) -> pa.Table:
    """Rows for fake positions ``first..stop-1``: seed record ``i % seed_records``, moved to position ``i``.

    ``seed`` is sorted by ``input_index`` and may hold several rows per record (docking species)
    or none. Copies after the first get ``~copy`` appended to their id, so ids stay unique.
    """
    parts = []
    position = first
    while position < stop:
        copy, start = divmod(position, seed_records)
        count = min(stop - position, seed_records - start)
        index = seed.column("input_index")
        lo, hi = (pc.sum(pc.less(index, v)).as_py() or 0 for v in (start, start + count))
        part = seed.slice(lo, hi - lo)
        shift = position - start
        part = part.set_column(
            part.schema.get_field_index("input_index"),
            "input_index",
            pc.add(part.column("input_index"), pa.scalar(shift, pa.int64())),
        )
        if copy:
            ids = pc.binary_join_element_wise(part.column("id"), pa.scalar(f"~{copy}"), "")
            part = part.set_column(part.schema.get_field_index("id"), "id", ids)
        parts.append(part)
        position += count
    return pa.concat_tables(parts) if parts else seed.slice(0, 0)


def fake_library(seed_dir: Path, out: Path, *, size: int, chunk_size: int) -> Path:
    """Write ``out/chunks/{input,annotated,docking}`` for ``size`` records; reused when already complete."""
    stamp = out / "fake.done"
    key = json.dumps({"seed": str(seed_dir), "size": size, "chunk_size": chunk_size})
    if stamp.exists() and stamp.read_text() == key:
        return out
    shutil.rmtree(out, ignore_errors=True)
    seed_manifest = read_manifest(seed_dir / "chunks" / "input")
    stages = {stage: _read_stage(seed_dir, stage) for stage in ("annotated", "docking")}
    entries = []
    for number, first in enumerate(range(0, size, chunk_size)):
        entry = ChunkEntry(chunk_name(number), first, min(chunk_size, size - first))
        for stage, seed in stages.items():
            rows = copied_rows(seed, first=first, stop=first + entry.records, seed_records=seed_manifest.records)
            target = out / "chunks" / stage / f"{entry.name}.parquet"
            target.parent.mkdir(parents=True, exist_ok=True)
            pq.write_table(rows, target, compression="zstd")
        entries.append(entry)
    manifest = Manifest(
        library=seed_manifest.library,
        source=seed_manifest.source,
        record_kind=seed_manifest.record_kind,
        chunk_size=chunk_size,
        chunks=tuple(entries),
    )
    (out / "chunks" / "input").mkdir(parents=True, exist_ok=True)
    manifest.write(out / "chunks" / "input")
    stamp.write_text(key)
    return out


def split_inputs(workdir: Path, *, size: int, base: int, workers: int) -> dict[str, Path]:
    """SMILES, SDF and Parquet libraries of ``size`` records: the benchmark library, repeated if larger."""
    ensure_library = _run_benchmark().ensure_library
    if size <= base:
        prefix = ensure_library(workdir, size=size, seed=0, workers=workers)
        return {fmt: prefix.with_name(f"{prefix.name}.{fmt}") for fmt in TEXT_FORMATS}
    if size % base:
        raise ValueError(f"size {size} must be at most {base} or a multiple of it (--split-base)")
    prefix = ensure_library(workdir, size=base, seed=0, workers=workers)
    source = {fmt: prefix.with_name(f"{prefix.name}.{fmt}") for fmt in TEXT_FORMATS}
    out = workdir / "memory" / "inputs" / f"repeated_{size}"
    paths = {fmt: out.with_name(f"{out.name}.{fmt}") for fmt in TEXT_FORMATS}
    stamp = out.with_name(out.name + ".done")
    key = json.dumps({str(p): p.stat().st_mtime for p in source.values()})
    if stamp.exists() and stamp.read_text() == key:
        return paths
    out.parent.mkdir(parents=True, exist_ok=True)
    copies = size // base
    _repeat_text(source["smi"], paths["smi"], copies=copies, header=True)
    _repeat_text(source["sdf"], paths["sdf"], copies=copies, header=False)
    _repeat_parquet(source["parquet"], paths["parquet"], copies=copies)
    stamp.write_text(key)
    return paths


def _repeat_text(source: Path, target: Path, *, copies: int, header: bool) -> None:
    with source.open("rb") as handle:
        head = handle.readline() if header else b""
        body_start = handle.tell() if header else 0
    with target.open("wb") as out:
        out.write(head)
        for _ in range(copies):
            with source.open("rb") as handle:
                handle.seek(body_start)
                shutil.copyfileobj(handle, out, 1 << 20)


def _repeat_parquet(source: Path, target: Path, *, copies: int) -> None:
    """The same row groups, ``copies`` times, so the reader sees the sizes the generator writes."""
    reader = pq.ParquetFile(source)
    with pq.ParquetWriter(target, reader.schema_arrow, compression="zstd") as writer:
        for _ in range(copies):
            for group in range(reader.num_row_groups):
                writer.write_table(reader.read_row_group(group))


# ---------------------------------------------------------------- one job per process


def job_arguments(job: str, *, library: Path, inputs: dict[str, Path], out: Path, chunk_size: int) -> dict:
    """What the child needs, as plain JSON: the same inputs and outputs the workflow rule names."""
    names = read_manifest(library / "chunks" / "input").chunk_names
    annotated = out / "annotated.parquet"
    fmt = job.removeprefix("split_library_") if job.startswith("split_library_") else None
    return {
        "chunk_dir": str(library / "chunks" / "input"),
        "annotated_chunks": [str(library / "chunks" / "annotated" / f"{n}.parquet") for n in names],
        "docking_chunks": [str(library / "chunks" / "docking" / f"{n}.parquet") for n in names],
        "annotated": str(annotated),
        "library": str(inputs[fmt]) if fmt else None,
        "split_out": str(out / "split" / (fmt or "")),
        "chunk_size": chunk_size,
        "out": str(out),
        "filters": yaml.safe_load((ROOT / "config" / "config.yaml").read_text())["filters"],
    }


def _run_job(job: str, a: dict) -> None:
    """The child's work: the call the job's workflow script makes (imports inside, so they count)."""
    out = Path(a["out"])
    if job == "imports":
        import matplotlib  # noqa: F401
        import polars  # noqa: F401

        import annotate.pipeline  # noqa: F401
    elif job.startswith("split_library_"):
        from annotate.io.library import LibrarySpec
        from annotate.pipeline import split_library

        spec = LibrarySpec(name=LIBRARY_NAME, path=Path(a["library"]))
        split_library(spec, a["split_out"], chunk_size=a["chunk_size"])
    elif job == "gather_annotations":
        from annotate.pipeline import gather_annotations

        gather_annotations(a["chunk_dir"], a["annotated_chunks"], a["annotated"])
    elif job == "filter_library":
        from annotate.pipeline.filtering import filter_library, filter_specs

        specs = filter_specs(a["filters"])
        filter_library(
            a["annotated"],
            a["docking_chunks"],
            specs=specs,
            outdir=out / "filters",
            qc_table=out / "qc" / "filters.tsv",
        )
    elif job == "summarize_qc":
        from annotate.qc.report import OUTPUTS, TABLES, write_qc

        outputs = {n: out / "qc" / f"{n}.{'tsv' if n in TABLES else 'json'}" for n in OUTPUTS}
        write_qc(a["annotated"], outputs=outputs, filters=out / "qc" / "filters.tsv")
    elif job == "plot_qc":
        from annotate.qc.plots import plot_qc

        plot_qc(a["annotated"], charge_plot=out / "qc" / "charge_by_ph.png", pka_plot=out / "qc" / "pka_by_group.png")
    elif job == "export_docking_structures":
        from annotate.pipeline.docking import export_docking_structures

        targets = [out / "docking" / "ph7.4.sdf", out / "docking" / "ph7.4.smi"]
        export_docking_structures(a["docking_chunks"], targets, phs=[7.4, 7.4])
    else:
        raise ValueError(f"unknown job {job!r}; known: {', '.join(JOBS)}")


def measure_job(job: str, arguments: dict, *, scratch: Path) -> dict[str, float]:
    """Peak RSS (MB), CPU and wall seconds of one job run alone in a fresh interpreter.

    The peak is the child's own ``VmHWM``: ``ru_maxrss`` would also count the parent's
    memory, which Linux carries over into the child at fork and exec.
    """
    spec, report = scratch / f"{job}.args.json", scratch / f"{job}.peak.json"
    spec.write_text(json.dumps(arguments))
    report.unlink(missing_ok=True)
    command = [sys.executable, str(Path(__file__).resolve()), "--child", job, str(spec), str(report)]
    started = time.perf_counter()
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    stderr = process.stderr.read()  # read before waiting, so a chatty child cannot block on a full pipe
    _, status, usage = os.wait4(process.pid, 0)
    wall = time.perf_counter() - started
    if os.waitstatus_to_exitcode(status) != 0:
        raise RuntimeError(f"job {job} failed:\n{stderr.decode(errors='replace')[-3000:]}")
    return {
        "peak_rss_mb": json.loads(report.read_text())["peak_rss_mb"],
        "cpu_s": round(usage.ru_utime + usage.ru_stime, 2),
        "wall_s": round(wall, 2),
    }


def peak_rss_mb() -> float:
    """This process's high-water resident set size since its exec, from /proc."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return round(int(line.split()[1]) / KIB_PER_MB, 1)
    raise RuntimeError("no VmHWM in /proc/self/status (Linux only)")


def child(job: str, spec: Path, report: Path) -> None:
    _run_job(job, json.loads(spec.read_text()))
    report.write_text(json.dumps({"peak_rss_mb": peak_rss_mb()}))


# ---------------------------------------------------------------- report


def format_table(results: dict[str, dict[str, dict[str, float]]], jobs: Sequence[str]) -> str:
    """Peak RSS per job and size, the growth from the smallest to the largest size, and CPU seconds."""
    sizes = sorted(results, key=int)
    head = ["job", *(f"RSS MB {int(s):,}" for s in sizes), "growth MB", *(f"CPU s {int(s):,}" for s in sizes)]
    lines = ["\t".join(head)]
    for job in jobs:
        rss = [results[s].get(job, {}).get("peak_rss_mb") for s in sizes]
        cpu = [results[s].get(job, {}).get("cpu_s") for s in sizes]
        growth = rss[-1] - rss[0] if None not in (rss[0], rss[-1]) and len(sizes) > 1 else None
        cells = [job, *(_cell(v) for v in rss), _cell(growth), *(_cell(v) for v in cpu)]
        lines.append("\t".join(cells))
    largest = max((j["peak_rss_mb"] for s in sizes for j in results[s].values()), default=None)
    lines.append(f"largest peak RSS of any job: {_cell(largest)} MB (target < 1000, flat between sizes)")
    return "\n".join(lines)


def _cell(value: float | None) -> str:
    return "-" if value is None else f"{value:.1f}"


def iter_measurements(args: argparse.Namespace) -> Iterator[tuple[int, str, dict[str, float]]]:
    seed = seed_run(
        args.workdir,
        seed_dir=args.seed_dir,
        seed_size=args.seed_size,
        chunk_size=args.chunk_size,
        workers=args.gen_workers,
    )
    for size in args.sizes:
        print(f"[{size}] preparing inputs ...", file=sys.stderr, flush=True)
        library = fake_library(seed, args.workdir / "memory" / f"fake_{size}", size=size, chunk_size=args.chunk_size)
        needs_inputs = any(j.startswith("split_library_") for j in args.jobs)
        inputs = (
            split_inputs(args.workdir, size=size, base=args.split_base, workers=args.gen_workers)
            if needs_inputs
            else {}
        )
        out = args.workdir / "memory" / "runs" / args.label / str(size)
        shutil.rmtree(out, ignore_errors=True)
        out.mkdir(parents=True)
        for job in args.jobs:
            print(f"[{size}] {job} ...", file=sys.stderr, flush=True)
            arguments = job_arguments(job, library=library, inputs=inputs, out=out, chunk_size=args.chunk_size)
            yield size, job, measure_job(job, arguments, scratch=out)
        shutil.rmtree(out / "split", ignore_errors=True)  # chunk copies of the input; the figures are kept
        if not args.keep_outputs:  # the SD and SMILES files of 1M molecules take about 9 GB
            for path in [*out.rglob("*.sdf"), *out.rglob("*.smi")]:
                path.unlink()


def parse_args(argv: Sequence[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--sizes", type=int, nargs="+", default=[100_000, 1_000_000], help="library sizes")
    parser.add_argument(
        "--workdir",
        type=Path,
        default=ROOT / "benchmarks" / "out",
        help="where libraries are cached (shared with run_benchmark.py); runs go to WORKDIR/memory/",
    )
    parser.add_argument("--seed-dir", type=Path, help="{outdir}/{library} of a finished run to copy chunks from")
    parser.add_argument("--seed-size", type=int, default=SEED_SIZE, help="molecules of the real run made otherwise")
    parser.add_argument("--chunk-size", type=int, default=CHUNK_SIZE, help="records per chunk, as the workflow's")
    parser.add_argument("--split-base", type=int, default=SPLIT_BASE, help="library size repeated for split inputs")
    parser.add_argument("--jobs", nargs="+", default=list(JOBS), choices=JOBS, help="default: all, in this order")
    parser.add_argument("--label", default="current", help="names the output directory, to compare two versions")
    parser.add_argument("--gen-workers", type=int, default=2, help="processes generating a missing library")
    parser.add_argument("--json", type=Path, help="default: WORKDIR/memory/{label}.json")
    parser.add_argument("--keep-outputs", action="store_true", help="keep the jobs' SD and SMILES files too")
    return parser.parse_args(argv)


def main(argv: Sequence[str] | None = None) -> int:
    if argv is None and len(sys.argv) == 5 and sys.argv[1] == "--child":
        child(sys.argv[2], Path(sys.argv[3]), Path(sys.argv[4]))
        return 0
    args = parse_args(argv)
    target = args.json or args.workdir / "memory" / f"{args.label}.json"
    results: dict[str, dict[str, dict[str, float]]] = {}
    for size, job, figures in iter_measurements(args):
        results.setdefault(str(size), {})[job] = figures
        print(f"[{size}] {job}: {figures}", file=sys.stderr, flush=True)
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(json.dumps({"chunk_size": args.chunk_size, "results": results}, indent=2) + "\n")
    print(format_table(results, args.jobs))
    return 0


if __name__ == "__main__":
    sys.exit(main())
