"""Synthetic weather against the weather files bundled with pvlib: a per-file table.

For each file and seed: annual energy synthetic/file for a fixed (tilt = latitude) and a
single-axis plant through the project's model, annual DNI ratio, the worst monthly DNI error in
months with more than 2 kWh/m2/day, every such month outside the 10 % bound, and the time one
synthesis took (one site-year, wall clock; a figure to watch, not a speed target), first from
the file's monthly GHI alone, then with its monthly DNI given as well. It prints the
accuracy figures the tests hold (``tests/test_synth_weather_bundled.py``); below the table, what
pvlib's decompositions give on each file's own hourly GHI (the reach of a perfect synthesis).

Run: ``python benchmarks/bench_synth_weather.py [seed ...]`` from the repository root.
"""

from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from lcoe.site.synth_weather import DECOMPOSITIONS  # noqa: E402
from tests.helpers.bundled_weather import (  # noqa: E402
    DNI_BOUND,
    bundled_files,
    compare,
    decomposed_dni_ratio,
    monthly_daily_kwh_m2,
    read_bundled,
    sunny_months,
    synthesise_from,
)


def main(seeds) -> None:
    files = [read_bundled(p) for p in bundled_files()]
    for dni_given in (False, True):
        print("\nmonthly GHI, temperature and wind given" + (" and the file's monthly DNI"
                                                         if dni_given else " (GHI only)"))
        _table(files, seeds, dni_given)
    print("\nDNI of each decomposition on the file's own hourly GHI / file DNI, sunny months:")
    for weather in files:
        sunny = sunny_months(weather)
        for model in DECOMPOSITIONS:
            ratio = decomposed_dni_ratio(weather, model)[sunny]
            print(f"{weather.name:14s} {model:16s} {ratio.min():.3f}..{ratio.max():.3f}")


def _table(files, seeds, dni_given: bool) -> None:
    print(f"{'file':14s} {'seed':>4s} {'fixed':>7s} {'1-axis':>7s} {'DNI yr':>7s} "
          f"{'worst month DNI':>16s} {'synth ms':>8s}  months outside the DNI bound")
    times = []
    for weather in files:
        extra = {"dni_kwh_m2_day": monthly_daily_kwh_m2(weather.data["dni"])} if dni_given else {}
        for seed in seeds:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", UserWarning)
                start = time.perf_counter()
                synthetic = synthesise_from(weather, seed, **extra)
                times.append(time.perf_counter() - start)
                res = compare(weather, synthetic)
            ratio = res["dni_ratio"]
            sunny = res["sunny"]
            worst = int(max(range(12), key=lambda m: abs(ratio[m] - 1.0) if sunny[m] else -1))
            misses = " ".join(f"m{m + 1:02d} {ratio[m] - 1.0:+.3f}" for m in range(12)
                              if sunny[m] and abs(ratio[m] - 1.0) > DNI_BOUND)
            print(f"{weather.name:14s} {seed:4d} {res['energy_fixed']:7.4f} "
                  f"{res['energy_single_axis']:7.4f} {res['annual_dni_ratio']:7.3f} "
                  f"{ratio[worst] - 1.0:+9.3f} (m{worst + 1:02d}) {times[-1] * 1e3:8.0f}  {misses}")
    print(f"synthesis per site-year: median {sorted(times)[len(times) // 2] * 1e3:.0f} ms "
          f"over {len(times)} runs (wall clock, machine shared)")


if __name__ == "__main__":
    main([int(s) for s in sys.argv[1:]] or [1, 2, 3])
