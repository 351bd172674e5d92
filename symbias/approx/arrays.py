"""numpy helpers shared by the magnitude box and the term search.

Lowest numeric level of :mod:`symbias.approx`; it knows nothing of formulas or
statements.

Examples
--------
>>> relative_errors(np.array([1.1, np.inf, 0.5])).round(3).tolist()
[0.1, inf, 0.5]
"""

from __future__ import annotations

import numpy as np

__all__ = ["dot", "relative_errors"]

_SMALL_PRODUCT = 8_000_000  # multiply-adds up to which a matrix product is cut into single-thread pieces
_SINGLE_THREAD_PRODUCT = 262_144  # multiply-adds below which OpenBLAS keeps a product on one thread


def dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a @ b``, cut into row blocks that BLAS runs on the calling thread when it is mid-sized.

    Why: a multi-threaded BLAS (OpenBLAS: above about 2.6e5 multiply-adds)
    wakes its threads for every product; on a busy machine a wake-up costs
    milliseconds, far more than the arithmetic of the many mid-sized products
    the search makes.  Small and large products go to BLAS as they are.  The
    result is the same product whatever BLAS decides.

    Examples
    --------
    >>> dot(np.eye(2), np.array([[1.0, 2.0], [3.0, 4.0]]))
    array([[1., 2.],
           [3., 4.]])
    """
    m, k = a.shape
    n = b.shape[1]
    rows = _SINGLE_THREAD_PRODUCT // max(1, k * n)
    if m * k * n <= _SINGLE_THREAD_PRODUCT or m * k * n > _SMALL_PRODUCT or rows < 1:
        return a @ b
    out = np.empty((m, n), dtype=np.result_type(a, b))
    for start in range(0, m, rows):
        np.matmul(a[start : start + rows], b, out=out[start : start + rows])
    return out


def relative_errors(ratio: np.ndarray) -> np.ndarray:
    """``|ratio - 1|`` with every non-finite entry (0/0, x/0) read as an infinite error."""
    with np.errstate(invalid="ignore"):
        err = np.abs(ratio - 1.0)
    return np.where(np.isfinite(err), err, np.inf)
