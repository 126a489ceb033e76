"""Speed and memory of Ionotate at library scale: the RDKit floor, the engine and the whole workflow.

Why one script: the targets of issue 4 are ratios between these figures, and a ratio only means
something when both sides run on the same molecules, in the same run, on the same (shared) machine.
    python benchmarks/run_benchmark.py --sizes 100000 1000000 --workdir benchmarks/out \\
        --json benchmarks/out/benchmark.json
    python benchmarks/run_benchmark.py --quick --workdir benchmarks/out      # smoke run, a minute or a few
What each figure means: benchmarks/README.md.
"""

# No `from __future__ import annotations`: tests load this file by path (see tests/helpers.py).
import argparse
import csv
import hashlib
import json
import os
import platform
import resource
import shutil
import subprocess
import sys
import time
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import TextIO

import rdkit
import yaml
from rdkit import Chem, rdBase

import annotate
from annotate import Settings, annotate_many, annotate_smiles
from annotate.pipeline.config import suggested_chunk_size

ROOT = Path(__file__).resolve().parents[1]
MAKE_LIBRARY = ROOT / "benchmarks" / "make_library.py"
BLOCKS = ROOT / "benchmarks" / "building_blocks.tsv"
SNAKEFILE = ROOT / "Snakefile"
LIBRARY_NAME = "bench"
ONE_PH = (7.4,)
THREE_PH = (2.0, 7.4, 10.0)
QUICK = {"sizes": [2000], "engine_sample": 1000, "chunk_size": 500}
BLOCK = 500  # records per turn when the floor and the engine passes take turns
WARM_UP = 20  # records annotated before timing, so loading and compiling the rules is not counted
TARGETS = {  # issue 4, by figure; "x" figures are ratios of time per molecule, larger = slower
    "engine_x_floor": ("<=", 5.0),
    "three_ph_x_one_ph": ("<=", 1.3),
    "workflow_1c_x_engine": ("<=", 1.5),
    "workflow_2c_x_engine": ("<=", 1.5),
    "speedup_2_cores": (">=", 1.8),
    "peak_rss_mb": ("<=", 1000.0),
}


@dataclass(frozen=True, slots=True)
class Timing:
    """Molecules per CPU-second is the headline rate: other developers' load inflates wall time, not CPU time."""

    molecules: int
    wall_s: float
    cpu_s: float
    cores: int = 1

    @property
    def per_core_cpu(self) -> float:
        return self.molecules / self.cpu_s

    @property
    def per_core_wall(self) -> float:
        return self.molecules / (self.wall_s * self.cores)

    def as_json(self) -> dict[str, float]:
        return asdict(self) | {"per_core_cpu": self.per_core_cpu, "per_core_wall": self.per_core_wall}


@dataclass(frozen=True, slots=True)
class WorkflowRun:
    timing: Timing
    peak_rss_mb: dict[str, float | None]  # rule -> largest max_rss of any of its jobs
    job_seconds: dict[str, dict[str, float]]  # rule -> summed wall and CPU seconds of its jobs
    load_before_after: tuple[float, float]  # 1-minute load average; > cores means the machine was shared
    until: str | None = None  # a rule name when only part of the workflow ran

    def as_json(self) -> dict[str, object]:
        return asdict(self) | {"timing": self.timing.as_json(), "cpu_per_wall": self.timing.cpu_s / self.timing.wall_s}


