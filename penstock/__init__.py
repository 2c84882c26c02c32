"""penstock: planning-level penstock hydraulics, energy and diameter studies for hydropower sites.

Notebook use::

    import penstock
    case = penstock.load_case("cases/high-head-demo")
    results = penstock.run_case(case)
    results.grade_lines.head()

Results are planning-level only; see the README's cautions.
"""

__version__ = "0.1.0"

from .errors import CaseError  # noqa: E402

__all__ = ["Case", "CaseError", "Results", "__version__", "load_case", "run_case"]

#: Where each public name lives; imported on first use, so that ``import penstock`` (and the
#: command line's ``--help`` and ``new``) stays quick.
_LAZY = {"Case": ".case", "load_case": ".case", "Results": ".model", "run_case": ".model"}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(_LAZY[name], __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
