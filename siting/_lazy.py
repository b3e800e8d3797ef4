"""Names a package hands on, imported on first use (PEP 562).

A package's ``__init__`` lists its public names once, each with the module that defines it;
``import siting`` then costs nothing of the numerical stack until a name is used, and a
command imports only what it needs (start-up time).
"""

from __future__ import annotations

import importlib
from collections.abc import Callable


def lazy_exports(package: str, exports: dict[str, str]) -> tuple[list[str], Callable, Callable]:
    """``__all__``, ``__getattr__`` and ``__dir__`` for a package.

    Parameters
    ----------
    package : str
        The package's own name (``__name__`` of its ``__init__``).
    exports : dict of str to str
        Each public name and the module that defines it.

    Returns
    -------
    tuple
        ``(__all__, __getattr__, __dir__)``, to be bound in the package's namespace.
    """
    namespace = importlib.import_module(package).__dict__

    def __getattr__(name: str):
        try:
            module = exports[name]
        except KeyError:
            raise AttributeError(f"module {package!r} has no attribute {name!r}") from None
        value = getattr(importlib.import_module(module), name)
        namespace[name] = value  # looked up once
        return value

    def __dir__() -> list[str]:
        return sorted(set(namespace) | set(exports))

    return sorted(exports), __getattr__, __dir__
