"""numpy's sum and std from chunks, bit for bit (cross-implementation: numpy itself)."""

from __future__ import annotations

import numpy as np
import pytest

from lcoe.study.chunked_sums import chunked_std, pairwise_pieces, pairwise_total


def _cuts(rng, total: int, kind: str) -> list[int]:
    if kind == "ones":
        return list(range(total + 1))
    if kind == "even":
        step = max(1, total // 7)
        return sorted(set(list(range(0, total, step)) + [total]))
    inner = rng.choice(np.arange(1, total), size=min(total - 1, 9), replace=False) \
        if total > 1 else []
    return [0, *sorted(int(c) for c in inner), total]


@pytest.mark.parametrize(("total", "kind"), [
    *((t, k) for t in (1, 5, 8, 127, 128, 129, 1000, 4099, 30_000, 250_007)
      for k in ("random", "even")),
    *((t, "ones") for t in (1, 5, 8, 127, 128, 129, 1000, 4099))])  # one value per chunk
def test_sum_and_std_equal_numpy_bit_for_bit(total, kind):
    rng = np.random.default_rng(total)
    x = np.maximum(1.0 + 0.04 * rng.standard_normal(total), 0.2) * rng.uniform(0.5, 2.0)
    cuts = _cuts(rng, total, kind)
    chunks = [(a, x[a:b]) for a, b in zip(cuts[:-1], cuts[1:])]
    pieces = [pairwise_pieces(v, a, total) for a, v in chunks]
    assert pairwise_total(pieces, total) == np.add.reduce(x)
    want = float(x.std(ddof=1)) if total > 1 else 0.0
    assert chunked_std(pieces, chunks, total) == want


def test_two_dimensional_chunks_are_read_in_c_order():
    """Chunks of trials x years: numpy's std of the whole (trials, years) array."""
    rng = np.random.default_rng(3)
    f = np.maximum(1.0 + 0.05 * rng.standard_normal((2_345, 30)), 0.2)
    bounds = [0, 1000, 1001, 1777, 2_345]
    chunks = [(a * 30, f[a:b]) for a, b in zip(bounds[:-1], bounds[1:])]
    pieces = [pairwise_pieces(v, off, f.size) for off, v in chunks]
    assert chunked_std(pieces, chunks, f.size) == float(f.std(ddof=1))


def test_missing_values_are_an_error():
    x = np.arange(300.0)
    with pytest.raises(ValueError, match="not covered"):
        pairwise_total([pairwise_pieces(x[:100], 0, 300), pairwise_pieces(x[150:], 150, 300)],
                       300)
