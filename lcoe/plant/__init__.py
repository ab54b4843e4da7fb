"""The plant: the hourly power chain (:mod:`~lcoe.plant.energy`: cell temperature, DC,
inverter, clipping, losses), soiling, and the technologies beyond flat mounts: bodies
covered with cells (:mod:`~lcoe.plant.body_shapes`, :mod:`~lcoe.plant.body_light`) and
concentrators (:mod:`~lcoe.plant.concentrator`); the exact factored sums of the chain
(:mod:`~lcoe.plant.factored`).

May import: :mod:`lcoe.site`, :mod:`lcoe.case`. Never :mod:`lcoe.money`.
"""
