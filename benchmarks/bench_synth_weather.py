"""Synthetic weather against the weather files bundled with pvlib: a per-file table.

For each file and seed: annual energy synthetic/file for a fixed (tilt = latitude) and a
single-axis plant through the project's model, annual DNI ratio, and the worst monthly DNI
error in months with more than 2 kWh/m2/day. Not a speed benchmark; it prints the accuracy
figures the tests hold (``tests/test_synth_weather_bundled.py``).

Run: ``python benchmarks/bench_synth_weather.py [seed ...]`` from the repository root.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.helpers.bundled_weather import (  # noqa: E402
    bundled_files,
    compare,
    read_bundled,
    synthesise_from,
)


def main(seeds) -> None:
    print(f"{'file':14s} {'seed':>4s} {'fixed':>7s} {'1-axis':>7s} {'DNI yr':>7s} "
          f"{'worst month DNI':>16s}")
    for path in bundled_files():
        weather = read_bundled(path)
        for seed in seeds:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", UserWarning)
                res = compare(weather, synthesise_from(weather, seed))
            ratio = res["dni_ratio"]
            sunny = res["sunny"]
            worst = int(max(range(12), key=lambda m: abs(ratio[m] - 1.0) if sunny[m] else -1))
            print(f"{path.name:14s} {seed:4d} {res['energy_fixed']:7.4f} "
                  f"{res['energy_single_axis']:7.4f} {res['annual_dni_ratio']:7.3f} "
                  f"{ratio[worst] - 1.0:+9.3f} (m{worst + 1:02d})")


if __name__ == "__main__":
    main([int(s) for s in sys.argv[1:]] or [1, 2, 3])
