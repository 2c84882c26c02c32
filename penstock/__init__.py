"""penstock: planning-level penstock hydraulics, energy and diameter studies for hydropower sites.

Notebook use::

    import penstock
    case = penstock.load_case("cases/high-head-demo")
    results = penstock.run_case(case)
    results.grade_lines.head()

Results are planning-level only; see the README's cautions.
"""

__version__ = "0.1.0"

from .case import Case, CaseError, load_case  # noqa: E402
from .model import Results, run_case  # noqa: E402

__all__ = ["Case", "CaseError", "Results", "__version__", "load_case", "run_case"]