@dataclass(slots=True)
class SizeResult:
    size: int
    sample: int
    chunk_size: int
    floor: Timing
    engine: dict[str, Timing]  # "1ph" / "3ph"
    engine_statuses: dict[str, dict[str, int]]
    workflow: dict[int, WorkflowRun] = field(default_factory=dict)  # cores -> run
    errors: list[str] = field(default_factory=list)  # failed workflow runs; the other figures still count

    def ratios(self) -> dict[str, float]:
        """The issue's figures; every one is a ratio of time per molecule (CPU basis) except the speed-up."""
        one, three = self.engine["1ph"], self.engine["3ph"]
        out = {
            "engine_x_floor": self.floor.per_core_cpu / one.per_core_cpu,
            "engine_3ph_x_floor": self.floor.per_core_cpu / three.per_core_cpu,
            "three_ph_x_one_ph": one.per_core_cpu / three.per_core_cpu,
        }
        full = {cores: run for cores, run in self.workflow.items() if run.until is None}
        for cores, run in full.items():
            out[f"workflow_{cores}c_x_floor"] = self.floor.per_core_cpu / run.timing.per_core_cpu
            out[f"workflow_{cores}c_x_engine"] = one.per_core_cpu / run.timing.per_core_cpu
        if 1 in full and 2 in full:
            out["speedup_2_cores"] = full[1].timing.wall_s / full[2].timing.wall_s
        return out

    def as_json(self) -> dict[str, object]:
        engine = {k: t.as_json() for k, t in self.engine.items()}
        workflow = {str(cores): run.as_json() for cores, run in self.workflow.items()}
        timings = {"floor": self.floor.as_json(), "engine": engine, "workflow": workflow}
        return asdict(self) | timings | {"ratios": self.ratios()}


def timed(work: Callable[[], int], *, cores: int = 1, children: bool = False) -> Timing:
    """CPU time of this process, or of waited-for child processes (a workflow and all its jobs)."""
    if not children:  # the process clock counts nanoseconds; rusage may count scheduler ticks
        cpu, wall = time.process_time(), time.perf_counter()
        molecules = work()
        return Timing(molecules, time.perf_counter() - wall, time.process_time() - cpu, cores)
    usage, wall = resource.getrusage(resource.RUSAGE_CHILDREN), time.perf_counter()
    molecules = work()
    wall, after = time.perf_counter() - wall, resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - usage.ru_utime) + (after.ru_stime - usage.ru_stime)
    return Timing(molecules, wall, cpu, cores)


def timed_in_turns(passes: dict[str, Callable[[Sequence[tuple[str, str]]], int]],
                   records: Sequence[tuple[str, str]], *, block: int = BLOCK) -> dict[str, Timing]:
    """Each pass over the same records, taking turns block by block, CPU time summed per pass.

    On a shared machine the speed drifts by 10-20 % over a minute; passes run one after
    the other would see different machines, passes taking turns see the same one.
    """
    totals = {name: Timing(0, 0.0, 0.0, 1) for name in passes}
    for start in range(0, len(records), block):
        part = records[start:start + block]
        for name, work in passes.items():
            spent = timed(lambda: work(part))  # noqa: B023 (called at once)
            total = totals[name]
            totals[name] = Timing(total.molecules + spent.molecules, total.wall_s + spent.wall_s,
                                  total.cpu_s + spent.cpu_s, 1)
    return totals


def ensure_library(workdir: Path, *, size: int, seed: int, workers: int) -> Path:
    """Prefix of a cached SMILES+SDF+Parquet library; a stamp written last marks it complete and current."""
    prefix = workdir / "libraries" / f"{LIBRARY_NAME}_{size}_seed{seed}"
    stamp = prefix.with_name(prefix.name + ".done")
    version = hashlib.sha256(MAKE_LIBRARY.read_bytes() + BLOCKS.read_bytes()).hexdigest()
    if stamp.exists() and stamp.read_text() == version:
        return prefix
    prefix.parent.mkdir(parents=True, exist_ok=True)
    stamp.unlink(missing_ok=True)
    options = f"--n {size} --seed {seed} --id-prefix BENCH --format smi,sdf,parquet --workers {workers}".split()
    subprocess.run([sys.executable, str(MAKE_LIBRARY), *options, "--out", str(prefix)], check=True)
    stamp.write_text(version)
    return prefix


