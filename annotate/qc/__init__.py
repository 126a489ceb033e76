"""Quality control of an annotated library.

- :mod:`~annotate.qc.tables`: one lazy Polars query per QC table
- :mod:`~annotate.qc.report`: TSV tables, ``summary.json``, ``settings_and_versions.json``
- :mod:`~annotate.qc.plots`: PNG plots (matplotlib, headless)
"""
