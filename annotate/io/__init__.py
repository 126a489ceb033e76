"""Reading libraries and writing annotations.

- :mod:`~annotate.io.library`: which file, which format, which columns
- :mod:`~annotate.io.sdf`, :mod:`~annotate.io.smi`, :mod:`~annotate.io.tables`: streaming readers
- :mod:`~annotate.io.chunks`: records -> fixed-size chunk tables
- :mod:`~annotate.io.schema`: the output contract (declared once) and result -> Arrow
- :mod:`~annotate.io.atomic`: write-then-rename, so no partial file is ever left
"""
