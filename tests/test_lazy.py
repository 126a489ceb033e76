"""Lazy package exports: every name resolves, and a chunk job's imports leave Polars out."""

from __future__ import annotations

import subprocess
import sys

import pytest

import annotate.export
import annotate.pipeline


@pytest.mark.parametrize("package", [annotate.pipeline, annotate.export])
def test_every_exported_name_resolves_and_is_listed(package: object) -> None:
    for name in package.__all__:
        assert getattr(package, name) is not None
    assert set(package.__all__) <= set(dir(package))


def test_an_unknown_name_is_an_attribute_error() -> None:
    with pytest.raises(AttributeError, match="no attribute 'nothing_here'"):
        annotate.pipeline.nothing_here  # noqa: B018


def test_a_chunk_job_does_not_import_polars() -> None:
    """Polars costs about 0.2 s per job start (measured); chunk jobs run by the hundred."""
    imports = (
        "from annotate.pipeline import annotate_chunk, log_progress, settings_from_config; "
        "from annotate.pipeline.docking import DockingOptions; import sys; "
        "print(sorted(m for m in sys.modules if m.split('.')[0] == 'polars'))"
    )
    done = subprocess.run([sys.executable, "-c", imports], capture_output=True, text=True, check=True)
    assert done.stdout.strip() == "[]"
