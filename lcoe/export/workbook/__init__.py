"""``workbook.xlsx``: the auditable workbook of a run, one module per group of sheets; the
constants and cell helpers they share are in :mod:`~lcoe.export.workbook.layout`.

May import: as :mod:`lcoe.export`.
"""
