"""The site: weather files and their checks, synthetic weather from monthly means, sun
position and plane-of-array irradiance, rows (infinite sheds).

May import: :mod:`lcoe.case`.
"""
