"""benchcheck: review an optical bench plan (a TOML layout) before it is built.

The data flow is one way: load -> place -> trace -> unfold -> solve -> (rules) -> report.

The names below are imported on first use (PEP 562), so that ``import benchcheck.cli``
does not import numpy: the command line sets numpy's thread count before numpy starts.
"""

import sys
import types

__version__ = "0.1.0"

# hookimpl, Rule, Option and Finding are what a rule plugin imports (docs/plugins.md)
_HOME = {"beam_table": "api", "load": "api", "solve": "api", "solve_file": "api", "solve_text": "api",
         "Finding": "findings", "Option": "findings", "Rule": "findings", "hookimpl": "hookspecs",
         "LayoutError": "model"}
__all__ = ["__version__", *_HOME]


class _Package(types.ModuleType):
    """The import system binds a submodule to its package's attribute of the same name;
    ``benchcheck.solve`` is the API function (as documented), not the module ``solve.py``."""

    def __setattr__(self, name, value):
        if name in _HOME and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package


def __getattr__(name: str):
    import importlib

    module = _HOME.get(name)
    if module is None:   # a submodule, as ``import benchcheck; benchcheck.model`` once found it
        try:
            return importlib.import_module(f".{name}", __name__)
        except ModuleNotFoundError as exc:
            if exc.name != f"{__name__}.{name}":
                raise
        raise AttributeError(f"module 'benchcheck' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
