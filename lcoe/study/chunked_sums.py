"""numpy's sum and standard deviation of a long array, computed chunk by chunk, bit for bit.

A study of a million trials keeps only a few numbers per trial; a statistic over every
trial-year (the year-to-year weather's coefficient of variation: 30 factors per trial) is then
computed from chunks of trials that are never held together. ``numpy.add.reduce`` of a
contiguous float64 array sums pairwise: below :data:`PAIRWISE_BLOCK` values in eight running
sums, above it the two halves (the first cut to a multiple of 8) summed apart and added. The
tree depends on the array's length only, so every node that lies inside one chunk can be summed
where the chunk is (numpy's sum of that slice is the node's value), and the few leaves cut by a
chunk's edges are kept as their values; :func:`pairwise_total` then adds the nodes in the tree's
order and gives exactly ``numpy.add.reduce`` of the whole array. A chunk's pieces are a few
dozen numbers and at most two leaves of :data:`PAIRWISE_BLOCK` values, whatever its size.

``tests/test_chunked_sums.py`` holds this to numpy's own sum and std on random arrays and
chunkings (numpy 2.x: ``pairwise_sum`` in ``numpy/_core/src/umath/loops_utils.h.src``); a
numpy that summed in another order would fail it there, not silently here.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

#: Largest leaf of numpy's pairwise summation (``PW_BLOCKSIZE``) [values].
PAIRWISE_BLOCK = 128
#: numpy's unroll: a node is cut after a multiple of this many values.
_UNROLL = 8


def _halves(start: int, length: int) -> tuple[tuple[int, int], tuple[int, int]]:
    """The two children (start, length) of a node of numpy's pairwise tree."""
    half = length // 2
    half -= half % _UNROLL
    return (start, half), (start + half, length - half)


def pairwise_pieces(values: np.ndarray, offset: int, total: int) -> tuple[dict, dict]:
    """What one chunk contributes to numpy's pairwise sum of an array of ``total`` values.

    Parameters
    ----------
    values : numpy.ndarray
        The chunk's values in C order (any shape; flattened) [any unit].
    offset : int
        Position of the chunk's first value in the whole (flattened) array.
    total : int
        Number of values of the whole array.

    Returns
    -------
    sums : dict of (int, int) to float
        ``(start, length)`` of each largest tree node inside the chunk -> its sum.
    parts : dict of (int, int) to list of (int, numpy.ndarray)
        ``(start, length)`` of each leaf the chunk covers only in part -> [(position of the
        part, its values)].
    """
    flat = np.ravel(values)
    stop = offset + flat.size
    sums: dict = {}
    parts: dict = {}
    stack = [(0, total)]
    while stack:
        start, length = stack.pop()
        end = start + length
        if end <= offset or start >= stop or length == 0:
            continue
        if offset <= start and end <= stop:
            sums[(start, length)] = float(np.add.reduce(flat[start - offset:end - offset]))
        elif length <= PAIRWISE_BLOCK:
            a, b = max(start, offset), min(end, stop)
            parts[(start, length)] = [(a, flat[a - offset:b - offset].copy())]
        else:
            stack.extend(_halves(start, length))
    return sums, parts


def pairwise_total(pieces: Iterable[tuple[dict, dict]], total: int) -> float:
    """``numpy.add.reduce`` of the whole array from the pieces of all its chunks.

    Parameters
    ----------
    pieces : iterable of (dict, dict)
        :func:`pairwise_pieces` of chunks that together cover the ``total`` values once.
    total : int

    Raises
    ------
    ValueError
        The chunks leave values out.
    """
    sums: dict = {}
    parts: dict = {}
    for s, p in pieces:
        sums.update(s)
        for node, frags in p.items():
            parts.setdefault(node, []).extend(frags)

    def node_sum(start: int, length: int) -> float:
        if (start, length) in sums:
            return sums[(start, length)]
        if length <= PAIRWISE_BLOCK:
            frags = sorted(parts.get((start, length), []), key=lambda f: f[0])
            leaf = np.concatenate([f[1] for f in frags]) if frags else np.empty(0)
            if leaf.size != length:
                raise ValueError(f"values [{start}, {start + length}) not covered by the chunks")
            return float(np.add.reduce(leaf))
        left, right = _halves(start, length)
        return node_sum(*left) + node_sum(*right)

    return 0.0 + node_sum(0, total) if total else 0.0


def chunked_std(first: Iterable[tuple[dict, dict]], chunks: Iterable[tuple[int, np.ndarray]],
                total: int, ddof: int = 1) -> float:
    """``numpy.std(whole, ddof=ddof)`` from chunks, bit for bit, in two passes.

    Parameters
    ----------
    first : iterable of (dict, dict)
        :func:`pairwise_pieces` of the values (the first pass: their sum, hence the mean).
    chunks : iterable of (int, numpy.ndarray)
        ``(offset, values)`` of the same values once more (the second pass: squared deviations
        from the mean).
    total : int
        Number of values.
    ddof : int
        Delta degrees of freedom.

    Returns
    -------
    float
        The standard deviation [unit of the values]; 0 for fewer than two values.

    Notes
    -----
    numpy's ``_var``: mean = sum / n; sum of (x - mean)^2; divided by n - ddof; square root.
    """
    if total < 2:
        return 0.0
    mean = pairwise_total(first, total) / total
    second = (pairwise_pieces(np.square(v - mean), off, total) for off, v in chunks)
    return float(np.sqrt(pairwise_total(second, total) / max(total - ddof, 0)))