def read_sample(smi_path: Path, *, size: int, sample: int) -> list[tuple[str, str]]:
    """Every k-th record, so the sample spans the whole file: the generator's mix drifts as easy products run out."""
    stride = max(1, size // sample)
    records: list[tuple[str, str]] = []
    with smi_path.open() as lines:
        next(lines)  # header
        for i, line in enumerate(lines):
            if i % stride == 0:
                smiles, rid = line.rstrip("\n").split("\t")[:2]
                records.append((smiles, rid))
                if len(records) == sample:
                    break
    return records


def floor_pass(records: Sequence[tuple[str, str]], out: TextIO) -> int:
    """The least any tool must do per record: parse it and write canonical SMILES."""
    with rdBase.BlockLogs():
        for smiles, rid in records:
            mol = Chem.MolFromSmiles(smiles)
            out.write(f"{Chem.MolToSmiles(mol) if mol is not None else ''}\t{rid}\n")
    return len(records)


def engine_pass(records: Sequence[tuple[str, str]], *, ph: tuple[float, ...], statuses: Counter[str]) -> int:
    """The engine as the workflow's chunk jobs run it: a batch at a time (annotate_many)."""
    for result in annotate_many([smiles for smiles, _ in records], settings=Settings(ph=ph)):
        statuses[result.status] += 1
    return len(records)


def read_job_benchmarks(library_dir: Path) -> tuple[dict[str, float | None], dict[str, dict[str, float]]]:
    """Largest max_rss (MB) and summed wall/CPU seconds per rule, from Snakemake's per-job benchmark TSVs."""
    peaks: dict[str, float | None] = {}
    seconds: dict[str, dict[str, float]] = {}
    for tsv in sorted([*library_dir.glob("*.tsv"), *library_dir.glob("*/*.tsv")]):
        rule = tsv.stem if tsv.parent == library_dir else tsv.parent.name
        with tsv.open() as handle:
            for row in csv.DictReader(handle, delimiter="\t"):
                total = seconds.setdefault(rule, {"wall": 0.0, "cpu": 0.0, "jobs": 0})
                total["wall"] += float(row["s"])
                total["cpu"] += _number(row.get("cpu_time")) or 0.0
                total["jobs"] += 1
                rss = _number(row.get("max_rss"))
                peaks[rule] = max((v for v in (peaks.get(rule), rss) if v is not None), default=None)
    return peaks, seconds


def _number(text: str | None) -> float | None:
    """Snakemake writes NA or - when a job ended before its memory was sampled."""
    try:
        return float(text) if text is not None else None
    except ValueError:
        return None


def workflow_config(*, library: Path, outdir: Path, chunk_size: int, extra: dict[str, object]) -> dict[str, object]:
    """The workflow's own defaults for everything else (docking export, filters...), as a user would run it."""
    own = {"libraries": {LIBRARY_NAME: str(library)}, "outdir": str(outdir), "chunk_size": chunk_size}
    return {"ph": list(ONE_PH)} | extra | own


def run_workflow(
    run_dir: Path, *, molecules: int, cores: int, config: dict[str, object], until: str | None = None
) -> WorkflowRun:
    """A fresh Snakemake run in its own directory, so nothing is reused and the shared tree is not locked."""
    shutil.rmtree(run_dir, ignore_errors=True)
    run_dir.mkdir(parents=True)
    config_file = run_dir / "config.json"  # JSON is read as YAML by Snakemake
    config_file.write_text(json.dumps(config, indent=2))
    snakemake = shutil.which("snakemake", path=str(Path(sys.executable).parent)) or "snakemake"
    paths = ["--snakefile", str(SNAKEFILE), "--directory", str(run_dir), "--configfile", str(config_file)]
    command = [snakemake, *paths, "--cores", str(cores), *(["--until", until] if until else [])]
    log = run_dir / "snakemake.log"

    def work() -> int:
        with log.open("w") as out:
            if subprocess.run(command, stdout=out, stderr=subprocess.STDOUT).returncode != 0:
                raise RuntimeError(f"workflow failed; see {log}:\n" + "".join(log.read_text().splitlines(True)[-20:]))
        return molecules

    load_before = os.getloadavg()[0]
    timing = timed(work, cores=cores, children=True)
    peaks, seconds = read_job_benchmarks(Path(config["outdir"]) / "benchmarks" / LIBRARY_NAME)
    return WorkflowRun(timing, peaks, seconds, (load_before, os.getloadavg()[0]), until)


def measure_size(size: int, *, args: argparse.Namespace) -> SizeResult:
    prefix = ensure_library(args.workdir, size=size, seed=args.seed, workers=args.gen_workers)
    records = read_sample(prefix.with_name(prefix.name + ".smi"), size=size, sample=args.engine_sample)
    print(f"[{size}] floor and engine on a sample of {len(records)} ...", file=sys.stderr, flush=True)
    for smiles, rid in records[:WARM_UP]:
        annotate_smiles(smiles, id=rid, settings=Settings(ph=THREE_PH))
    statuses: dict[str, Counter[str]] = {"1ph": Counter(), "3ph": Counter()}
    with (args.workdir / f"floor_{size}.smi").open("w") as floor_out:
        timings = timed_in_turns(
            {
                "floor": lambda part: floor_pass(part, floor_out),
                "1ph": lambda part: engine_pass(part, ph=ONE_PH, statuses=statuses["1ph"]),
                "3ph": lambda part: engine_pass(part, ph=THREE_PH, statuses=statuses["3ph"]),
            },
            records,
        )
    floor = timings.pop("floor")
    engine = timings
    chunk_size = args.chunk_size or suggested_chunk_size(size, cores=max(args.cores))
    result = SizeResult(size, len(records), chunk_size, floor, engine, {k: dict(v) for k, v in statuses.items()})
    if args.skip_workflow:
        return result
    library = prefix.with_name(f"{prefix.name}.{args.workflow_input}").resolve()
    only_split = args.full_workflow_max is not None and size > args.full_workflow_max
    for cores in [1] if only_split else args.cores:
        print(f"[{size}] workflow --cores {cores}{' (split only)' * only_split} ...", file=sys.stderr, flush=True)
        run_dir = args.workdir / "runs" / f"{size}_cores{cores}"
        config = workflow_config(
            library=library, outdir=run_dir / "results", chunk_size=chunk_size, extra=args.config_extra
        )
        until = "split_library" if only_split else None
        try:
            result.workflow[cores] = run_workflow(run_dir, molecules=size, cores=cores, config=config, until=until)
        except RuntimeError as exc:
            result.errors.append(f"--cores {cores}: {exc}")
    return result


def _verdict(value: float | None, key: str) -> str:
    if value is None:
        return ""
    sign, limit = TARGETS[key]
    met = value >= limit if sign == ">=" else value <= limit
    return f"{'ok' if met else 'MISSED'} ({sign} {limit:g})"


def format_table(report: dict[str, object]) -> str:
    """Plain-text table from the JSON report, so what is printed is exactly what was saved."""
    lines = []
    for entry in report["sizes"]:
        ratios, floor = entry["ratios"], entry["floor"]["per_core_cpu"]
        lines += [
            f"library {entry['size']:,} molecules; floor/engine sample {entry['sample']:,}; "
            f"chunk_size {entry['chunk_size']:,}; workflow input {report['settings']['workflow_input']}",
            f"  {'figure':<36}{'mol/s/core cpu':>15}{'mol/s/core wall':>16}{'x floor':>9}  target",
        ]

        def row(label: str, timing: dict[str, float], note: str = "") -> None:
            cpu = timing["per_core_cpu"]
            lines.append(f"  {label:<36}{cpu:>15,.0f}{timing['per_core_wall']:>16,.0f}{floor / cpu:>9.2f}  {note}")

        def target(name: str, key: str) -> str:
            return f"{name} {ratios[key]:.2f} " + _verdict(ratios[key], key)

        row("(a) floor: parse + canonical SMILES", entry["floor"])
        row("(b) engine, pH 7.4", entry["engine"]["1ph"], target("engine/floor", "engine_x_floor"))
        row("(b) engine, pH 2.0 7.4 10.0", entry["engine"]["3ph"], target("3-pH/1-pH", "three_ph_x_one_ph"))
        for cores, run in entry["workflow"].items():
            if run["until"]:
                lines.append(f"  workflow until {run['until']}: {run['timing']['wall_s']:.1f} s wall")
            else:
                key = f"workflow_{cores}c_x_engine"
                row(
                    f"(c) workflow --cores {cores}",
                    run["timing"],
                    target("workflow/engine", key) if key in TARGETS else "",
                )
        if "speedup_2_cores" in ratios:
            lines.append("  " + target("2-core speed-up (wall)", "speedup_2_cores"))
        for cores, run in entry["workflow"].items():
            jobs = ", ".join(
                f"{rule} {run['job_seconds'][rule]['jobs']}x {run['job_seconds'][rule]['cpu']:,.1f}s/"
                + (f"{mb:,.0f}MB" if mb is not None else "n/a")
                for rule, mb in run["peak_rss_mb"].items()
            )
            worst = max((v for v in run["peak_rss_mb"].values() if v is not None), default=None)
            load = "->".join(f"{x:.1f}" for x in run["load_before_after"])
            lines.append(f"  --cores {cores} jobs (count, summed CPU s / peak RSS; load {load}): {jobs}")
            lines.append(f"    largest peak RSS of any job {worst or 0:,.0f} MB " + _verdict(worst, "peak_rss_mb"))
        lines += [f"  FAILED workflow {error.splitlines()[0]}" for error in entry["errors"]] + [""]
    return "\n".join(lines)


def _yaml_mapping(path: str) -> dict[str, object]:
    data = yaml.safe_load(Path(path).read_text()) or {}
    if not isinstance(data, dict):
        raise argparse.ArgumentTypeError(f"{path}: expected a mapping of config keys")
    return data


def parse_args(argv: Sequence[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--sizes", type=int, nargs="+", default=[100_000], help="library sizes, each its own library")
    parser.add_argument("--workdir", type=Path, default=ROOT / "benchmarks" / "out")
    parser.add_argument("--engine-sample", type=int, default=20_000, help="records timed for (a) and (b)")
    parser.add_argument(
        "--chunk-size", type=int, default=None, help="default: as README 'Sizing chunks' advises for the size and cores"
    )
    parser.add_argument("--cores", type=int, nargs="+", default=[1, 2], help="workflow runs, one per value")
    parser.add_argument("--workflow-input", choices=("parquet", "sdf"), default="parquet")
    parser.add_argument("--config-extra", type=_yaml_mapping, default={}, help="YAML/JSON of workflow config keys")
    parser.add_argument("--skip-workflow", action="store_true")
    parser.add_argument("--full-workflow-max", type=int, help="larger libraries run only the split job, on one core")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--gen-workers", type=int, default=os.cpu_count() or 1, help="processes for make_library")
    parser.add_argument("--json", type=Path, default=None, help="default: WORKDIR/benchmark.json")
    parser.add_argument("--quick", action="store_true", help=f"smoke run: {QUICK}")
    args = parser.parse_args(argv)
    if args.quick:
        for key, value in QUICK.items():
            setattr(args, key, value)
    args.workdir = args.workdir.resolve()  # Snakemake runs in its own directory; relative paths would move
    args.json = args.json or args.workdir / ("benchmark_quick.json" if args.quick else "benchmark.json")
    return args


def main(argv: Sequence[str] | None = None) -> int:
    args = parse_args(argv)
    args.workdir.mkdir(parents=True, exist_ok=True)
    versions = {"python": platform.python_version(), "rdkit": rdkit.__version__, "ionotate": annotate.__version__}
    machine = {"cpus": os.cpu_count(), "started": time.strftime("%Y-%m-%dT%H:%M:%S%z")} | versions
    settings = vars(args) | {"one_ph": ONE_PH, "three_ph": THREE_PH}
    report: dict[str, object] = {"machine": machine, "settings": settings, "targets": TARGETS, "sizes": []}
    for size in args.sizes:
        report["sizes"].append(measure_size(size, args=args).as_json())
        args.json.parent.mkdir(parents=True, exist_ok=True)
        # Written after every size, so a long run that is stopped keeps what it measured.
        args.json.write_text(json.dumps(report, indent=2, default=str))
    print(format_table(report))
    print(f"JSON: {args.json}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
