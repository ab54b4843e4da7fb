"""lcoe: the cost of solar electricity under uncertainty.

The package is laid out along the data flow::

    case -> weather -> energy -> cashflow -> metrics -> uncertainty/sensitivity -> exporters

Core computations are pure functions over numpy arrays with a leading samples axis; the CLI and
the orchestration (:mod:`lcoe.runner`) are thin and compute nothing themselves.
"""

__version__ = "0.1.0"
