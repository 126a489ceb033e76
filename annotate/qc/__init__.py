"""Quality control of an annotated library.

- :mod:`~annotate.qc.tables`: the QC tables, as counts summed over one streaming pass
- :mod:`~annotate.qc.report`: TSV tables, ``summary.json``, ``settings_and_versions.json``
- :mod:`~annotate.qc.plots`: PNG plots (matplotlib, headless)
"""
