"""Compiled lookup of the pack Monte Carlo (:mod:`planner.pack.spread_cells`).

:func:`read_curve` is the linear interpolation of ``_age_cells``' ``read`` in one pass,
float32 operation for float32 operation (no fast-math, so the same bits as the numpy
expression), instead of seven whole-array numpy passes with their temporaries.
With numba missing, :data:`READ` is ``None`` and the numpy expression runs.
"""

from __future__ import annotations

import numpy as np

try:
    import numba as _numba
except ImportError:  # numba is optional: the numpy expression gives the same numbers
    _numba = None


def read_curve(loss, slope, tau, base, n_sites, m_last, out):
    """``out = (tau - m) * slope[r] + loss[r]`` with ``m = min(floor(tau), m_last)`` and
    flat row ``r = m * n_sites + base[s, d]``; arrays ``tau``, ``out`` (N, S, D) float32,
    ``base`` (S, D) int, tables flat float32."""
    n_cells, n_s, n_d = tau.shape
    for a in range(n_cells):
        for s in range(n_s):
            for d in range(n_d):
                t = tau[a, s, d]
                whole = np.float32(np.floor(t))
                if whole > m_last:
                    whole = m_last
                r = np.int64(whole) * n_sites + base[s, d]
                out[a, s, d] = (t - whole) * slope[r] + loss[r]


READ = None
if _numba is not None:
    READ = _numba.njit(cache=True, nogil=True)(read_curve)
