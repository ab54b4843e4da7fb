"""Case files: the one table of keys (:mod:`~lcoe.case.schema`), reading and checking a
case (:mod:`~lcoe.case.reader`, :mod:`~lcoe.case.rules`, :mod:`~lcoe.case.monthly`),
reading back an edited workbook (:mod:`~lcoe.case.readback`), templates, labels with
units, plausible ranges (:mod:`~lcoe.case.plausibility`), the error type of bad input
(:mod:`~lcoe.case.errors`), and two small helpers every layer may use: the one seed
helper (:mod:`~lcoe.case.rng`) and the BLAS thread limit (:mod:`~lcoe.case.threads`).

May import: nothing else of lcoe (this is the lowest layer; every layer may import it).
"""
