"""Unusual solar technologies tested against physics.

Modules
-------
body
    Three-dimensional bodies covered with cells as sets of planar facets: beam capture area,
    plane-of-array irradiance per facet (pvlib), rotation, shading between bodies in a field.
concentrator
    Concentrating photovoltaics: acceptance angle, receiver energy balance, DC power and its
    upper bound, hazards.
reliability
    Moving parts by renewal theory (exponential and Weibull lives) and their yearly costs.
audit
    Physics audit of a case's results and of stated claims.
"""

from lcoe.tech import audit, body, concentrator, reliability

__all__ = ["audit", "body", "concentrator", "reliability"]
