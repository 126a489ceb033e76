"""Cost of the report pictures (gallery + charge profile) against annotation, measured in one run.

Annotation: CPU time of ``annotate_smiles`` on a sample of the demo library, scaled to
``--size`` molecules (the engine is linear in molecules). Pictures: CPU time of
``write_gallery`` and ``plot_charge_profile`` on an annotated Parquet of ``--size`` rows,
made by repeating the demo run's annotated rows (both stream it in batches).
Prints the figures and their ratio; the target is <= 5 % (issue 17).

    python benchmarks/draw_cost.py --annotated results/demo_sdf/annotated.parquet
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from annotate.draw.library import plot_charge_profile, write_gallery
from annotate.engine import annotate_smiles


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--annotated", type=Path, required=True, help="an annotated.parquet of a finished run")
    parser.add_argument("--size", type=int, default=100_000)
    parser.add_argument("--sample", type=int, default=1000, help="molecules annotated to time the engine")
    args = parser.parse_args()
    table = pq.read_table(args.annotated)
    smiles = [s for s in table.column("parent_smiles").to_pylist() if s][: args.sample]
    start = time.process_time()
    for i, s in enumerate(smiles):
        annotate_smiles(s, id=str(i))
    per_molecule = (time.process_time() - start) / len(smiles)
    annotation = per_molecule * args.size
    with tempfile.TemporaryDirectory() as tmp:
        big = Path(tmp) / "annotated.parquet"
        with pq.ParquetWriter(big, table.schema) as writer:
            written = 0
            while written < args.size:
                part = table.slice(0, min(table.num_rows, args.size - written))
                writer.write_table(part)
                written += part.num_rows
        start = time.process_time()
        plot_charge_profile(big, Path(tmp) / "profile.png", marked_ph=(7.4,))
        profile = time.process_time() - start
        start = time.process_time()
        write_gallery(big, Path(tmp) / "gallery")
        gallery = time.process_time() - start
    print(f"annotation of {args.size} molecules (from {len(smiles)} timed): {annotation:8.1f} CPU-s")
    print(f"charge profile on {args.size} rows:                 {profile:8.1f} CPU-s")
    print(f"gallery (24 cards):                              {gallery:8.1f} CPU-s")
    ratio = (profile + gallery) / annotation
    print(f"pictures / annotation: {100 * ratio:.2f} %  ({'ok' if ratio <= 0.05 else 'MISSED'}, target <= 5 %)")


if __name__ == "__main__":
    main()
