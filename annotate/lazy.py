"""Package attributes loaded on first use (PEP 562), for packages whose parts differ in import cost."""

from __future__ import annotations

import importlib
from collections.abc import Callable, Mapping, Sequence


def lazy_exports(
    package: str, modules: Mapping[str, Sequence[str]]
) -> tuple[list[str], Callable[[str], object], Callable[[], list[str]]]:
    """``__all__``, ``__getattr__`` and ``__dir__`` for ``package``, exporting ``modules``' names.

    ``modules`` maps a submodule (relative to ``package``) to the names it provides.
    """
    where = {name: f"{package}.{module}" for module, names in modules.items() for name in names}

    def __getattr__(name: str) -> object:
        module = where.get(name)
        if module is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        return getattr(importlib.import_module(module), name)

    def __dir__() -> list[str]:
        return sorted(where)

    return sorted(where), __getattr__, __dir__
