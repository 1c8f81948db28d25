"""Compiled hour loop of the SOC recursion: lane blocks on all cores, four lanes at once.

The arithmetic is the one of :func:`planner.energy.soc_numpy.run_chunk` (the numpy loop),
in the same order, so the energy sums agree to rounding. What differs is the order of work,
chosen from measurements on the project machine (see ``docs/energy.md``, "Speed"):

* What depends only on the site column and the chemistry (net power, the cold block, the
  offer to the store, the surplus and deficit sums) is computed beforehand with numpy,
  once per *group* of lanes sharing a column, efficiencies and charge-temperature limit
  (:func:`planner.energy.soc_numpy.group_offers`); the kernel reads the group's offer.
* One lane's year is a serial chain (each hour needs the previous hour's charge). Four
  lanes are stepped together, their state held in local tuples (registers), so the
  processor can overlap four independent chains (measured about 10 % faster than one
  lane at a time); the state goes back to memory once per time tile.
* Lanes are taken in blocks (:func:`block_lanes`), hours in tiles of :data:`TILE_HOURS`.
  The tile's SOC and C-rate go to a small lane-block buffer first, then row by row into
  the ``(n_hours, k)`` float32 series, so each row write covers whole cache lines and one
  memory page lookup serves a whole block of lanes.
* Blocks are independent (every block writes only its own lanes), so ``numba.prange``
  spreads them over the cores without shared accumulators.

The offer is ``(n_hours, n_groups)`` read at ``grp[j]``; self-discharge and available
capacity are ``(n_hours, n_columns)`` (zero-stride broadcast views are fine) read at
``col[j]``. The module imports without numba: then :data:`BLOCK_KERNEL` is ``None`` and
:func:`block_hours` is plain Python (the tests run it on tiny inputs to check the
compiled logic against the numpy loop).
"""

from __future__ import annotations

import warnings

import numpy as np

try:
    import numba as _numba
    prange = _numba.prange          # behaves as ``range`` when run un-compiled
except ImportError:                 # the numpy loop is used instead
    _numba = None
    prange = range

#: Hours per time tile: three days, so tiles end on day boundaries.
TILE_HOURS = 72

# Columns of the per-lane parameter array ``par`` (k, N_PAR).
P_CAP, P_INV_CAP, P_E_MAX, P_DOD_WH, P_A_MAX, P_CHARGE_RATE_F, P_DISCHARGE_RATE_F, \
    P_LOW = range(8)
N_PAR = 8
# Columns of the per-lane state array ``state`` (k, N_STATE); counts are held as floats
# (exact below 2**53).
S_E, S_ACC, S_D, S_SD, S_SOC, S_MIN_SOC, S_MAX_CR, S_DAY_MAX, S_RUN, S_LONGEST, \
    S_UNS = range(11)
N_STATE = 11


