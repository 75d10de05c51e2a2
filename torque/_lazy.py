"""Names of a package resolved on first use (PEP 562), for ``torque`` and ``torque.io``."""

from __future__ import annotations

import importlib


def lazy_exports(package: str, namespace: dict, exports: dict):
    """``__getattr__`` and ``__dir__`` for a package whose names load on first use.

    Parameters
    ----------
    package : str
        The package's ``__name__``.
    namespace : dict
        Its ``globals()``: a name, once loaded, is kept there.
    exports : dict
        ``{name: submodule}`` (relative to the package).

    Returns
    -------
    getattr, dir : callable
        To assign to the package's ``__getattr__`` and ``__dir__``.
    """
    def __getattr__(name):
        if name in exports:
            value = getattr(importlib.import_module(f".{exports[name]}", package), name)
            namespace[name] = value
            return value
        try:
            return importlib.import_module(f".{name}", package)    # a submodule
        except ModuleNotFoundError:
            raise AttributeError(f"module {package!r} has no attribute {name!r}") from None

    def __dir__():
        return sorted(set(namespace) | set(exports))

    return __getattr__, __dir__
