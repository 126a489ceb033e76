"""What one annotate_chunk job asks a scheduler for: memory and wall time from the chunk size.

The formulas live here rather than inline in the workflow so that they are
tested and documented in one place; ``workflow/rules/common.smk`` only calls
:func:`chunk_resources`.
"""

from __future__ import annotations

from dataclasses import dataclass

#: the annotation, per record: about 30 times the ~1 ms measured (README "Sizing chunks")
ANNOTATE_SECONDS = 0.03
#: docking records, per record and pH: 2D-derived, or with a 3D embedding
DOCKING_SECONDS = 0.05
DOCKING_3D_SECONDS = 0.5
#: a job holds one row group of 8,192 records at a time: about 230 MB at 10,000
#: records and 265 MB at 50,000 were measured, so 1 GB plus 0.01 MB per record is ample
BASE_MEM_MB = 1000
RECORDS_PER_MB = 100
#: minutes of wall time on top of the per-record estimate (start-up, a busy node)
BASE_RUNTIME_MIN = 10


@dataclass(frozen=True, slots=True)
class ChunkResources:
    """Requests of one annotate_chunk job."""

    mem_mb: int
    #: wall time of the first attempt; :meth:`runtime` scales it per retry
    runtime_min: int

    def runtime(self, attempt: int) -> int:
        """Minutes for ``attempt`` (1, 2, ...): a chunk of unusually slow molecules that is
        killed at its wall time gets more the next time."""
        return self.runtime_min * attempt


def chunk_resources(chunk_size: int, *, n_ph: int, build_docking: bool, embed_3d: bool) -> ChunkResources:
    """Memory and wall time of a job annotating ``chunk_size`` records at ``n_ph`` pH values."""
    docking = (DOCKING_3D_SECONDS if embed_3d else DOCKING_SECONDS) * n_ph if build_docking else 0.0
    seconds = chunk_size * (ANNOTATE_SECONDS + docking)
    return ChunkResources(
        mem_mb=BASE_MEM_MB + chunk_size // RECORDS_PER_MB,
        runtime_min=BASE_RUNTIME_MIN + int(seconds / 60),
    )
