"""Uncertainty engine primitives: distributions, sampling with rank correlation, sensitivity.

Modules
-------
distributions
    :class:`~lcoe.uncertainty.distributions.Distribution` and the case-file parser.
sampling
    Latin hypercube and plain Monte Carlo uniforms, Iman-Conover rank correlation,
    correlation-matrix checks, and :func:`~lcoe.uncertainty.sampling.sample_inputs`.
sensitivity
    Sobol indices, Morris screening and tornado swings over SALib, with the model kept
    outside as a plain ``f(X) -> Y``; analytic test functions.
"""
