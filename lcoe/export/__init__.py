"""Exporters: files from result objects (JSON, CSV, the workbook, pictures, report pages),
and the one way files are written (:mod:`~lcoe.export.staging`: a staging folder
published in one rename). They read results and compute nothing of their own.

May import: every layer below the command line (for result types, constants and
labels). Only :mod:`lcoe.cli` imports the exporters.
"""
