"""lcoe: the cost of solar electricity under uncertainty.

The package is laid out along the data flow, one package per layer (lowest first)::

    case -> site -> plant, money -> model -> study -> export -> cli
                                 uncertainty -^

- :mod:`lcoe.case`: the case file (schema, reading, checks, templates, labels, errors);
- :mod:`lcoe.site`: weather, synthetic weather, sun position, plane-of-array irradiance;
- :mod:`lcoe.plant`: the hourly power chain and every technology;
- :mod:`lcoe.money`: time value, cash flow, reliability costs, tax, debt, project finance;
- :mod:`lcoe.model`: the one vectorised model (site + plant + money for any number of samples);
- :mod:`lcoe.uncertainty`: distributions, sampling, sensitivity, value-of-information estimators;
- :mod:`lcoe.study`: run, compare, sweep, the lender's case and the claim audit;
- :mod:`lcoe.export`: files from result objects;
- :mod:`lcoe.cli`: the command line.

The public API below is importable from ``lcoe`` itself and loaded on first use, so that
``import lcoe`` (and the command line's start-up) imports nothing of the scientific stack.
"""

__version__ = "0.1.0"

#: Public names -> the module that defines them.
_API = {
    "load_case": "lcoe.case.reader",
    "prepare": "lcoe.model",
    "evaluate": "lcoe.model",
    "load_weather_for": "lcoe.model",
    "read_spec": "lcoe.study.spec",
    "monte_carlo": "lcoe.study.single",
    "energy_exceedance": "lcoe.study.single",
    "run_case": "lcoe.study.run",
    "run_comparison": "lcoe.study.compare",
    "load_plan": "lcoe.study.plan",
    "run_sweep": "lcoe.study.sweep",
    "write_outputs": "lcoe.export.run_outputs",
}

__all__ = ["__version__", *_API]


def __getattr__(name):
    if name in _API:
        from importlib import import_module

        value = getattr(import_module(_API[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'lcoe' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_API))
