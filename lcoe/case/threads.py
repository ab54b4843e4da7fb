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


def sample_product(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a @ b`` with each sample's numbers computed the same way whatever the other samples.

    An optimised BLAS computes the last few rows (or columns) of a product, the remainder of
    their count over its register block, with other kernels whose rounding differs in the last
    bit, and a product with a single row with another routine. Padding the rows of ``a`` and
    the columns of ``b`` with zeros to a multiple of :data:`BLAS_BLOCK` puts every element in
    a full block, so neither the samples (rows or columns) nor the hours evaluated with them
    can change a result (``tests/test_factored.py`` evaluates samples alone, one at a time
    and among others, and compares the bits).

    Parameters
    ----------
    a, b : numpy.ndarray
        2-D operands, (n, k) and (k, m).

    Returns
    -------
    numpy.ndarray
        ``a @ b``, (n, m).
    """
    n, m = a.shape[0], b.shape[1]
    if n % BLAS_BLOCK:
        wide = np.zeros((n + (-n) % BLAS_BLOCK, a.shape[1]))
        wide[:n] = a
        a = wide
    if m % BLAS_BLOCK:
        wide = np.zeros((b.shape[0], m + (-m) % BLAS_BLOCK))  # C order: a transposed
        wide[:, :m] = b  # operand takes other kernels
        b = wide
    return (np.ascontiguousarray(a) @ np.ascontiguousarray(b))[:n, :m]