def block_lanes(k: int, n_threads: int = 2) -> int:
    """Lanes per block: at most 256, a multiple of 4, and at least 4 blocks per thread.

    256 float32 = 1 KiB per series row per page lookup; more blocks than threads keep
    both cores busy to the end of the chunk.
    """
    per = -(-k // (4 * max(1, n_threads)))
    return int(min(256, max(4, -(-per // 4) * 4)))


def initial_state(e0: np.ndarray) -> np.ndarray:
    """Per-lane state (k, N_STATE) for a pack holding ``e0`` Wh at hour 0."""
    state = np.zeros((e0.shape[0], N_STATE))
    state[:, S_E] = e0
    state[:, S_MIN_SOC] = np.inf
    state[:, S_DAY_MAX] = -1.0
    return state


def _load(state, j):
    return (state[j, 0], state[j, 1], state[j, 2], state[j, 3], state[j, 4], state[j, 5],
            state[j, 6], state[j, 7], state[j, 8], state[j, 9], state[j, 10])


def _store(state, j, s):
    for i in range(N_STATE):
        state[j, i] = s[i]


def _params(par, j):
    return (par[j, 0], par[j, 1], par[j, 2], par[j, 3], par[j, 4], par[j, 5], par[j, 6],
            par[j, 7])


def _hour(x, sd_frac, avail_frac, s, p):
    """One hour of one lane: returns (new state tuple, SOC, terminal C-rate).

    ``x`` is the group's offer to the store this hour (Wh: ``eta_c * surplus`` or
    ``-deficit / eta_d``, zero while charging is blocked by cold). Takes scalars: passing
    whole arrays to a helper that is not inlined costs more than the hour itself. No
    run-time switches: without self-discharge ``sd_frac`` is 0 (removing ``0 * E``
    changes nothing), and without a cold derating the caller sets ``cap = e_floor``,
    ``dod_wh = 0`` and ``avail_frac = 1``, so ``floor = e_floor`` exactly.
    """
    e, acc, dsum, sdsum, socsum, min_soc, max_cr, day_max, run, longest, uns = s
    cap, inv_cap, e_max, dod_wh, a_max, crf, drf, _ = p
    if x > a_max:
        x = a_max
    loss = e * sd_frac
    e -= loss
    sdsum += loss
    floor = cap - avail_frac * dod_wh
    lo = floor if floor < e else e
    y = e + x
    if y < lo:
        uns += 1.0
        y = lo
    if y > e_max:
        y = e_max
    dd = y - e
    dsum += dd
    if dd > 0.0:
        acc += dd
        rate = dd * crf
    else:
        rate = dd * drf
    soc = y * inv_cap
    socsum += soc
    if soc < min_soc:
        min_soc = soc
    if abs(rate) > max_cr:
        max_cr = abs(rate)
    if soc > day_max:
        day_max = soc
    return ((y, acc, dsum, sdsum, socsum, min_soc, max_cr, day_max, run, longest, uns),
            soc, rate)


def _day_end(s, low):
    """Close a day: extend or reset the run of days whose highest SOC stayed below
    ``low`` and keep the longest run."""
    run = s[S_RUN] + 1.0 if s[S_DAY_MAX] < low else 0.0
    longest = s[S_LONGEST] if s[S_LONGEST] > run else run
    return (s[0], s[1], s[2], s[3], s[4], s[5], s[6], -1.0, run, longest, s[10])


def block_hours(offer, sd, avail, grp, col, par, state, series_col, soc_s, cr_s, month_end,
                snap_dr, block):
    """Run every hour for all lanes; ``state`` (k, N_STATE) is updated in place.

    Per lane and hour (energies in Wh inside the pack, the step is one hour): the store
    is offered ``x = offer[t, grp[j]]`` (``eta_c * surplus``, zero while charging is
    blocked by cold, or ``-deficit / eta_d``), capped at the acceptance ``a_max``;
    self-discharge
    ``E -= E * s``; ``E <- clip(E + x, min(E, floor), e_max)`` where ``floor = cap -
    avail * dod_wh`` (cold-derated low-voltage disconnect; see :func:`_hour` for packs
    without derating). The running sums (stored charge, net stored change,
    self-discharge) give the energy balance; ``snap_dr`` gets ``acc - d`` at each month
    end (``month_end[t]``) for the unserved load by month. SOC and terminal
    C-rate (discharge positive) go to column ``series_col[j]`` of ``soc_s``/``cr_s`` when
    it is ``>= 0``. ``block`` is the number of lanes per block (a multiple of 4).
    """
    n_hours = month_end.shape[0]
    k = state.shape[0]
    n_blocks = (k + block - 1) // block
    for b in prange(n_blocks):
        j0 = b * block
        j1 = min(k, j0 + block)
        buf_soc = np.empty((TILE_HOURS, block), dtype=np.float32)
        buf_cr = np.empty((TILE_HOURS, block), dtype=np.float32)
        whole = series_col[j0] >= 0 and series_col[j1 - 1] - series_col[j0] == j1 - 1 - j0
        # month-end snapshots of this block: count the month ends before each tile
        snap0 = 0
        for t0 in range(0, n_hours, TILE_HOURS):
            t1 = min(n_hours, t0 + TILE_HOURS)
            for g in range(j0, j1, 4):
                # four lanes stepped together; past the end the last lane is repeated
                # (same inputs, same results, written back identically)
                ja, jb, jc, jd = g, min(g + 1, k - 1), min(g + 2, k - 1), min(g + 3, k - 1)
                # unsigned indices: numba then skips the negative-index wraparound
                # test on every read (measured about 15 % of the kernel's time)
                ca, cb, cc, cd = (np.uint64(col[ja]), np.uint64(col[jb]), np.uint64(col[jc]),
                                  np.uint64(col[jd]))
                ga, gb, gc, gd = (np.uint64(grp[ja]), np.uint64(grp[jb]), np.uint64(grp[jc]),
                                  np.uint64(grp[jd]))
                pa, pb, pc, pd = (_params(par, ja), _params(par, jb), _params(par, jc),
                                  _params(par, jd))
                sa, sb, sc, sdd = (_load(state, ja), _load(state, jb), _load(state, jc),
                                   _load(state, jd))
                i = g - j0
                snap = snap0
                for t in range(t0, t1):
                    tu = np.uint64(t)
                    sa, soc_a, cr_a = _hour(offer[tu, ga], sd[tu, ca], avail[tu, ca], sa, pa)
                    sb, soc_b, cr_b = _hour(offer[tu, gb], sd[tu, cb], avail[tu, cb], sb, pb)
                    sc, soc_c, cr_c = _hour(offer[tu, gc], sd[tu, cc], avail[tu, cc], sc, pc)
                    sdd, soc_d, cr_d = _hour(offer[tu, gd], sd[tu, cd], avail[tu, cd], sdd, pd)
                    r = t - t0
                    buf_soc[r, i] = soc_a
                    buf_soc[r, i + 1] = soc_b
                    buf_soc[r, i + 2] = soc_c
                    buf_soc[r, i + 3] = soc_d
                    buf_cr[r, i] = cr_a
                    buf_cr[r, i + 1] = cr_b
                    buf_cr[r, i + 2] = cr_c
                    buf_cr[r, i + 3] = cr_d
                    if (t + 1) % 24 == 0:
                        sa = _day_end(sa, pa[P_LOW])
                        sb = _day_end(sb, pb[P_LOW])
                        sc = _day_end(sc, pc[P_LOW])
                        sdd = _day_end(sdd, pd[P_LOW])
                    if month_end[t]:
                        snap_dr[snap, ja] = sa[S_ACC] - sa[S_D]
                        snap_dr[snap, jb] = sb[S_ACC] - sb[S_D]
                        snap_dr[snap, jc] = sc[S_ACC] - sc[S_D]
                        snap_dr[snap, jd] = sdd[S_ACC] - sdd[S_D]
                        snap += 1
                _store(state, ja, sa)
                _store(state, jb, sb)
                _store(state, jc, sc)
                _store(state, jd, sdd)
            for t in range(t0, t1):
                if month_end[t]:
                    snap0 += 1
            if whole:       # every lane of the block kept, in order: copy row slices
                s0 = series_col[j0]
                for t in range(t0, t1):
                    soc_s[t, s0:s0 + j1 - j0] = buf_soc[t - t0, :j1 - j0]
                    cr_s[t, s0:s0 + j1 - j0] = buf_cr[t - t0, :j1 - j0]
            else:
                for t in range(t0, t1):
                    for j in range(j0, j1):
                        s = series_col[j]
                        if s >= 0:
                            soc_s[t, s] = buf_soc[t - t0, j - j0]
                            cr_s[t, s] = buf_cr[t - t0, j - j0]


#: :func:`block_hours` for numba (parallel over lane blocks, cached on disk), or ``None``.
BLOCK_KERNEL = None
if _numba is not None:
    # the helpers are compiled first so that the kernel calls (and LLVM inlines) them
    _load, _store, _params, _hour, _day_end = (
        _numba.njit(cache=True, nogil=True)(f) for f in (_load, _store, _params, _hour,
                                                          _day_end))
    BLOCK_KERNEL = _numba.njit(parallel=True, cache=True, nogil=True)(block_hours)


def _zero_rows(a):
    """Write zeros over a 2-D array, each thread over a contiguous range of rows."""
    n = a.shape[0]
    for part in prange(8):
        for i in range(part * n // 8, (part + 1) * n // 8):
            a[i, :] = 0


_ZERO_ROWS = (_numba.njit(parallel=True, cache=True, nogil=True)(_zero_rows)
              if _numba is not None else None)


def prefault(arr: np.ndarray) -> None:
    """Touch the pages of a new array in address order (writing zeros) before the kernel
    fills it a lane block at a time: first-touch page faults scattered over a 300 MB
    array cost seconds, in order they cost about 0.1 s (measured). With numba each core
    takes a contiguous range of rows (measured half the wall time of ``fill``)."""
    if _ZERO_ROWS is not None and not _COMPILE_FAILED and arr.flags.c_contiguous:
        try:
            _ZERO_ROWS(arr)
            return
        except Exception:  # the plain fill below does the same
            pass
    arr.fill(0)


def readonly(arr: np.ndarray) -> np.ndarray:
    """A read-only view: contiguous arrays and broadcast views then share one type."""
    view = arr.view()
    view.flags.writeable = False
    return view


def compiled_kernel():
    """:data:`BLOCK_KERNEL` compiled for one signature (any-layout arrays), or ``None``.

    Compiled on first use, not at import. One signature for every call: the hourly
    inputs are passed as read-only any-layout views (see :func:`readonly`), so a fresh
    install compiles once (several seconds, then loaded from numba's on-disk cache)
    instead of once per combination of input layouts. ``None`` without numba, or when
    compiling fails (an incompatible numba release): the caller then runs the numpy
    loop, which gives the same numbers, and a warning says so once.
    """
    global _COMPILE_FAILED
    if BLOCK_KERNEL is None or _COMPILE_FAILED:
        return None
    if not BLOCK_KERNEL.signatures:
        try:
            t = _numba.types
            r2 = t.Array(t.float64, 2, "A", readonly=True)
            f2, i1 = t.float64[:, :], t.int64[:]
            BLOCK_KERNEL.compile((r2, r2, r2, i1, i1, f2, f2, i1, t.float32[:, :],
                                  t.float32[:, :], t.boolean[:], f2, t.int64))
        except Exception as err:  # an optional accelerator must never stop a plan
            _COMPILE_FAILED = True
            warnings.warn(f"numba could not compile the SOC kernel ({type(err).__name__}); "
                          f"using the numpy hour loop instead", RuntimeWarning, stacklevel=2)
            return None
        BLOCK_KERNEL.disable_compile()
    return BLOCK_KERNEL


_COMPILE_FAILED = False
