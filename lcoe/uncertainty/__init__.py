"""Uncertainty primitives, with no knowledge of case files: distributions, sampling with
rank correlation, sensitivity (Sobol, Morris, tornado) and its analytic test functions,
summary statistics, value-of-information estimators.

May import: :mod:`lcoe.case` (errors and the seed helper) only.
"""
