"""Logging set-up for a workflow job, whose stderr the script has sent to its log."""

from __future__ import annotations

import logging
import sys


def log_progress() -> None:
    """Send the package's progress messages (INFO and up) to stderr, timestamped."""
    logging.basicConfig(
        level=logging.INFO,
        stream=sys.stderr,
        format="%(asctime)s %(levelname)s %(name)s: %(message)s",
        force=True,
    )
