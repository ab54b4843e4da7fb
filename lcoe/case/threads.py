"""Thread settings of the numerical libraries."""

from __future__ import annotations

_CONTROLLER: list = []


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
