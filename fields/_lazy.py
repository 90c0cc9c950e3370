"""Names of a package imported on first use (PEP 562), written once for every package
that exports heavy modules lazily (the command line must start in a fraction of a second)."""
import importlib

__all__ = ["lazy_exports"]


def lazy_exports(namespace: dict, where: dict):
    """Module ``__getattr__`` and ``__dir__`` for a package.

    Parameters
    ----------
    namespace : dict
        The package's ``globals()`` (a loaded name is cached there).
    where : dict str -> str
        Public name -> module relative to the package (``"driver"`` or ``".driver"``).

    Returns
    -------
    (callable, callable)
        Assign them to the package's ``__getattr__`` and ``__dir__``.
    """
    package = namespace["__name__"]

    def __getattr__(name):
        module = where.get(name)
        if module is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(module if module.startswith(".") else "." + module, package), name)
        namespace[name] = value
        return value

    def __dir__():
        return sorted(set(namespace) | set(namespace.get("__all__", ())))

    return __getattr__, __dir__
