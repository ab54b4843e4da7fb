"""Thread settings of the numerical libraries, and matrix products whose result for one sample
does not depend on the other samples."""

from __future__ import annotations

import numpy as np

_CONTROLLER: list = []

#: Samples are padded to a multiple of this in matrix products (see :func:`sample_product`).
BLAS_BLOCK = 32


def one_blas_thread():
    """Context that runs BLAS/LAPACK on one thread (restored on exit).

    Many small products and solves are slower threaded on this kind of shared 2-core machine:
    small systems in the value-of-information fits were 10-40x slower threaded under load
    (100 systems of size 121 in 1.5 s threaded, 0.15 s on one thread), and the factored
    energy sums about 4x. The libraries are looked up once per process (about 1 ms); each
    use then costs about 10 us. Without threadpoolctl it does nothing.
    """
    try:
        from threadpoolctl import ThreadpoolController
    except ImportError:  # pragma: no cover - optional speed-up
        from contextlib import nullcontext

        return nullcontext()
    if not _CONTROLLER:
        _CONTROLLER.append(ThreadpoolController())
    return _CONTROLLER[0].limit(limits=1)


def sample_product(a: np.ndarray, b: np.ndarray, samples: str = "rows") -> np.ndarray:
    """``a @ b`` with each sample's numbers computed the same way whatever the other samples.

    An optimised BLAS computes the last few rows (or columns) of a product, the remainder of
    their count over its register block, with other kernels whose rounding differs in the last
    bit. Padding the samples with zeros to a multiple of :data:`BLAS_BLOCK` puts every sample
    in a full block, so chunking and workers cannot change a result (``tests/test_factored.py``
    evaluates samples alone, one at a time and among others, and compares the bits).

    Parameters
    ----------
    a, b : numpy.ndarray
        2-D operands.
    samples : {"rows", "columns"}
        Whether the samples are the rows of ``a`` or the columns of ``b``.

    Returns
    -------
    numpy.ndarray
        ``a @ b``.
    """
    rows = samples == "rows"
    n = a.shape[0] if rows else b.shape[1]
    m = n + (-n) % BLAS_BLOCK
    if rows:
        wide = np.zeros((m, a.shape[1]))
        wide[:n] = a
        return (wide @ np.ascontiguousarray(b))[:n]
    wide = np.zeros((b.shape[0], m))  # C order: a transposed operand takes other kernels
    wide[:, :n] = b
    return (np.ascontiguousarray(a) @ wide)[:, :n]
