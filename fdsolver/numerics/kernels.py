"""Compiled inner loops (numba), each O(N) over a grid.

* :func:`sturm_count` - number of eigenvalues of a symmetric tridiagonal
  matrix (diagonal d, off-diagonal e) below a shift, from the signs of the
  LDL^T pivots (Sturm sequence).  Exact in exact arithmetic; in floating point
  it is the count of a matrix within a few ulps of the given one.
  :func:`bisect_eigenvalues`, :func:`prove_indices` and :func:`sturm_counts_at` count at several
  shifts in one pass (independent recurrences side by side).
* :func:`tridiag_factor` / :func:`tridiag_apply` (:func:`tridiag_apply_into`) / :func:`tridiag_solve` -
  (T - sigma I) y = b by Gaussian elimination with partial pivoting;
  :func:`inverse_iteration` - eigenvectors of a batch of shifts from one
  factorisation each (from :func:`start_vector`), orthonormal within clusters.
* :func:`flux_quotient` - the Rayleigh quotient of the flux-form operator,
  sum a_j (psi_{j+1} - psi_j)^2 + sum (Vw_i - alpha_i) psi_i^2 over
  sum w_i psi_i^2, computed from differences so that its round-off is a few
  ulps of the energy scale rather than of the matrix norm (which grows as
  1/h_min^2 on graded grids).
* :func:`lipschitz_limit` - the lower envelope min_j (h_j + g |x_i - x_j|).
* :func:`grid_samples` (:func:`grid_raw_samples`), :func:`inner_bounds`, :func:`sample_pass` (:func:`merge_samples`,
  :func:`lipschitz_limit`, :func:`coarse_midpoints`), :func:`segment_nodes` - the sampling of the spacing
  function and the node placement of a base grid
  (:mod:`fdsolver.numerics.grid`), one pass each instead of a chain of numpy
  calls (a base grid is built twice per solve, on a few hundred samples).
* :func:`target_spacing` - the raw target spacing of a base grid from sampled V and m (the arithmetic
  of :func:`fdsolver.numerics.grid.spacing_function` in one pass).
* :func:`piece_grid` - a whole base grid in one call where V is constant between features (its spacing
  function sampled from tables, :func:`piece_values`; the sample offsets from :func:`sample_offsets`, made
  once per growth rate), :func:`mirrored_piece_grid` its mirror-symmetric form; :func:`cell_piece_values` -
  V and m on every cell of a grid from those tables;
  :func:`piece_values_apart` - V and m from the tables at positions none of which lies next to a feature.
* :func:`flux_operator` - the arrays of the flux-form operator
  (:mod:`fdsolver.numerics.operator`) in one pass over the cells, through :func:`symmetric_form`, the one
  formula of T's diagonal and off-diagonal; :func:`even_half` its even mirror sector (the whole operator's
  entries past the centre).
* :func:`refine_nodes` - nested refinement of a grid (every cell split in k).
* :func:`constant_sectors` - the operators of a grid whose cells take their base cell's V and m (point terms,
  mirror halves); :func:`constant_level` - one nested level of such a potential: refinement, those operators
  and :func:`predicted_grid` in one call; :func:`constant_levels` - every regular level with the Romberg
  table and the judgement (:func:`romberg_newest` for the splittings); :func:`constant_coarse` - a coarse
  grid's energies by bisection.
* :func:`decay_reach` - where the WKB decay integral along a walk first reaches a budget (the box's ends);
  :func:`walk_pair` - the samples of both walks of a box.
* :func:`floor_sums` - V's range, the largest mass and the binding floor's integral over a box's samples in
  one pass (numpy's pairwise sum, :func:`_pairwise_sum`); :func:`even_samples` - ``numpy.linspace``'s samples.
* :func:`wave_columns`, :func:`unfold_row`, :func:`home_of` - the observables' sums, a state's wavefunction
  unfolded onto the whole grid, each state's home region.

Numba is used here because these loops are sequential recurrences that numpy
cannot vectorise; measured figures are in DEVELOPERS.md.  Compilation results
are cached on disk in fdsolver's folder of the user's cache, or where the user's
``NUMBA_CACHE_DIR`` says (:func:`fdsolver.compiled.cache_folder`).
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.compiled import (
    njit,  # numba.njit with the project's cache folder (imports numba)
)


@njit
def search_sorted(a, key, right):
    """``numpy.searchsorted(a, key, side="right" if right else "left")`` for a sorted 1-D float array ``a`` and one
    float ``key``: the number of entries below ``key`` (left) or not above it (right), NaN ordered last, by the
    same bisection and comparisons as numba's own (so the same index).  Written out because numba's version
    lives in its numpy array-math module, whose import a cached kernel that uses it pays on its first load
    (about 0.08 s of CPU; DEVELOPERS.md, session 15).  O(log N)."""
    lo = 0
    hi = a.shape[0]
    nan_key = math.isnan(key)
    while lo < hi:
        mid = lo + ((hi - lo) >> 1)
        v = a[mid]
        if right:
            go = nan_key or v <= key
        else:
            go = v < key or (nan_key and not math.isnan(v))
        if go:
            lo = mid + 1
        else:
            hi = mid
    return lo


@njit
def even_samples(lo, hi, num):
    """``numpy.linspace(lo, hi, num)`` (num >= 2) with numpy's floating-point operations, so the same bits: i times
    the step (hi - lo) / (num - 1) plus lo, and hi itself last (where the step underflows to 0, i / (num - 1)
    times hi - lo instead, as numpy does).  Units of lo.  O(num)."""
    out = np.empty(num)
    div = num - 1
    delta = hi - lo
    step = delta / div
    for i in range(num):
        t = float(i) * step if step != 0.0 else (float(i) / div) * delta
        out[i] = t + lo
    out[num - 1] = hi
    return out


@njit
def _block_sum(a, lo, n):
    """numpy's sum of a block of at most 128 entries a[lo:lo + n]: sequential below 8 entries, else eight running
    sums over blocks of 8 combined pairwise, then the rest in order."""
    if n < 8:
        res = 0.0
        for i in range(n):
            res += a[lo + i]
        return res
    r0, r1, r2, r3 = a[lo], a[lo + 1], a[lo + 2], a[lo + 3]
    r4, r5, r6, r7 = a[lo + 4], a[lo + 5], a[lo + 6], a[lo + 7]
    i = 8
    while i < n - (n % 8):
        r0 += a[lo + i]
        r1 += a[lo + i + 1]
        r2 += a[lo + i + 2]
        r3 += a[lo + i + 3]
        r4 += a[lo + i + 4]
        r5 += a[lo + i + 5]
        r6 += a[lo + i + 6]
        r7 += a[lo + i + 7]
        i += 8
    res = ((r0 + r1) + (r2 + r3)) + ((r4 + r5) + (r6 + r7))
    while i < n:
        res += a[lo + i]
        i += 1
    return res


@njit
def _pairwise_sum(a, lo, n):
    """numpy's sum of a[lo:lo + n] (a contiguous float64 array) with its operations in its order, so the same
    bits as ``numpy.sum``: pairwise summation, blocks of up to 128 entries summed by :func:`_block_sum` and a
    longer stretch split in two at a multiple of 8 below its middle, the halves' sums added.  The splits are
    walked with an explicit stack (a compiled function calling itself does not load from numba's cache).
    O(n)."""
    if n <= 128:
        return _block_sum(a, lo, n)
    depth = 64  # halving from at most 2^63 entries down to 128
    f_lo = np.empty(depth, np.int64)
    f_n = np.empty(depth, np.int64)
    f_stage = np.empty(depth, np.int64)  # 0 new, 1 waiting for its left half, 2 left known, 3 waiting for its right
    f_left = np.empty(depth)
    top = 0
    f_lo[0], f_n[0], f_stage[0] = lo, n, 0
    while True:
        start, size = f_lo[top], f_n[top]
        half = size // 2
        half -= half % 8
        done = False
        value = 0.0
        if f_stage[top] == 0:
            if half <= 128:
                f_left[top] = _block_sum(a, start, half)
                f_stage[top] = 2
            else:
                f_stage[top] = 1
                top += 1
                f_lo[top], f_n[top], f_stage[top] = start, half, 0
        elif f_stage[top] == 2:
            if size - half <= 128:
                value = f_left[top] + _block_sum(a, start + half, size - half)
                done = True
            else:
                f_stage[top] = 3
                top += 1
                f_lo[top], f_n[top], f_stage[top] = start + half, size - half, 0
        while done:  # hand the finished sum to the stretch it is half of
            if top == 0:
                return value
            top -= 1
            if f_stage[top] == 1:
                f_left[top] = value
                f_stage[top] = 2
                done = False
            else:
                value = f_left[top] + value


@njit
def floor_sums(v, m, dx, level):
    """(finite, min V, max V, max m, area) of V and m sampled over a box (``v``, ``m``, with widths ``dx``) in one
    pass and one sum: whether every V is finite, its least and largest value, the largest mass, and
    sum (level - V)_+ dx (0 where ``level`` is not finite), numpy's sum of ``numpy.maximum(level - v, 0) * dx``
    (:func:`_pairwise_sum`): the same numbers as those numpy steps.  V in the energy unit, dx in the length
    unit, m in m_e.  O(N)."""
    n = v.shape[0]
    finite = True
    lowest = math.inf
    highest = -math.inf
    heaviest = -math.inf
    for i in range(n):
        if not math.isfinite(v[i]):
            finite = False
        lowest = _nan_min(lowest, v[i])
        highest = -_nan_min(-highest, -v[i])
        heaviest = -_nan_min(-heaviest, -m[i])
    area = 0.0
    if math.isfinite(level) and n:
        terms = np.empty(n)
        for i in range(n):
            t = level - v[i]
            terms[i] = (t if (t >= 0.0 or math.isnan(t)) else 0.0) * dx[i]
        area = _pairwise_sum(terms, 0, n)
    return finite, lowest, highest, heaviest, area


@njit
def interp_sorted(x, xp, fp):
    """``numpy.interp(x, xp, fp)`` for increasing ``xp`` (1-D float arrays): fp[0] left of xp[0], fp[-1] right of
    xp[-1], fp[j] at xp[j] itself, else the straight line through the two samples around x, computed as numba's
    (and numpy's) version computes it, so the same bits: slope (fp[j+1] - fp[j]) / (xp[j+1] - xp[j]) times
    (x - xp[j]) plus fp[j], from the other end where that is NaN.  Written out for the reason
    :func:`search_sorted` is.  Units of ``fp``.  O(log N) per point."""
    n = xp.shape[0]
    out = np.empty(x.shape[0])
    for i in range(x.shape[0]):
        xv = x[i]
        if n == 1:
            out[i] = fp[0]
        elif math.isnan(xv):
            out[i] = xv
        elif xv > xp[n - 1]:
            out[i] = fp[n - 1]
        elif xv < xp[0]:
            out[i] = fp[0]
        else:
            j = search_sorted(xp, xv, True) - 1  # the last sample at or below x
            if j == n - 1 or xp[j] == xv:
                out[i] = fp[j]
            else:
                slope = (fp[j + 1] - fp[j]) / (xp[j + 1] - xp[j])
                r = slope * (xv - xp[j]) + fp[j]
                if math.isnan(r):
                    r = slope * (xv - xp[j + 1]) + fp[j + 1]
                    if math.isnan(r) and fp[j] == fp[j + 1]:
                        r = fp[j]
                out[i] = r
    return out


@njit
def sturm_count(d, e, sigma):
    """Number of eigenvalues of tridiag(e, d, e) strictly below ``sigma``."""
    n = d.shape[0]
    count = 0
    q = d[0] - sigma
    if q < 0.0:
        count += 1
    tiny = 1e-300
    for i in range(1, n):
        if q == 0.0:
            q = tiny
        q = d[i] - sigma - e[i - 1] * e[i - 1] / q
        if q < 0.0:
            count += 1
    return count


@njit
def _sturm_counts3(d, e, s0, s1, s2):
    """:func:`sturm_count` at three shifts in one pass (:func:`_sturm_counts4` with the last shift twice: the
    same arithmetic, hence the same counts; the recurrences run side by side, so the pass costs little more than
    one count).  Exact integers; shifts in the matrix's energy unit.  O(N)."""
    c0, c1, c2, _ = _sturm_counts4(d, e, s0, s1, s2, s2)
    return c0, c1, c2


@njit
def _sturm_counts4(d, e, s0, s1, s2, s3):
    """:func:`sturm_count` at four shifts in one pass: four independent recurrences side by side, each the
    arithmetic of :func:`sturm_count`, hence the same counts, at about the cost of one count (measured in
    DEVELOPERS.md, session 17).  Exact integers; shifts in the matrix's energy unit.  O(N)."""
    n = d.shape[0]
    tiny = 1e-300
    q0 = d[0] - s0
    q1 = d[0] - s1
    q2 = d[0] - s2
    q3 = d[0] - s3
    c0 = 1 if q0 < 0.0 else 0
    c1 = 1 if q1 < 0.0 else 0
    c2 = 1 if q2 < 0.0 else 0
    c3 = 1 if q3 < 0.0 else 0
    for i in range(1, n):
        if q0 == 0.0:
            q0 = tiny
        if q1 == 0.0:
            q1 = tiny
        if q2 == 0.0:
            q2 = tiny
        if q3 == 0.0:
            q3 = tiny
        ee = e[i - 1] * e[i - 1]
        q0 = d[i] - s0 - ee / q0
        q1 = d[i] - s1 - ee / q1
        q2 = d[i] - s2 - ee / q2
        q3 = d[i] - s3 - ee / q3
        if q0 < 0.0:
            c0 += 1
        if q1 < 0.0:
            c1 += 1
        if q2 < 0.0:
            c2 += 1
        if q3 < 0.0:
            c3 += 1
    return c0, c1, c2, c3


@njit
def sturm_counts_at(d, e, shifts):
    """:func:`sturm_count` at every one of ``shifts`` (an array), four per pass over the matrix
    (:func:`_sturm_counts4`): the same counts as one shift at a time, at about the cost of one count per four
    shifts.  Shifts in the matrix's energy unit.  O(N ceil(len(shifts) / 4))."""
    m = shifts.shape[0]
    out = np.empty(m, np.int64)
    for i in range(0, m, 4):
        last = m - 1
        i1, i2, i3 = min(i + 1, last), min(i + 2, last), min(i + 3, last)
        c0, c1, c2, c3 = _sturm_counts4(d, e, shifts[i], shifts[i1], shifts[i2], shifts[i3])
        out[i] = c0
        out[i1] = c1
        out[i2] = c2
        out[i3] = c3
    return out


@njit
def upper_bracket(d, e, below, step, count):
    """The first of below + step, below + 2 step, below + 4 step, ... with at least ``count`` eigenvalues of
    tridiag(e, d, e) under it (or the first that is not finite): an upper end for bisection when no bound on
    the wanted values is known (walls, a confining potential).  Three candidates per pass over the matrix
    (:func:`_sturm_counts3`); the result is that of trying them one at a time.  Energies in the matrix's unit.
    O(N log2(bracket / step)).
    """
    while True:
        s1 = step * 2.0
        s2 = s1 * 2.0
        a0, a1, a2 = below + step, below + s1, below + s2
        c0, c1, c2 = _sturm_counts3(d, e, a0, a1, a2)
        if c0 >= count or not math.isfinite(a0):
            return a0
        if c1 >= count or not math.isfinite(a1):
            return a1
        if c2 >= count or not math.isfinite(a2):
            return a2
        step = s2 * 2.0


@njit
def bisect_eigenvalues(d, e, lo, count, below, above, rtol, floor):
    """Eigenvalues number lo .. lo + count - 1 of tridiag(e, d, e) by bisection on Sturm counts.

    Each is bracketed in [below, above] (which must hold them all) and halved
    until its bracket is narrower than rtol * max(|value|, floor); the lower
    end of one bracket starts the next.  Accurate enough to start inverse
    iteration (the eigenvectors and the polished energies come from there).
    Two halvings per pass over the matrix: the midpoint and both possible
    next midpoints are counted together (:func:`_sturm_counts3`), so the
    brackets are exactly those of halving one step at a time.
    O(N log2(range / tolerance)) per value.
    """
    out = np.empty(count)
    start = below
    for j in range(count):
        target = lo + j  # the eigenvalue with exactly `target` values below it
        a = start
        b = above
        while b - a > rtol * max(abs(a), abs(b), floor):
            mid = 0.5 * (a + b)
            if mid <= a or mid >= b:
                break
            c_mid, c_left, c_right = _sturm_counts3(d, e, mid, 0.5 * (a + mid), 0.5 * (mid + b))
            if c_mid > target:
                b = mid
                c_next = c_left
            else:
                a = mid
                c_next = c_right
            # the second halving, exactly as the loop would take it (its midpoint was counted above)
            if not (b - a > rtol * max(abs(a), abs(b), floor)):
                break
            mid = 0.5 * (a + b)
            if mid <= a or mid >= b:
                break
            if c_next > target:
                b = mid
            else:
                a = mid
        out[j] = 0.5 * (a + b)
        start = a
    return out


@njit
def _reciprocal(pivot):
    """1 / pivot, with a pivot below 1e-300 in size taken as 1e-300 of its sign (a subnormal pivot's reciprocal
    would overflow)."""
    if abs(pivot) < 1e-300:
        pivot = math.copysign(1e-300, pivot)
    return 1.0 / pivot


@njit
def tridiag_factor(d, e, sigma):
    """LU factors of tridiag(e, d, e) - sigma I with partial pivoting: (r0, u1, u2, lmul, piv).

    r0 holds the reciprocals of U's diagonal (the solves multiply instead of
    dividing: a multiplication's latency, not a division's, on their chain),
    u1/u2 the first and second superdiagonals of U (the second appears where
    rows were swapped), lmul the multipliers and piv the swaps.  A zero pivot
    is replaced by 1e-300 (inverse iteration at an exact eigenvalue), and any
    pivot smaller than that in size by 1e-300 of its sign.  O(N).
    """
    n = d.shape[0]
    r0 = np.empty(n)
    u1 = np.zeros(n)
    u2 = np.zeros(n)
    lmul = np.zeros(n)
    piv = np.zeros(n, dtype=np.bool_)
    diag = d[0] - sigma
    sup = e[0] if n > 1 else 0.0
    for i in range(n - 1):
        sub = e[i]
        nd = d[i + 1] - sigma
        nsup = e[i + 1] if i + 1 < n - 1 else 0.0
        if abs(diag) >= abs(sub):
            if diag == 0.0:
                diag = 1e-300
            m = sub / diag
            r0[i] = _reciprocal(diag)
            u1[i] = sup
            lmul[i] = m
            diag = nd - m * sup
            sup = nsup
        else:  # swap rows i and i+1
            m = diag / sub
            r0[i] = _reciprocal(sub)
            u1[i] = nd
            u2[i] = nsup
            lmul[i] = m
            piv[i] = True
            diag = sup - m * nd
            sup = -m * nsup
    if diag == 0.0:
        diag = 1e-300
    r0[n - 1] = _reciprocal(diag)
    return r0, u1, u2, lmul, piv


@njit
def tridiag_apply_into(r0, u1, u2, lmul, piv, b, y):
    """Solve with the factors of :func:`tridiag_factor` into ``y`` (``b`` is not changed, and must not be ``y``);
    returns max |y| (NaN if y is not finite).  The forward sweep reads b[i + 1] where it first needs it (no
    copy of b first: entry i + 1 is untouched before step i).  O(N)."""
    n = r0.shape[0]
    y[0] = b[0]
    for i in range(n - 1):
        if piv[i]:
            t = y[i]
            y[i] = b[i + 1]
            y[i + 1] = t - lmul[i] * y[i]
        else:
            y[i + 1] = b[i + 1] - lmul[i] * y[i]
    y[n - 1] = y[n - 1] * r0[n - 1]
    big = abs(y[n - 1])
    if n > 1:
        y[n - 2] = (y[n - 2] - u1[n - 2] * y[n - 1]) * r0[n - 2]
        big = max(big, abs(y[n - 2]))
    for i in range(n - 3, -1, -1):
        y[i] = (y[i] - u1[i] * y[i + 1] - u2[i] * y[i + 2]) * r0[i]
        big = max(big, abs(y[i]))
    return big


@njit
def tridiag_apply(r0, u1, u2, lmul, piv, b):
    """Solve with the factors of :func:`tridiag_factor`; returns a new array.  O(N)."""
    y = np.empty(r0.shape[0])
    tridiag_apply_into(r0, u1, u2, lmul, piv, b, y)
    return y


@njit
def tridiag_solve(d, e, sigma, b):
    """Solve (tridiag(e, d, e) - sigma I) y = b with partial pivoting; returns y."""
    r0, u1, u2, lmul, piv = tridiag_factor(d, e, sigma)
    return tridiag_apply(r0, u1, u2, lmul, piv, b)


#: the start vector of inverse iteration: 1 + START_RIPPLE sin(i START_STEP + j) at unknown i for state j
START_STEP = 0.7548776662466927
START_RIPPLE = 0.01


@njit
def start_vector(n, j):
    """The deterministic start vector of state ``j`` (:data:`START_STEP`, :data:`START_RIPPLE`) on ``n`` unknowns:
    nearly constant with a small ripple whose step is not a rational multiple of pi, so that in practice it
    overlaps every eigenvector and equals none.  The sines come from the angle-addition recurrence (two
    sin/cos calls per vector instead of one per node); its rounding grows slowly along the vector, which a
    start vector does not mind.  O(N)."""
    u = np.empty(n)
    c, s = math.cos(START_STEP), math.sin(START_STEP)
    re, im = math.cos(float(j)), math.sin(float(j))
    for i in range(n):
        u[i] = 1.0 + START_RIPPLE * im
        re, im = re * c - im * s, im * c + re * s
    return u


@njit
def _normalise(y, inv, out):
    """out = y / |y| (unit 2-norm), the norm summed over y * inv (inv: 1 / the largest |y|, so the squares
    neither overflow nor underflow); False if y has no finite positive norm.  One pass for the norm, one to
    scale."""
    nrm = 0.0
    for i in range(y.shape[0]):
        t = y[i] * inv
        nrm += t * t
    nrm = math.sqrt(nrm)
    if not (nrm > 0.0 and nrm < math.inf):
        return False
    scale = inv / nrm
    for i in range(y.shape[0]):
        out[i] = y[i] * scale
    return True


@njit
def inverse_iteration(d, e, shifts, first, steps, out):
    """Eigenvectors of tridiag(e, d, e) for the eigenvalues near ``shifts``, into the rows of ``out``.

    Each vector: ``steps`` solves with the factors of T - shift I from
    :func:`start_vector`, each followed by Gram-Schmidt against the vectors of
    the same cluster computed before it (rows ``first[j]`` .. j-1), and
    normalisation.  States closer than their eigenvector accuracy thus come
    out as an orthonormal basis of their cluster.  Sums run sequentially, so
    the result does not depend on any thread count.  Returns False if a
    solve broke down (a non-finite vector).  O(N (steps + cluster size)) per
    vector: per step one solve (which also finds the largest entry), one
    pass for the norm and one to scale.
    """
    n = d.shape[0]
    k = shifts.shape[0]
    y = np.empty(n)
    for j in range(k):
        u = start_vector(n, j)
        r0, u1, u2, lmul, piv = tridiag_factor(d, e, shifts[j])
        for _ in range(steps):
            big = tridiag_apply_into(r0, u1, u2, lmul, piv, u, y)
            if not (big > 0.0 and big < math.inf):
                return False
            inv = 1.0 / big  # scaled by the largest entry first: no overflow in the sums below
            if first[j] < j:
                for i in range(n):
                    y[i] *= inv
                for m in range(first[j], j):
                    dot = 0.0
                    for i in range(n):
                        dot += y[i] * out[m, i]
                    for i in range(n):
                        y[i] -= dot * out[m, i]
                inv = 1.0
            if not _normalise(y, inv, u):
                return False
        out[j] = u
    return True


@njit
def flux_quotient(psi, a, vw, w):
    """Rayleigh quotient of K psi = E W psi in flux form (psi at interior nodes; Dirichlet ends).

    ``a`` has one entry per cell (n + 1 cells for n interior nodes),
    ``vw`` is the node potential times weight (point terms included),
    ``w`` the node weights.
    """
    n = psi.shape[0]
    num = a[0] * psi[0] * psi[0] + a[n] * psi[n - 1] * psi[n - 1]
    den = 0.0
    for i in range(n - 1):
        dp = psi[i + 1] - psi[i]
        num += a[i + 1] * dp * dp
    for i in range(n):
        num += vw[i] * psi[i] * psi[i]
        den += w[i] * psi[i] * psi[i]
    return num / den


@njit
def flux_matrix(psis, a, vw):
    """The symmetric matrix of K in flux form between the rows of ``psis`` (k x n, psi at the unknowns).

    H_ij = sum a_c (psi_i,c+1 - psi_i,c)(psi_j,c+1 - psi_j,c) + sum Vw psi_i psi_j,
    with the ends' couplings a[0] and a[n] to Dirichlet nodes (a[0] = 0 for a
    Neumann end): the Rayleigh-Ritz matrix of a cluster's basis, accurate to
    a few ulps of the energy scale like :func:`flux_quotient`.
    """
    k, n = psis.shape
    out = np.zeros((k, k))
    for i in range(k):
        for j in range(i, k):
            acc = a[0] * psis[i, 0] * psis[j, 0] + a[n] * psis[i, n - 1] * psis[j, n - 1]
            for c in range(n - 1):
                acc += a[c + 1] * (psis[i, c + 1] - psis[i, c]) * (psis[j, c + 1] - psis[j, c])
            for c in range(n):
                acc += vw[c] * psis[i, c] * psis[j, c]
            out[i, j] = acc
            out[j, i] = acc
    return out


@njit
def _quotient_of_u(u, a, vw, w):
    """flux_quotient of psi = u / sqrt(w)."""
    n = u.shape[0]
    psi = np.empty(n)
    for i in range(n):
        psi[i] = u[i] / math.sqrt(w[i])
    return flux_quotient(psi, a, vw, w)


@njit
def _residual_norm(d, e, u, lam):
    n = u.shape[0]
    total = 0.0
    for i in range(n):
        r = (d[i] - lam) * u[i]
        if i > 0:
            r += e[i - 1] * u[i - 1]
        if i < n - 1:
            r += e[i] * u[i + 1]
        total += r * r
    return math.sqrt(total)


@njit
def _round_scales(d, vw, w, u, lam, ulps, eps):
    """(matrix, quotient) round-off scales of a unit vector u: eps sum |d| u^2 and ulps eps (|lam| + <|V|>)."""
    matrix = 0.0
    pot = 0.0
    for i in range(u.shape[0]):
        u2 = u[i] * u[i]
        matrix += abs(d[i]) * u2
        pot += abs(vw[i] / w[i]) * u2
    return eps * matrix, ulps * eps * (abs(lam) + pot)


@njit
def _sharpness(d, e, vw, w, u, lam, residual_factor, ulps, eps):
    """(sharp, matrix, quotient): the round-off scales of unit vector u (:func:`_round_scales`) and whether its
    residual |T u - lam u| is within ``residual_factor`` times their sum or 1e-12 of lam."""
    mat, quo = _round_scales(d, vw, w, u, lam, ulps, eps)
    return _residual_norm(d, e, u, lam) <= residual_factor * (mat + quo) + 1e-12 * abs(lam), mat, quo


@njit
def _rayleigh_step(d, e, a, vw, w, u, lam, floor):
    """One Rayleigh-quotient step from unit vector u with quotient lam (cubic convergence from an accurate
    vector): the new (vector, quotient), or (u, lam) where the solve breaks down or the step moves the
    quotient by more than 1e-6 of its scale (it went to another state)."""
    n = u.shape[0]
    r0, u1, u2, lmul, piv = tridiag_factor(d, e, lam)
    y = np.empty(n)
    big = tridiag_apply_into(r0, u1, u2, lmul, piv, u, y)
    if not (big > 0.0 and big < math.inf) or not _normalise(y, 1.0 / big, y):
        return u, lam
    lam_y = _quotient_of_u(y, a, vw, w)
    if abs(lam_y - lam) <= 1e-6 * max(abs(lam), floor):
        return y, lam_y
    return u, lam


@njit
def finish_vectors(d, e, a, vw, w, first, floor, steps, residual_factor, ulps, eps, vectors, energy, scales):
    """Energies and round-off scales of a sector's eigenvectors (rows of ``vectors``, from inverse iteration).

    Each energy is the flux-form Rayleigh quotient.  A state is kept as it
    is where it is sharp (:func:`_sharpness`: its residual |T u - lambda u|
    within ``residual_factor`` times its round-off scale, or 1e-12 of
    lambda): its quotient is then exact to far below that scale.  Otherwise
    an isolated state (``first``: its own cluster) first takes one
    Rayleigh-quotient step (:func:`_rayleigh_step`); a state still not sharp
    is redone from the start with twice the steps at its quotient, and
    polished by one Rayleigh-quotient step if isolated.  Fills ``vectors``
    (k x n), ``energy`` (k) and ``scales`` (k x 2: matrix and quotient
    round-off scales).  Returns True.
    """
    k = vectors.shape[0]
    n = d.shape[0]
    redo = np.empty((1, n))
    one = np.zeros(1, dtype=np.int64)
    for j in range(k):
        u = vectors[j].copy()
        lam = _quotient_of_u(u, a, vw, w)
        sharp, mat, quo = _sharpness(d, e, vw, w, u, lam, residual_factor, ulps, eps)
        alone = first[j] == j and (j + 1 >= k or first[j + 1] != j)
        if not sharp and alone:
            u, lam = _rayleigh_step(d, e, a, vw, w, u, lam, floor)
            sharp, mat, quo = _sharpness(d, e, vw, w, u, lam, residual_factor, ulps, eps)
        if not sharp:
            if inverse_iteration(d, e, np.array([lam]), one, 2 * steps, redo):
                u = redo[0].copy()
                lam = _quotient_of_u(u, a, vw, w)
                if alone:
                    u, lam = _rayleigh_step(d, e, a, vw, w, u, lam, floor)
            mat, quo = _round_scales(d, vw, w, u, lam, ulps, eps)
        vectors[j] = u
        energy[j] = lam
        scales[j, 0] = mat
        scales[j, 1] = quo
    return True


@njit
def cluster_starts(values, floor, rtol):
    """first[j]: the first member of state j's cluster (consecutive values closer than rtol of their scale)."""
    k = values.shape[0]
    first = np.arange(k)
    for j in range(1, k):
        scale = max(abs(values[j]), abs(values[j - 1]), floor)
        if values[j] - values[j - 1] < rtol * scale:
            first[j] = first[j - 1]
    return first


@njit
def prove_indices(d, e, values, first, lo, floor, matrix):
    """Sturm proof that the ascending ``values`` are eigenvalues number lo, lo + 1, ... (clusters as a whole).

    Each cluster's bounds are moved out by half the gap to its neighbours (at
    most), and by at least 1e-7 of the scale or 100 times the matrix
    round-off scale; the counts there must be exactly the cluster's indices.
    """
    return _proof_holds(sturm_counts_at(d, e, proof_points(values, first, floor, matrix)), first, lo)


@njit
def proof_points(values, first, floor, matrix):
    """The two shifts of every cluster's Sturm proof (:func:`prove_indices`), in order: below its first value and
    above its last by half the gap to the neighbouring value at most, and by at least 1e-7 of the scale (its
    value, or ``floor``) or 100 times the value's matrix round-off scale ``matrix``.  ``first``: the cluster
    starts (:func:`cluster_starts`).  Energies in the matrix's unit.  O(k)."""
    k = values.shape[0]
    out = np.empty(2 * k)
    m = 0
    j = 0
    while j < k:
        end = j
        while end + 1 < k and first[end + 1] == first[j]:
            end += 1
        gap_lo = values[j] - values[j - 1] if j > 0 else math.inf
        gap_hi = values[end + 1] - values[end] if end + 1 < k else math.inf
        delta_lo = min(0.5 * gap_lo, max(1e-7 * max(abs(values[j]), floor), 100.0 * matrix[j]))
        delta_hi = min(0.5 * gap_hi, max(1e-7 * max(abs(values[end]), floor), 100.0 * matrix[end]))
        out[m] = values[j] - delta_lo
        out[m + 1] = values[end] + delta_hi
        m += 2
        j = end + 1
    return out[:m].copy()


@njit
def predictions_separate(d, e, values, first, lo):
    """True if Sturm counts say that every cluster of the ascending predicted ``values`` (``first``:
    :func:`cluster_starts`) holds its own eigenvalues and they are the nearest ones: for each cluster the
    interval from half the smaller gap to a neighbouring cluster below its first value to as far above its
    last (a quarter of the gap on the outer side of the first and the last cluster) holds exactly the states
    lo + (its members' positions).  Inverse iteration from such shifts then finds the states lo, lo + 1, ...;
    where the check fails, the predictions are too far off to start from (or an unpredicted neighbour lies
    close outside: the caller then bisects, which is always right).  Always True for a single cluster
    (nothing to compare its distance with).  Shifts in the matrix's energy unit.  O(N) per three probe points
    (:func:`_sturm_counts3`), two per cluster.
    """
    k = values.shape[0]
    starts = np.empty(k + 1, np.int64)
    m = 0
    for j in range(k):
        if first[j] == j:
            starts[m] = j
            m += 1
    if m < 2:
        return True
    starts[m] = k
    points = np.empty(2 * m)
    want = np.empty(2 * m, np.int64)
    for c in range(m):
        a, b = starts[c], starts[c + 1] - 1  # the cluster's first and last member
        below = values[a] - values[a - 1] if c > 0 else math.inf
        above = values[b + 1] - values[b] if c < m - 1 else math.inf
        half = 0.5 * min(below, above)
        # beyond the first and last cluster the next eigenvalues are not predicted: a quarter of the inner gap
        points[2 * c], want[2 * c] = values[a] - (half if c > 0 else 0.5 * half), lo + a
        points[2 * c + 1], want[2 * c + 1] = values[b] + (half if c < m - 1 else 0.5 * half), lo + b + 1
    last = 2 * m - 1
    for i in range(0, 2 * m, 3):
        i1, i2 = min(i + 1, last), min(i + 2, last)
        c0, c1, c2 = _sturm_counts3(d, e, points[i], points[i1], points[i2])
        if c0 != want[i] or c1 != want[i1] or c2 != want[i2]:
            return False
    return True


@njit
def sector_pass(d, e, a, vw, w, shifts, lo, floor, prove, cluster_rtol, steps, residual_factor, ulps, eps,
                vectors, energy, scales):
    """A sector's eigenpairs from eigenvalue estimates, in one compiled pass, when no two of them form a cluster.

    Inverse iteration, the quotients, residual checks and sharpening
    (:func:`finish_vectors`), then sorting, the Sturm proof of the indices
    lo, lo + 1, ... (``prove``) and the sign convention (:func:`sign_convention`: the first lobe above
    1e-3 of the peak is positive).  Returns 0 on success, 1 if the estimates
    form a cluster (the caller takes the general path), 2 if inverse
    iteration broke down, 3 if the proof failed.
    """
    k = shifts.shape[0]
    first = cluster_starts(shifts, floor, cluster_rtol)
    for j in range(k):
        if first[j] != j:
            return 1
    if not inverse_iteration(d, e, shifts, first, steps, vectors):
        return 2
    finish_vectors(d, e, a, vw, w, first, floor, steps, residual_factor, ulps, eps, vectors, energy, scales)
    for j in range(1, k):  # insertion sort by energy (k is small), vectors and scales along
        i = j
        while i > 0 and energy[i - 1] > energy[i]:
            energy[i - 1], energy[i] = energy[i], energy[i - 1]
            for c in range(2):
                scales[i - 1, c], scales[i, c] = scales[i, c], scales[i - 1, c]
            tmp = vectors[i - 1].copy()
            vectors[i - 1] = vectors[i]
            vectors[i] = tmp
            i -= 1
    if prove:
        matrix = np.empty(k)
        for j in range(k):
            matrix[j] = scales[j, 0]
        if not prove_indices(d, e, energy, cluster_starts(energy, floor, cluster_rtol), lo, floor, matrix):
            return 3
    sign_convention(vectors)
    return 0


@njit
def sign_convention(vectors):
    """Flip each row of ``vectors`` (in place) so that its first entry above 1e-3 of the row's largest is
    positive: the first significant lobe of every state is positive, whatever sign its solve gave.  O(N) per
    row."""
    k, n = vectors.shape
    for j in range(k):
        peak = 0.0
        for i in range(n):
            if abs(vectors[j, i]) > peak:
                peak = abs(vectors[j, i])
        for i in range(n):
            if abs(vectors[j, i]) > 1e-3 * peak:
                if vectors[j, i] < 0.0:
                    for q in range(n):
                        vectors[j, q] = -vectors[j, q]
                break


@njit
def _nan_min(x, y):
    """min(x, y) that propagates NaN (numpy.minimum)."""
    if math.isnan(x) or math.isnan(y):
        return math.nan
    return min(x, y)


@njit
def roundoff_floor(matrix, quotient, energies, ulps):
    """Round-off floor of each of a sector's ascending energies from its (matrix, quotient) scales.

    quotient + 4 sqrt(matrix quotient / ulps) (the rounding of the quotient's differences on fine cells)
    + min(matrix^2 / gap, gap), gap the distance to the nearest neighbour (none for a single state): a
    vector mixed with its neighbour by matrix / gap moves the quotient by gap times the square of that.
    Energy unit of the operator.
    """
    k = energies.shape[0]
    out = np.empty(k)
    for j in range(k):
        out[j] = quotient[j] + 4.0 * math.sqrt(matrix[j] * quotient[j] / ulps)
    if k < 2:
        return out
    for j in range(k):
        gap = math.inf
        if j + 1 < k:
            gap = energies[j + 1] - energies[j]
        if j > 0:
            gap = _nan_min(gap, energies[j] - energies[j - 1])
        gap = gap if math.isnan(gap) or gap >= 1e-300 else 1e-300  # numpy.maximum(gap, 1e-300)
        cap = gap if math.isfinite(gap) else 0.0
        out[j] = out[j] + _nan_min(matrix[j] * matrix[j] / gap, cap)
    return out


@njit
def _sector_counts(d, e, energy, matrix, floor, cluster_rtol, has_lo, e_lo, e_hi, top):
    """Every Sturm count one sector of :func:`predicted_grid` needs, in one pass over the matrix for up to four
    shifts (:func:`sturm_counts_at`): at the window's ends (``e_lo`` where ``has_lo``; a shift that is not
    finite counts 0 below and every state below above), at each cluster's two proof points of
    :func:`prove_indices` (about the sector's sorted ``energy``, with its matrix round-off scales ``matrix``),
    and at ``top``.  Returns (lo, hi, proof counts (two per cluster, in order), the cluster starts, the count
    below ``top``); the same integers as counting at each shift on its own.  O(N) per four shifts."""
    n = d.shape[0]
    k = energy.shape[0]
    first = cluster_starts(energy, floor, cluster_rtol)
    shifts = np.empty(2 * k + 3)
    m = 0
    lo_at = -1
    if has_lo and math.isfinite(e_lo):
        lo_at = m
        shifts[m] = e_lo
        m += 1
    hi_at = -1
    if math.isfinite(e_hi):
        hi_at = m
        shifts[m] = e_hi
        m += 1
    proof_at = m
    points = proof_points(energy, first, floor, matrix)
    shifts[m:m + points.shape[0]] = points
    m += points.shape[0]
    top_at = m
    shifts[m] = top
    m += 1
    counts = sturm_counts_at(d, e, shifts[:m].copy())
    lo = counts[lo_at] if lo_at >= 0 else 0
    hi = counts[hi_at] if hi_at >= 0 else n
    return lo, hi, counts[proof_at:top_at].copy(), first, counts[top_at]


@njit
def _proof_holds(proof, first, lo):
    """True if the counts at each cluster's proof points (:func:`_sector_counts`) are exactly its indices
    lo + (its first member) below and lo + (its last member) + 1 above (:func:`prove_indices`)."""
    k = first.shape[0]
    j = 0
    c = 0
    while j < k:
        end = j
        while end + 1 < k and first[end + 1] == first[j]:
            end += 1
        if proof[2 * c] != lo + j or proof[2 * c + 1] != lo + end + 1:
            return False
        c += 1
        j = end + 1
    return True


@njit
def predicted_grid(d0, e0, a0, vw0, w0, d1, e1, a1, vw1, w1, two, guess_e, guess_s, has_lo, e_lo, e_hi,
                   max_states, floor, cluster_rtol, steps, residual_factor, ulps, eps):
    """The states of one grid level from the energies predicted by the coarser levels, in one compiled call.

    Sectors: one operator (d0 .. w0) or, with ``two``, the even and odd
    halves (d0 .. w0 even, d1 .. w1 odd).  The steps are those of
    :func:`fdsolver.boundstates.eigen.solve_grid` with a guess: Sturm counts
    in the window [e_lo, e_hi) give the number n of states and their global
    indices; the guess must hold exactly n finite energies of known sectors;
    each sector's pass (:func:`sector_pass`) with the Sturm proof of its
    indices (:func:`prove_indices`) and its round-off floors
    (:func:`roundoff_floor`); the merge (mirror halves by the oscillation
    theorem: the even sector's j-th state is state 2j of the whole grid); the
    check that no state was skipped below the highest; the cut at e_hi.
    Every count of a sector (the window's ends, the proof, the check) is taken
    in one pass over its matrix after its pass (:func:`_sector_counts`), so a
    guess that does not fit is refused after the vectors are made rather than
    before: the same outcome.  Returns (status, energy, sector, rounding, row,
    count_below, first_index, vectors0, vectors1): status 0 on success,
    anything else when the general path must decide (a cluster, a failed
    proof, a guess that does not fit, no state in the window); ``row`` is each
    state's row in its sector's vectors.  Energies in the operator's unit,
    relative to its shift.
    """
    n0 = d0.shape[0]
    n1 = d1.shape[0] if two else 0
    fail = (1, np.empty(0), np.empty(0, np.int64), np.empty(0), np.empty(0, np.int64), 0, 0,
            np.empty((0, n0)), np.empty((0, n1)))
    n = guess_e.shape[0]
    if n <= 0:
        return fail
    k0 = 0
    for j in range(n):
        if not math.isfinite(guess_e[j]) or guess_s[j] < 0 or guess_s[j] >= (2 if two else 1):
            return fail
        if guess_s[j] == 0:
            k0 += 1
    k1 = n - k0
    p0 = np.empty(k0)
    p1 = np.empty(k1)
    i0 = 0
    i1 = 0
    for j in range(n):
        if guess_s[j] == 0:
            p0[i0] = guess_e[j]
            i0 += 1
        else:
            p1[i1] = guess_e[j]
            i1 += 1
    p0 = np.sort(p0)
    p1 = np.sort(p1)
    v0 = np.empty((k0, n0))
    en0 = np.empty(k0)
    sc0 = np.empty((k0, 2))
    v1 = np.empty((k1, n1))
    en1 = np.empty(k1)
    sc1 = np.empty((k1, 2))
    if k0 and sector_pass(d0, e0, a0, vw0, w0, p0, 0, floor, False, cluster_rtol, steps, residual_factor, ulps, eps,
                          v0, en0, sc0) != 0:
        return fail
    if k1 and sector_pass(d1, e1, a1, vw1, w1, p1, 0, floor, False, cluster_rtol, steps, residual_factor, ulps, eps,
                          v1, en1, sc1) != 0:
        return fail
    # the check that nothing was skipped counts below the highest state of both sectors, plus a margin
    top = en0[0] if k0 else en1[0]
    for j in range(k0):
        top = max(top, en0[j])
    for j in range(k1):
        top = max(top, en1[j])
    delta = max(1e-7 * max(abs(top), floor), 0.0)
    m0 = sc0[:, 0].copy()
    m1 = sc1[:, 0].copy()
    lo0, hi0, proof0, first0, below0 = _sector_counts(d0, e0, en0, m0, floor, cluster_rtol, has_lo, e_lo, e_hi,
                                                      top + delta)
    lo1, hi1, below1 = 0, 0, 0
    proof1 = np.empty(0, np.int64)
    first1 = np.empty(0, np.int64)
    if two:
        lo1, hi1, proof1, first1, below1 = _sector_counts(d1, e1, en1, m1, floor, cluster_rtol, has_lo, e_lo, e_hi,
                                                          top + delta)
    if n != min((hi0 - lo0) + (hi1 - lo1), max_states):
        return fail
    first_index = lo0 + lo1
    count_below = hi0 + hi1
    if not (_proof_holds(proof0, first0, lo0) and _proof_holds(proof1, first1, lo1)):
        return fail
    r0 = roundoff_floor(m0, sc0[:, 1].copy(), en0, ulps)
    r1 = roundoff_floor(m1, sc1[:, 1].copy(), en1, ulps)
    # merge: by the mirror ranks 2 (lo0 + j) and 2 (lo1 + j) + 1, or a single sector's ascending energies
    energy = np.empty(n)
    sector = np.empty(n, np.int64)
    rounding = np.empty(n)
    row = np.empty(n, np.int64)
    a = 0
    b = 0
    for m in range(n):
        take_even = b >= k1 or (a < k0 and 2 * (lo0 + a) < 2 * (lo1 + b) + 1)
        if take_even:
            energy[m], sector[m], rounding[m], row[m] = en0[a], 0, r0[a], a
            a += 1
        else:
            energy[m], sector[m], rounding[m], row[m] = en1[b], 1, r1[b], b
            b += 1
    # nothing skipped: exactly first_index + n states of the whole grid at or below the highest
    if below0 + below1 != first_index + n:
        return fail
    kept = n
    if math.isfinite(e_hi):
        kept = 0
        for m in range(n):
            if energy[m] < e_hi:
                energy[kept], sector[kept], rounding[kept], row[kept] = energy[m], sector[m], rounding[m], row[m]
                kept += 1
    return (0, energy[:kept].copy(), sector[:kept].copy(), rounding[:kept].copy(), row[:kept].copy(),
            count_below - (n - kept), first_index, v0, v1)


@njit
def lipschitz_limit(x, h, growth):
    """Return min over j of (h_j + growth |x_i - x_j|) for every i (x increasing)."""
    out = h.copy()
    n = out.shape[0]
    for i in range(1, n):
        lim = out[i - 1] + growth * (x[i] - x[i - 1])
        if lim < out[i]:
            out[i] = lim
    for i in range(n - 2, -1, -1):
        lim = out[i + 1] + growth * (x[i + 1] - x[i])
        if lim < out[i]:
            out[i] = lim
    return out


@njit
def sample_offsets(growth):
    """The 400 geometric offsets of :func:`grid_samples` in units of a bound's local spacing:
    sum_{k<=j} 0.05 (1 + growth/2)^k, j = 0 .. 399.  They depend on ``growth`` only, so
    :mod:`fdsolver.numerics.grid` makes them once per value.  O(400)."""
    offs = np.empty(400)
    ratio = 1.0 + growth * 0.5
    acc = 0.0
    for k in range(400):
        acc += 0.05 * ratio**k
        offs[k] = acc
    return offs


@njit
def grid_samples(lo, hi, bounds, local, offs, background):
    """Sorted distinct sample positions for a base grid on [lo, hi] (length unit): the samples of
    :func:`grid_raw_samples`, ordered and each position once.  The bounds' samples are sorted and merged with the
    background's, which are in order already (all of them are sorted together where that might keep a different
    one of two equal numbers: a NaN or a -0.0 among them, or a background out of order): the same positions.
    O(S log S) for S samples, the background's in O(S).
    """
    out = grid_raw_samples(lo, hi, bounds, local, offs, background)
    count = out.shape[0]
    plain = True
    for j in range(count):
        v = out[j]
        if math.isnan(v) or (v == 0.0 and math.copysign(1.0, v) < 0.0) or (0 < j < background and not out[j - 1] <= v):
            plain = False
            break
    if plain:
        near = out[background:].copy()
        near.sort()
        i, k = background - 1, near.shape[0] - 1
        for j in range(count - 1, -1, -1):  # merged from the top: the background's unread entries stay below j
            if k < 0 or (i >= 0 and out[i] > near[k]):
                out[j] = out[i]
                i -= 1
            else:
                out[j] = near[k]
                k -= 1
    else:
        out.sort()
    n = 1
    for j in range(1, count):
        if out[j] != out[n - 1]:
            out[n] = out[j]
            n += 1
    return out[:n].copy()


@njit
def grid_raw_samples(lo, hi, bounds, local, offs, background):
    """The sample positions of a base grid on [lo, hi] (length unit), unsorted, repeats kept: ``background``
    uniform samples first, then every bound followed by its geometric offsets local_i * ``offs``
    (:func:`sample_offsets` of the grid's growth), above and below it in turn, each reaching only as far as the
    farther neighbouring bound (at most the box width); everything clipped to [lo, hi].  O(S) for S samples.
    """
    nb = bounds.shape[0]
    width = hi - lo
    count = background + nb
    reach = np.empty(nb)
    # with ascending offsets and a spacing >= 0 the offsets inside a bound's reach come first: the loops over
    # them stop at the first one outside (``wide``, the count of them); otherwise every offset is tried
    ordered = True
    for k in range(1, 400):
        if not offs[k - 1] <= offs[k]:
            ordered = False
    wide = np.empty(nb, np.int64)
    for i in range(nb):
        left = bounds[i] - bounds[i - 1] if i > 0 else 0.0
        right = bounds[i + 1] - bounds[i] if i < nb - 1 else 0.0
        reach[i] = min(max(max(left, right), 0.0), width)
        wide[i] = 400
        for k in range(400):
            if local[i] * offs[k] < reach[i]:
                count += 2
            elif ordered and local[i] >= 0.0:
                wide[i] = k
                break
    out = np.empty(count)
    step = (hi - lo) / (background - 1)
    for j in range(background):
        out[j] = lo + j * step
    out[background - 1] = hi
    m = background
    for i in range(nb):
        out[m] = bounds[i]
        m += 1
        for k in range(wide[i]):
            s = local[i] * offs[k]
            if s < reach[i]:
                out[m] = bounds[i] + s
                out[m + 1] = bounds[i] - s
                m += 2
    for j in range(count):
        out[j] = min(max(out[j], lo), hi)
    return out


@njit
def cone_tables(p, c, slope):
    """Tables of the cone envelope x -> min_j (c_j + slope |x - p_j|) (length unit; inf without cones) for
    :func:`target_spacing`: the apexes ``p`` sorted (a stable sort), the prefix minima of c - slope p (inf
    first) and the suffix minima of c + slope p (inf last), each minimum taken in order as numpy's
    ``minimum.accumulate`` takes it (NaN kept).  Among apexes at the same position the order of their cones
    differs from an unstable sort's, but :func:`target_spacing` reads the tables only at the ends of such a
    group, where the minima cover all of it.  O(K log K)."""
    k = p.shape[0]
    order = np.argsort(p, kind="mergesort")
    apex = np.empty(k)
    left = np.empty(k + 1)
    right = np.empty(k + 1)
    left[0] = np.inf
    for i in range(k):
        apex[i] = p[order[i]]
        t = c[order[i]] - slope * apex[i]
        left[i + 1] = t if i == 0 else _nan_min(left[i], t)
    right[k] = np.inf
    for i in range(k - 1, -1, -1):
        t = c[order[i]] + slope * apex[i]
        right[i] = t if i == k - 1 else _nan_min(right[i + 1], t)
    return apex, left, right


@njit
def target_spacing(x, v, m, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction, apex, left, right, slope):
    """The raw target spacing h(x) of a base grid from V and m sampled at ``x`` (length unit), one pass.

    h = wave_fraction / sqrt(r2), r2 = m max(|V - e_lo|, |V - e_hi|) / c (|V - e_lo| taken as 0 farther than
    ``reach`` outside [lo_s, hi_s]; a non-finite r2 counts as inf; r2 at most ``r2_cap``), then at most the cone
    envelope min_j (c_j + slope |x - p_j|) over the sorted apexes ``apex`` with prefix minima ``left`` of
    c_j - slope p_j and suffix minima ``right`` of c_j + slope p_j (:func:`cone_tables`).
    The same floating-point operations as the numpy form, in the same order (:func:`_spacing_at`).
    """
    n = x.shape[0]
    out = np.empty(n)
    n_apex = apex.shape[0]
    for i in range(n):
        xi = x[i]
        h = _spacing_at(xi, v[i], m[i], e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction)
        if n_apex:
            k = search_sorted(apex, xi, True)
            j = search_sorted(apex, xi, False)
            h = min(h, left[k] + slope * xi, right[j] - slope * xi)
        out[i] = h
    return out


@njit
def _spacing_at(xi, vi, mi, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction):
    """:func:`target_spacing` at one position ``xi`` (V ``vi``, mass ``mi``) before the cones (length unit)."""
    deep = abs(vi - e_lo)
    if max(lo_s - xi, xi - hi_s) > reach:
        deep = 0.0
    high = abs(vi - e_hi)
    if math.isnan(deep) or math.isnan(high):
        r2 = math.inf
    else:
        r2 = mi * max(deep, high) / c
        if not (abs(r2) < math.inf):
            r2 = math.inf
    return wave_fraction / math.sqrt(min(r2, r2_cap) + 1e-300)


@njit
def coarse_midpoints(x, h):
    """Midpoints of the sample gaps wider than a quarter of the smaller spacing at their ends (empty if none)."""
    n = x.shape[0]
    count = 0
    for i in range(n - 1):
        if x[i + 1] - x[i] > 0.25 * min(h[i + 1], h[i]):
            count += 1
    out = np.empty(count)
    m = 0
    for i in range(n - 1):
        if x[i + 1] - x[i] > 0.25 * min(h[i + 1], h[i]):
            out[m] = 0.5 * (x[i + 1] + x[i])
            m += 1
    return out


@njit
def merge_samples(x, h, xm, hm):
    """The sorted union of the samples ``x`` and ``xm`` (both ascending), each position once, with their values
    ``h`` and ``hm`` alongside: ``numpy.unique(numpy.concatenate([x, xm]))`` for a pointwise function sampled at
    both, without sampling it again at ``x``.  O(N + M)."""
    n = x.shape[0]
    k = xm.shape[0]
    xo = np.empty(n + k)
    ho = np.empty(n + k)
    i = 0
    j = 0
    m = 0
    while i < n or j < k:
        if j >= k or (i < n and x[i] <= xm[j]):
            xv, hv = x[i], h[i]
            i += 1
        else:
            xv, hv = xm[j], hm[j]
            j += 1
        if m == 0 or xv != xo[m - 1]:
            xo[m] = xv
            ho[m] = hv
            m += 1
    return xo[:m].copy(), ho[:m].copy()


@njit
def sample_pass(x, raw, xm, raw_m, cap, growth):
    """One pass of a base grid's sampling: the new samples ``xm`` (with the spacing function's values ``raw_m``)
    merged into ``x`` (:func:`merge_samples`), then the Lipschitz-limited spacing h there
    (:func:`lipschitz_limit` of min(raw, cap)) and the midpoints of the gaps it finds too wide
    (:func:`coarse_midpoints`).  Returns (x, raw, h, midpoints).  O(N)."""
    if xm.shape[0]:
        x, raw = merge_samples(x, raw, xm, raw_m)
    capped = np.empty(raw.shape[0])
    for i in range(raw.shape[0]):
        r = raw[i]
        if r > cap:  # numpy.minimum(raw, cap): a NaN stays NaN
            r = cap
        capped[i] = r
    h = lipschitz_limit(x, capped, growth)
    return x, raw, h, coarse_midpoints(x, h)


@njit
def inner_bounds(points, lo, hi, tiny):
    """The distinct ``points`` strictly inside (lo + tiny, hi - tiny), ascending, with points closer than
    ``tiny`` to the previous kept one dropped (closer than round-off they are one node).  O(N log N)."""
    srt = np.sort(points)
    out = np.empty(srt.shape[0])
    m = 0
    for p in srt:
        if p > lo + tiny and p < hi - tiny and (m == 0 or p - out[m - 1] > tiny):
            out[m] = p
            m += 1
    return out[:m].copy()


@njit
def segment_nodes(bounds, x, h, min_cells):
    """Nodes on [bounds[0], bounds[-1]] with every bound a node and local spacing close to h(x) (length unit).

    xi(x) = int dx / h counts the cells wanted up to x (trapezoid over the
    samples ``x``, which include every bound); segment k gets
    max(min_cells, ceil(xi(b_k+1) - xi(b_k))) cells placed at equal steps of
    xi, mapped back by linear interpolation.  O(samples + nodes).
    """
    ns = x.shape[0]
    xi = np.empty(ns)
    xi[0] = 0.0
    acc = 0.0
    for i in range(1, ns):
        acc += 0.5 * (1.0 / h[i] + 1.0 / h[i - 1]) * (x[i] - x[i - 1])
        xi[i] = acc
    xb = interp_sorted(bounds, x, xi)
    nb = bounds.shape[0]
    cells = np.empty(nb - 1, dtype=np.int64)
    total = 0
    for k in range(nb - 1):
        c = math.ceil(xb[k + 1] - xb[k] - 1e-9)
        cells[k] = max(min_cells, c)
        total += cells[k]
    targets = np.empty(total)
    m = 0
    for k in range(nb - 1):
        for j in range(cells[k]):
            targets[m] = xb[k] + (xb[k + 1] - xb[k]) * (j / cells[k])
            m += 1
    nodes = np.empty(total + 1)
    nodes[:total] = interp_sorted(targets, xi, x)
    m = 0
    for k in range(nb - 1):
        nodes[m] = bounds[k]  # the bounds themselves, exactly
        m += cells[k]
    nodes[total] = bounds[nb - 1]
    return nodes


@njit
def piece_values(x, feats, v_piece, m_piece, v_feat, m_feat):
    """V and m at ``x`` of a potential constant between its sorted features ``feats`` (the tables of
    :attr:`fdsolver.model.potential.Potential.piece_table`): ``v_piece[k]`` on the open piece k (0 left of the
    first feature, feats.size right of the last), ``v_feat[k]`` at feats[k] itself; m likewise.  The values are
    copied, not computed.  O(N log K)."""
    n = x.shape[0]
    nf = feats.shape[0]
    v = np.empty(n)
    m = np.empty(n)
    for i in range(n):
        k = search_sorted(feats, x[i], False)  # feats[k - 1] < x <= feats[k]
        if k < nf and feats[k] == x[i]:
            v[i] = v_feat[k]
            m[i] = m_feat[k]
        else:
            v[i] = v_piece[k]
            m[i] = m_piece[k]
    return v, m


@njit
def _ascending(x):
    """True if ``x`` never decreases and holds no NaN (an empty ``x`` too): then a pointer walked along it finds
    the same indices into a sorted table as a search at each entry."""
    n = x.shape[0]
    if n and math.isnan(x[0]):
        return False
    for i in range(1, n):
        if not x[i - 1] <= x[i]:
            return False
    return True


@njit
def piece_values_apart(x, feats, v_piece, m_piece, v_feat, m_feat, tol):
    """(done, V, m): :func:`piece_values` at ``x`` where no position lies within ``tol`` (length unit) of a feature
    without being on it; else done False and nothing read (a position that close might round to the other side
    of the feature in the potential's own evaluation).  For ascending ``x`` (the even samples of a layout) the
    feature index is walked along with x instead of searched for: the same index, so the same answer.  O(N + K)
    for ascending x, O(N log K) otherwise."""
    nf = feats.shape[0]
    n = x.shape[0]
    ascending = _ascending(x)
    if ascending:
        v = np.empty(n)
        m = np.empty(n)
        k = 0  # features below x: search_sorted(feats, x, False)
        for i in range(n):
            xv = x[i]
            while k < nf and feats[k] < xv:
                k += 1
            if (k < nf and xv != feats[k] and feats[k] - xv <= tol) or (k > 0 and xv - feats[k - 1] <= tol):
                return False, np.empty(0), np.empty(0)
            if k < nf and feats[k] == xv:
                v[i] = v_feat[k]
                m[i] = m_feat[k]
            else:
                v[i] = v_piece[k]
                m[i] = m_piece[k]
        return True, v, m
    for xv in x:
        k = search_sorted(feats, xv, False)  # feats[k - 1] < x <= feats[k]
        if (k < nf and xv != feats[k] and feats[k] - xv <= tol) or (k > 0 and xv - feats[k - 1] <= tol):
            return False, np.empty(0), np.empty(0)
    v, m = piece_values(x, feats, v_piece, m_piece, v_feat, m_feat)
    return True, v, m


@njit
def cell_piece_values(nodes, feats, rtol, table_feats, v_piece, m_piece, v_feat, m_feat):
    """(ok, V, m) on every cell of ``nodes`` of a potential constant between its features, in one call: ok only
    if every feature ``feats`` inside the grid lies within ``rtol`` of its cell's width from one of the cell's
    nodes (the test of :func:`fdsolver.numerics.operator.cell_constants`), and then V and m read at every
    cell's midpoint from the piece tables (:func:`piece_values`).  The same comparisons and midpoints as the
    numpy form.  O(N + K log N)."""
    n = nodes.shape[0]
    for f in feats:
        i = search_sorted(nodes, f, True) - 1  # the cell whose left node is at or below the feature
        if i >= 0 and i < n - 1 and min(f - nodes[i], nodes[i + 1] - f) > rtol * (nodes[i + 1] - nodes[i]):
            return False, np.empty(0), np.empty(0)
    mid = np.empty(n - 1)
    for j in range(n - 1):
        mid[j] = 0.5 * (nodes[j] + nodes[j + 1])
    v, m = piece_values(mid, table_feats, v_piece, m_piece, v_feat, m_feat)
    return True, v, m


@njit
def _piece_spacing(x, feats, v_piece, m_piece, v_feat, m_feat, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap,
                   wave_fraction, apex, left, right, slope):
    """:func:`target_spacing` at ``x`` with V and m from the piece tables (:func:`piece_values`).  For ascending
    ``x`` (every sample set of :func:`piece_grid`) the indices into the tables and the cones are walked along
    with x instead of searched for at each position: the same indices (the counts of entries below x, or at or
    below it), so the same numbers.  O(N + K) for ascending x, O(N log K) otherwise."""
    n = x.shape[0]
    ascending = _ascending(x)
    if not ascending:
        v, m = piece_values(x, feats, v_piece, m_piece, v_feat, m_feat)
        return target_spacing(x, v, m, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction, apex, left, right,
                              slope)
    out = np.empty(n)
    nf = feats.shape[0]
    n_apex = apex.shape[0]
    k = 0  # features below x: search_sorted(feats, x, False)
    below = 0  # apexes below x: search_sorted(apex, x, False)
    upto = 0  # apexes at or below x: search_sorted(apex, x, True)
    for i in range(n):
        xi = x[i]
        while k < nf and feats[k] < xi:
            k += 1
        if k < nf and feats[k] == xi:
            h = _spacing_at(xi, v_feat[k], m_feat[k], e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction)
        else:
            h = _spacing_at(xi, v_piece[k], m_piece[k], e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction)
        if n_apex:
            while below < n_apex and apex[below] < xi:
                below += 1
            while upto < n_apex and apex[upto] <= xi:
                upto += 1
            h = min(h, left[upto] + slope * xi, right[below] - slope * xi)
        out[i] = h
    return out


@njit
def piece_grid(lo, hi, points, tiny, growth, offs, background, min_cells, max_nodes, feats, v_piece, m_piece, v_feat,
               m_feat, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction, apex, left, right, slope):
    """A base grid on [lo, hi] (length unit) of a potential constant between its features, in one call.

    The steps of :func:`fdsolver.numerics.grid.base_grid` (:func:`inner_bounds`, :func:`grid_samples`, up to
    nine :func:`sample_pass` and :func:`segment_nodes`), with the spacing function :func:`target_spacing`
    sampled from the piece tables (:func:`piece_values`) instead of a Python callback.  Returns (nodes, the
    estimated node count); with ``max_nodes`` >= 0 and the estimate above it, the nodes are empty (none
    allocated).  The estimate is summed in order, where the numpy form sums pairwise (last bits).
    O(samples log K + nodes).
    """
    bps = inner_bounds(points, lo, hi, tiny)
    bounds = np.empty(bps.shape[0] + 2)
    bounds[0] = lo
    bounds[1:-1] = bps
    bounds[-1] = hi
    local = _piece_spacing(bounds, feats, v_piece, m_piece, v_feat, m_feat, e_lo, e_hi, c, reach, lo_s, hi_s,
                           r2_cap, wave_fraction, apex, left, right, slope)
    xs = grid_samples(lo, hi, bounds, local, offs, background)
    cap = (hi - lo) / 4.0
    none = np.empty(0)
    raw0 = _piece_spacing(xs, feats, v_piece, m_piece, v_feat, m_feat, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap,
                          wave_fraction, apex, left, right, slope)
    xs, raw, hs, mids = sample_pass(xs, raw0, none, none, cap, growth)
    for _ in range(8):
        if mids.shape[0] == 0:
            break
        raw_m = _piece_spacing(mids, feats, v_piece, m_piece, v_feat, m_feat, e_lo, e_hi, c, reach, lo_s, hi_s,
                               r2_cap, wave_fraction, apex, left, right, slope)
        xs, raw, hs, mids = sample_pass(xs, raw, mids, raw_m, cap, growth)
    total = 0.0
    for i in range(1, xs.shape[0]):
        total += 0.5 * (1.0 / hs[i] + 1.0 / hs[i - 1]) * (xs[i] - xs[i - 1])
    total += bounds.shape[0] * min_cells
    if max_nodes >= 0 and total > max_nodes:
        return np.empty(0), total
    return segment_nodes(bounds, xs, hs, min_cells), total


@njit
def mirrored_piece_grid(center, hi, points, eps, growth, offs, background, min_cells, max_nodes, feats, v_piece,
                        m_piece, v_feat, m_feat, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction, apex, left,
                        right, slope):
    """A base grid mirror-symmetric about ``center`` on [2 center - hi, hi] (length unit), in one call: the
    :func:`piece_grid` of the right half [center, hi] with the ``points`` right of the centre (round-off
    ``tiny`` = 64 ``eps`` times the largest of |center|, |hi| and the half's width), and its nodes mirrored
    (2 center - x) for the left half, as :func:`fdsolver.numerics.grid.base_grid` builds it.  ``max_nodes``
    is the right half's budget.  Returns (nodes, the right half's estimated node count); the nodes are empty
    where that estimate is over ``max_nodes`` >= 0.  O(samples log K + nodes).
    """
    count = 0
    for p in points:
        if p > center:
            count += 1
    inside = np.empty(count)
    count = 0
    for p in points:
        if p > center:
            inside[count] = p
            count += 1
    tiny = 64.0 * eps * max(abs(center), abs(hi), hi - center)
    half, total = piece_grid(center, hi, inside, tiny, growth, offs, background, min_cells, max_nodes, feats, v_piece,
                             m_piece, v_feat, m_feat, e_lo, e_hi, c, reach, lo_s, hi_s, r2_cap, wave_fraction, apex,
                             left, right, slope)
    n = half.shape[0]
    if n == 0:
        return half, total
    nodes = np.empty(2 * n - 1)
    for i in range(n - 1):
        nodes[i] = 2.0 * center - half[n - 1 - i]
    nodes[n - 1:] = half
    return nodes, total


@njit
def flux_operator(nodes, mass, il, ir, c, shift, neumann):
    """Arrays of the flux-form operator on ``nodes`` (see :mod:`fdsolver.numerics.operator`), one pass.

    ``mass`` per cell (m_e), ``il``/``ir`` the integrals of V - shift over the
    left/right half of every cell (energy x length), ``c`` = hbar^2/(2 m_e) in
    case units.  Returns (a, w, vint, v, d, e): couplings C/(m h) (a[0] = 0 for
    a Neumann left end), node weights, dual-cell integrals, dual-cell averages
    of V (unshifted), and the diagonal and off-diagonal of
    T = W^-1/2 K W^-1/2, all without point terms.  ``ok`` is False when the
    nodes do not increase strictly (the arrays are then meaningless).
    """
    ncell = nodes.shape[0] - 1
    off = 1 if neumann else 0  # index of cell j's coupling in a; of node i's unknown: i - 1 + off
    n = ncell - 1 + off  # unknowns: nodes 0 .. ncell-1 (Neumann left end), or 1 .. ncell-1
    h = np.empty(ncell)
    ok = True
    for j in range(ncell):
        h[j] = nodes[j + 1] - nodes[j]
        if not h[j] > 0.0:
            ok = False
            h[j] = 1.0
    a = np.empty(n + 1)
    a[0] = 0.0
    for j in range(ncell):
        a[j + off] = c / (mass[j] * h[j])
    w = np.empty(n)
    vint = np.empty(n)
    if neumann:
        w[0] = 0.5 * h[0]
        vint[0] = il[0]
    for i in range(1, ncell):
        w[i - 1 + off] = 0.5 * (h[i - 1] + h[i])
        vint[i - 1 + off] = ir[i - 1] + il[i]
    v = np.empty(n)
    for i in range(n):
        v[i] = vint[i] / w[i] + shift
    d, e = symmetric_form(a, w, vint)
    return a, w, vint, v, d, e, ok


@njit
def symmetric_form(a, w, vw):
    """Diagonal ``d`` and off-diagonal ``e`` of T = W^-1/2 K W^-1/2 from the couplings ``a`` (n + 1), the node
    weights ``w`` and the dual-cell integrals ``vw`` (n each): d_i = (a_i + a_{i+1} + vw_i) / w_i,
    e_i = -a_{i+1} / sqrt(w_i w_{i+1}).  Energy unit of the operator.  O(N)."""
    n = w.shape[0]
    d = np.empty(n)
    for i in range(n):
        d[i] = (a[i] + a[i + 1] + vw[i]) / w[i]
    e = np.empty(max(n - 1, 0))
    for i in range(n - 1):
        e[i] = -a[i + 1] / math.sqrt(w[i] * w[i + 1])
    return d, e


@njit
def even_half(a, w, vw, d, e, c):
    """The even sector's arrays from a mirror-symmetric operator's (couplings ``a``, weights ``w``, dual-cell
    integrals ``vw`` and its :func:`symmetric_form` ``d``, ``e``; :func:`fdsolver.numerics.operator.mirror_halves`):
    the unknowns c, c + 1, ... with unknown c the mirror centre as a Neumann end (half its weight and dual-cell
    integral, no coupling to its left).  Returns (a, w, vw, d, e) with the floating-point operations of the
    numpy form, in the same order: past the centre the half's d and e are the whole operator's own entries (the
    same formula of the same numbers), so only the centre's are worked out.  O(N), one division and one square
    root in all.
    """
    n = w.shape[0] - c
    a_even = np.empty(n + 1)
    a_even[0] = 0.0
    a_even[1:] = a[c + 1:]
    w_even = np.empty(n)
    w_even[0] = 0.5 * w[c]
    w_even[1:] = w[c + 1:]
    vw_even = np.empty(n)
    vw_even[0] = 0.5 * vw[c]
    vw_even[1:] = vw[c + 1:]
    d_even = np.empty(n)
    d_even[0] = (a_even[0] + a_even[1] + vw_even[0]) / w_even[0]
    d_even[1:] = d[c + 1:]
    e_even = np.empty(max(n - 1, 0))
    if n > 1:
        e_even[0] = -a_even[1] / math.sqrt(w_even[0] * w_even[1])
        e_even[1:] = e[c + 1:]
    return a_even, w_even, vw_even, d_even, e_even


@njit
def refine_nodes(nodes, k):
    """Every cell of ``nodes`` split into ``k`` equal cells: x_i + h_i (j / k), j = 0 .. k-1, then the last node.

    The same floating-point operations as the numpy form (nested grids of one
    piecewise-linear map, :func:`fdsolver.numerics.grid.refine`).  O(N k).
    """
    n = nodes.shape[0] - 1
    out = np.empty(n * k + 1)
    for i in range(n):
        h = nodes[i + 1] - nodes[i]
        for j in range(k):
            out[i * k + j] = nodes[i] + h * (j / k)
    out[n * k] = nodes[n]
    return out


@njit
def enclosure_top(v):
    """(enclosed, top) of V sampled in order of x (energy unit): with L_i and R_i the highest V at or left and at
    or right of sample i, sample i is enclosed where min(L_i, R_i) - V_i exceeds 1e-9 of the largest |V| (of 1 if
    all are 0), and top is the highest min(L_i, R_i) over the enclosed samples; enclosed False where none is or
    some V is not finite.  The comparisons of the numpy form of
    :func:`fdsolver.continuum.confinement.confined_top`, in one pass each way.  O(N)."""
    n = v.shape[0]
    scale = 0.0
    for i in range(n):
        if not math.isfinite(v[i]):
            return False, 0.0
        scale = max(scale, abs(v[i]))
    if scale == 0.0:
        scale = 1.0
    right = np.empty(n)
    acc = -math.inf
    for i in range(n - 1, -1, -1):
        acc = max(acc, v[i])
        right[i] = acc
    left = -math.inf
    found = False
    top = -math.inf
    for i in range(n):
        left = max(left, v[i])
        e = min(left, right[i])
        if e - v[i] > 1e-9 * scale and (not found or e > top):
            top = e
            found = True
    return found, top


@njit
def walk_pair(lo, hi, near, far, ladder):
    """The samples of both decay walks out of [lo, hi] (length unit) in one array: the offsets t = 0 and
    ``near`` * ``ladder`` (the ladder's entries in order while they stay below ``far``) subtracted from ``lo``,
    then added to ``hi``; the same floating-point operations as the numpy form.  O(samples)."""
    count = 0
    while count < ladder.shape[0] and near * ladder[count] < far:
        count += 1
    k = count + 1
    out = np.empty(2 * k)
    for i in range(k):
        t = 0.0 if i == 0 else near * ladder[i - 1]
        out[i] = lo - t
        out[k + i] = hi + t
    return out


@njit
def decay_reach(x, v, m, c, e_top, budget):
    """Index of the first sample of a walk ``x`` (outward, V = ``v``, mass ``m`` in m_e) at which the WKB decay
    integral of energy ``e_top``, int kappa dx with kappa = sqrt(m (V - e_top) / c), counted from the last
    classically allowed sample (V <= e_top; else the first), reaches ``budget``; -1 if it never does.

    Trapezoid rule over the walk's samples, summed in order (the arithmetic of the numpy form in
    :func:`fdsolver.boundstates.box.decay_extent`).  A non-finite V counts as 1e300.  O(N).
    """
    n = x.shape[0]
    kappa = np.empty(n)
    i0 = 0
    for i in range(n):
        vi = v[i] if math.isfinite(v[i]) else 1e300
        if vi <= e_top:
            i0 = i
        y = m[i] * (vi - e_top) / c
        kappa[i] = math.sqrt(y) if y > 0.0 else (math.nan if math.isnan(y) else 0.0)
    if 0.0 >= budget:
        return i0
    total = 0.0
    for i in range(i0 + 1, n):
        total += 0.5 * (kappa[i] + kappa[i - 1]) * abs(x[i] - x[i - 1])
        if total >= budget:
            return i
    return -1


@njit
def constant_operator(nodes, v_cell, m_cell, reps, mirror, center, c, shift, pos, alpha):
    """The operator arrays of a grid whose cells take the V and m of the base cell they lie in (``reps``
    sub-cells per base cell, ``v_cell`` in the energy unit, ``m_cell`` in m_e); ``c`` = hbar^2/(2 m_e) in case
    units; point terms of strength ``alpha`` at ``pos`` (length unit) on their nearest unknown.  With
    ``mirror``, on the cells right of ``center`` and the one left of it (the halves are cut from that).
    Exactly the arrays of :func:`fdsolver.numerics.operator.assemble` with ``cells``: the same floating-point
    operations in the same order.  Returns (ok, nodes assembled on, cell masses, a, w, vw, v, d, e); not ok
    where the nodes do not increase, a dual-cell integral is not finite or a point term is off its node.  O(N).
    """
    first = 0
    if mirror:
        first = search_sorted(nodes, center, False) - 1
    sub = nodes[first:]
    ncell = sub.shape[0] - 1
    mass = np.empty(ncell)
    half = np.empty(ncell)
    for j in range(ncell):
        src = (first + j) // reps
        mass[j] = m_cell[src]
        vj = v_cell[src] - shift if shift != 0.0 else v_cell[src]
        half[j] = 0.5 * (sub[j + 1] - sub[j]) * vj
    a, w, vw, v, d, e, ok = flux_operator(sub, mass, half, half, c, shift, False)
    n = w.shape[0]
    if not ok or n < 2:
        return False, sub, mass, a, w, vw, v, d, e
    for i in range(n):
        if not math.isfinite(vw[i]):
            return False, sub, mass, a, w, vw, v, d, e
    if pos.shape[0]:
        x = sub[1:-1]
        lo_x = x[0] - 1e-12 * abs(x[0])
        hi_x = x[n - 1] + 1e-12 * abs(x[n - 1])
        span = sub[ncell] - sub[0]
        for p in range(pos.shape[0]):
            q = pos[p]
            if not (q >= lo_x and q <= hi_x):
                continue
            i = min(max(search_sorted(x, q, False), 0), n - 1)
            if i > 0 and abs(x[i - 1] - q) < abs(x[i] - q):
                i -= 1
            if abs(x[i] - q) > 1e-9 * max(1.0, abs(q)) + 1e-12 * span:
                return False, sub, mass, a, w, vw, v, d, e
            vw[i] -= alpha[p]
            d[i] = (a[i] + a[i + 1] + vw[i]) / w[i]
    return True, sub, mass, a, w, vw, v, d, e


@njit
def constant_sectors(nodes, v_cell, m_cell, reps, mirror, center, c, shift, pos, alpha):
    """:func:`constant_operator`, and with ``mirror`` its even and odd halves
    (:func:`fdsolver.numerics.operator.mirror_halves`).  Returns (ok, d, e, a, vw, w of the whole grid or the
    even half, the same of the odd half (the whole grid's again without ``mirror``), the operator of
    :func:`constant_operator` (nodes, mass, a, w, vw, v, d, e))."""
    ok, sub, mass, a, w, vw, v, d, e = constant_operator(nodes, v_cell, m_cell, reps, mirror, center, c, shift,
                                                         pos, alpha)
    whole = (sub, mass, a, w, vw, v, d, e)
    if ok and mirror:
        a0, w0, vw0, d0, e0 = even_half(a, w, vw, d, e, 0)
        return ok, d0, e0, a0, vw0, w0, d[1:], e[1:], a[1:], vw[1:], w[1:], whole
    return ok, d, e, a, vw, w, d, e, a, vw, w, whole


@njit
def constant_level(base, v_cell, m_cell, level, mirror, center, c, shift, pos, alpha, guess_e, guess_s, has_lo,
                   e_lo, e_hi, max_states, floor, cluster_rtol, steps, residual_factor, ulps, eps):
    """One nested level of a potential constant on every base cell, assembled and solved in one compiled call.

    The grid is ``base`` with every cell split into 2^``level`` (:func:`refine_nodes`); its operators are
    those of :func:`constant_sectors`, and the states those of :func:`predicted_grid` from the guess
    (``guess_e``, ``guess_s``).  Returns (:func:`predicted_grid`'s tuple, (the grid's nodes, the even half's
    or whole operator's a, w, vw, d, e, and :func:`constant_operator`'s arrays)); status 1 (the general path
    decides, and says what is wrong) also where :func:`constant_sectors` is not ok.  O(N) per state.
    """
    nodes = refine_nodes(base, 2**level) if level > 0 else base
    ok, d0, e0, a0, vw0, w0, d1, e1, a1, vw1, w1, whole = constant_sectors(nodes, v_cell, m_cell, 2**level,
                                                                            mirror, center, c, shift, pos, alpha)
    ops = (nodes, a0, w0, vw0, d0, e0, whole)
    if not ok:
        n = w0.shape[0]
        return (1, np.empty(0), np.empty(0, np.int64), np.empty(0), np.empty(0, np.int64), 0, 0,
                np.empty((0, n)), np.empty((0, n))), ops
    return predicted_grid(d0, e0, a0, vw0, w0, d1, e1, a1, vw1, w1, mirror, guess_e, guess_s, has_lo, e_lo, e_hi,
                          max_states, floor, cluster_rtol, steps, residual_factor, ulps, eps), ops


@njit
def romberg_newest(rows):
    """(value, error) of the newest row of the Romberg table of ``rows`` (levels x values, the coarsest level
    first): :meth:`fdsolver.numerics.richardson.Romberg.add` of each row in turn, then its ``value()`` and
    ``error()``, with the same floating-point operations in the same order (columns up to h^4 removed; the
    error inf with a single level).  O(levels x values)."""
    levels, n = rows.shape
    table = np.empty((levels, 3, n))
    cols = np.zeros(levels, np.int64)
    for k in range(levels):
        table[k, 0] = rows[k]
        ncol = 1 if k == 0 else min(cols[k - 1], 2) + 1
        cols[k] = ncol
        for j in range(1, ncol):
            for s in range(n):
                table[k, j, s] = table[k, j - 1, s] + (table[k, j - 1, s] - table[k - 1, j - 1, s]) / (4.0**j - 1.0)
    k = levels - 1
    m = cols[k] - 1
    error = np.empty(n)
    for s in range(n):
        if cols[k] < 2:
            error[s] = math.inf
        elif k >= 1 and cols[k - 1] > m:
            error[s] = abs(table[k, m, s] - table[k - 1, m, s])
        else:
            error[s] = abs(table[k, m, s] - table[k, m - 1, s])
    return table[k, m].copy(), error


@njit
def out_of_order(value, err):
    """How far each of ``value`` lies from the value at its index in the sorted values (a stable sort), where
    that is more than the two errors ``err`` (0 elsewhere): :func:`fdsolver.boundstates.levels._out_of_order`,
    the same floating-point operations.  O(n log n)."""
    n = value.shape[0]
    order = np.argsort(value, kind="mergesort")
    off = np.empty(n)
    for s in range(n):
        d = abs(value[s] - value[order[s]])
        off[s] = d if d > err[s] + err[order[s]] else 0.0
    return off


@njit
def settle_levels(energy, error, splitting, splitting_error, roundoff):
    """The last steps of a level run's extrapolation, in one call (copies; the inputs are not changed).

    Each splitting's error gains the two states' round-off floors ``roundoff``; a splitting at or below them
    is only bounded by them (``bound``, and the splitting set to that bound); two energies in the wrong order
    by no more than their two errors are a doublet split below double precision: both take their mean (pairs
    found on the energies as they came); and :func:`out_of_order` of the result.  Returns (energy, error,
    splitting, splitting error, bound, off).  Energy unit of the inputs.  O(n log n).
    """
    n = energy.shape[0]
    energy = energy.copy()
    splitting = splitting.copy()
    splitting_error = splitting_error.copy()
    bound = np.zeros(max(n - 1, 0), np.bool_)
    for j in range(n - 1):
        pair = roundoff[j] + roundoff[j + 1]
        splitting_error[j] = splitting_error[j] + pair
        if splitting[j] <= pair:
            bound[j] = True
            splitting[j] = pair
    inverted = np.zeros(max(n - 1, 0), np.bool_)
    for k in range(n - 1):
        inverted[k] = energy[k + 1] - energy[k] < 0.0
    for k in range(n - 1):
        if inverted[k] and energy[k] - energy[k + 1] <= error[k] + error[k + 1]:
            mean = 0.5 * (energy[k] + energy[k + 1])
            energy[k] = mean
            energy[k + 1] = mean
    return energy, error.copy(), splitting, splitting_error, bound, out_of_order(energy, error)


#: why :func:`constant_levels` stopped: every state judged (converged, or limited by round-off); the level
#: limit reached; the next level over the node budget; the one-call pass failed on a level (the general path
#: decides it); the states of a level differ from the previous level's (the caller's loop handles it)
LEVELS_DONE, LEVELS_ALL, LEVELS_BUDGET, LEVELS_FAILED, LEVELS_CHANGED = 0, 1, 2, 3, 4


@njit
def constant_levels(base, v_cell, m_cell, mirror, center, c, shift, pos, alpha, guess_e, guess_s, has_lo, e_lo,
                    e_hi, max_states, floor, cluster_rtol, steps, residual_factor, ulps, eps, max_levels,
                    min_levels, max_nodes, tol, growth):
    """Every nested level of a potential constant on every base cell in one compiled call, while the levels
    are regular: :func:`constant_level` on levels 0, 1, ... (level 0 from ``guess_e``/``guess_s``, each next
    one from E_{k+1} ~ E_k - (E_{k-1} - E_k)/4), the Romberg table of their energies
    (:class:`fdsolver.numerics.richardson.Romberg`, columns up to h^4 removed) and the judgement of
    :func:`fdsolver.boundstates.levels._judge` once ``min_levels`` levels are in: a state is done when its
    table error plus round-off floor is within ``tol`` |E| (|E| at least 1e-300) and its extrapolation is in
    order; refinement stops when every state is done, or done or limited by round-off (``growth`` times its
    floor above the tolerance).  The same floating-point operations in the same order as those functions.

    It stops at the first level that is not regular (see the LEVELS_* codes): over ``max_nodes``, a failed
    pass, no states, or other states than the previous level's (count or first index); the caller's loop
    takes over from that level.  Returns (reason, levels done L, their energies (L x n), their node counts,
    the newest done level's :func:`constant_level` states, the grid of its sectors (its nodes, the even half's
    or whole operator's weights, and of the whole operator the nodes it was assembled on, the cell masses
    and the weights: what the results read from the sectors of the finest level), and with
    LEVELS_DONE the judged extrapolation, settled: the energies' :meth:`~fdsolver.numerics.richardson.Romberg.value`
    and error plus round-off floor, the states limited by round-off (as ``_judge`` finds them), the splittings'
    value and table error (:func:`romberg_newest` of the rows' differences), all through :func:`settle_levels`
    with the newest level's round-off floors, which also gives the bounded splittings and how far each energy
    is out of order; empty otherwise).  Energies relative to ``shift``.
    """
    nb = base.shape[0]
    ge = guess_e.copy()
    gs = guess_s.copy()
    energies = np.empty((max_levels, 0))
    sizes = np.zeros(max_levels, np.int64)
    none = np.empty(0)
    last = (1, none, np.empty(0, np.int64), none, np.empty(0, np.int64), 0, 0, np.empty((0, 0)), np.empty((0, 0)))
    grid = (none, none, none, none, none)
    n = -1
    first = 0
    judged = (none, none, np.empty(0, np.bool_), none, none, np.empty(0, np.bool_), none)
    for level in range(max_levels):
        size = (nb - 1) * 2**level + 1
        if size > max_nodes:
            return LEVELS_BUDGET, level, energies[:level].copy(), sizes[:level].copy(), last, grid, judged
        got, got_ops = constant_level(base, v_cell, m_cell, level, mirror, center, c, shift, pos, alpha, ge, gs,
                                      has_lo, e_lo, e_hi, max_states, floor, cluster_rtol, steps, residual_factor,
                                      ulps, eps)
        if got[0] != 0:
            return LEVELS_FAILED, level, energies[:level].copy(), sizes[:level].copy(), last, grid, judged
        en = got[1]
        if en.shape[0] == 0 or (n >= 0 and (en.shape[0] != n or got[6] != first)):
            return LEVELS_CHANGED, level, energies[:level].copy(), sizes[:level].copy(), last, grid, judged
        if n < 0:
            n = en.shape[0]
            first = got[6]
            energies = np.empty((max_levels, n))
        last = got
        grid = (got_ops[0], got_ops[2], got_ops[6][0], got_ops[6][1], got_ops[6][3])
        energies[level] = en
        sizes[level] = size
        if level + 1 >= min_levels:
            # the Romberg table of the levels so far, its newest value and error, plus the round-off floor
            value, table_error = romberg_newest(energies[:level + 1])
            err = np.empty(n)
            for s in range(n):
                err[s] = table_error[s] + got[3][s]
            order = np.argsort(value, kind="mergesort")
            finished = True
            limited_by = np.zeros(n, np.bool_)
            for s in range(n):
                scale = max(abs(en[s]), 1e-300)
                crossed = False
                if level >= 1:
                    off = abs(value[s] - value[order[s]])
                    crossed = off > err[s] + err[order[s]] and off > 0.0
                done = err[s] <= tol * scale and not crossed
                limited = (not done) and (not crossed) and growth * got[3][s] > tol * scale
                limited_by[s] = limited
                if not (done or limited):
                    finished = False
            if finished:
                gaps = energies[:level + 1, 1:] - energies[:level + 1, :-1]
                gap_value, gap_error = romberg_newest(gaps)
                energy, error, splitting, splitting_error, bound, off = settle_levels(value, err, gap_value, gap_error,
                                                                                     got[3])
                judged = (energy, error, limited_by, splitting, splitting_error, bound, off)
                return LEVELS_DONE, level + 1, energies[:level + 1].copy(), sizes[:level + 1].copy(), last, grid, judged
        # the next level's predictions
        if level == 0:
            ge = en.copy()
        else:
            ge = en - (energies[level - 1] - en) / 4.0
        gs = got[2].copy()
    return LEVELS_ALL, max_levels, energies.copy(), sizes.copy(), last, grid, judged


@njit
def _gershgorin_below(d, e):
    """min_i (d_i - |e_{i-1}| - |e_i|): no eigenvalue of tridiag(e, d, e) lies below it."""
    n = d.shape[0]
    below = math.inf
    for i in range(n):
        left = abs(e[i - 1]) if i > 0 else 0.0
        right = abs(e[i]) if i < n - 1 else 0.0
        below = min(below, d[i] - (left + right))
    return below


@njit
def _window_values(d, e, has_lo, e_lo, e_hi, max_states, floor, rtol, work):
    """(status, lo, hi, values) of one sector for :func:`constant_coarse`: the Sturm counts at the window's
    ends and its lowest min(hi - lo, max_states) eigenvalues by bisection; status 1 where the general path
    decides (more values x nodes than ``work``: LAPACK's simultaneous bisection is cheaper there)."""
    n = d.shape[0]
    lo = sturm_count(d, e, e_lo) if has_lo and math.isfinite(e_lo) else 0
    hi = n if not math.isfinite(e_hi) else sturm_count(d, e, e_hi)
    m = min(hi - lo, max_states)
    if m <= 0:
        return 0, lo, hi, np.empty(0)
    if n == 1:
        out = np.empty(1)
        out[0] = d[0]
        return 0, lo, hi, out
    if m * n > work:
        return 1, lo, hi, np.empty(0)
    below = _gershgorin_below(d, e)
    above = e_hi
    if not math.isfinite(above):
        above = upper_bracket(d, e, below, max(floor, 1e-3 * abs(below), 1e-300), lo + m)
    return 0, lo, hi, bisect_eigenvalues(d, e, lo, m, below, above, rtol, floor)


@njit
def constant_coarse(nodes, v_cell, m_cell, mirror, center, c, shift, pos, alpha, has_lo, e_lo, e_hi, max_states,
                    floor, rtol, work):
    """The energies of the states of a coarse grid whose V and m are constant on every cell, in one compiled
    call: the operators of :func:`constant_sectors` and the steps of
    :func:`fdsolver.boundstates.eigen.solve_grid` without a guess and without vectors (Sturm counts at the
    window's ends, the lowest states of each sector by bisection to ``rtol``, the lowest ``max_states`` of
    all, merged by the mirror ranks, cut at e_hi).  Returns (status, energy, sector, count_below,
    first_index): status 1 where the general path decides (the operators are not ok, or a sector asks for more
    than ``work`` values x nodes).  Energies relative to ``shift``.  O(N log(range / tolerance)) per state.
    """
    ok, d0, e0, a0, vw0, w0, d1, e1, a1, vw1, w1, _ = constant_sectors(nodes, v_cell, m_cell, 1, mirror, center,
                                                                        c, shift, pos, alpha)
    fail = (1, np.empty(0), np.empty(0, np.int64), 0, 0)
    if not ok:
        return fail
    st0, lo0, hi0, v0 = _window_values(d0, e0, has_lo, e_lo, e_hi, max_states, floor, rtol, work)
    lo1, hi1, st1 = 0, 0, 0
    v1 = np.empty(0)
    if mirror:
        st1, lo1, hi1, v1 = _window_values(d1, e1, has_lo, e_lo, e_hi, max_states, floor, rtol, work)
    total = (hi0 - lo0) + (hi1 - lo1)
    n = min(total, max_states)
    first_index = lo0 + lo1
    count_below = hi0 + hi1
    if n <= 0:
        return 0, np.empty(0), np.empty(0, np.int64), count_below, first_index
    if st0 != 0 or st1 != 0:
        return fail
    # the n lowest of both sectors (numpy.lexsort by value, then sector: a stable sort of the concatenation)
    k0 = v0.shape[0]
    allv = np.empty(k0 + v1.shape[0])
    allv[:k0] = v0
    allv[k0:] = v1
    keep = np.argsort(allv, kind="mergesort")[:n]
    w0n = 0
    for j in range(keep.shape[0]):
        if keep[j] < k0:
            w0n += 1
    w1n = keep.shape[0] - w0n
    energy = np.empty(w0n + w1n)
    sector = np.empty(w0n + w1n, np.int64)
    rank = np.empty(w0n + w1n, np.int64)
    for j in range(w0n):
        energy[j] = v0[j]
        sector[j] = 0
        rank[j] = 2 * (lo0 + j)
    for j in range(w1n):
        energy[w0n + j] = v1[j]
        sector[w0n + j] = 1
        rank[w0n + j] = 2 * (lo1 + j) + 1
    if mirror:
        order = np.argsort(rank, kind="mergesort")
    else:
        order = np.argsort(energy, kind="mergesort")
    kept = 0
    out_e = np.empty(order.shape[0])
    out_s = np.empty(order.shape[0], np.int64)
    for j in range(order.shape[0]):
        k = order[j]
        if math.isfinite(e_hi) and not energy[k] < e_hi:
            continue
        out_e[kept] = energy[k]
        out_s[kept] = sector[k]
        kept += 1
    return 0, out_e[:kept].copy(), out_s[:kept].copy(), count_below - (energy.shape[0] - kept), first_index


@njit
def unfold_row(row, u, w, parity, neumann):
    """psi on the whole grid into ``row`` (zero on entry, whole-grid nodes) from a sector's unit eigenvector ``u``
    with node weights ``w``: u / sqrt(w) at the unknowns (parity 0: the whole grid's interior nodes); a mirror
    half's values divided by sqrt(2) from the centre on (the centre itself with ``neumann``, the even half) and
    mirrored onto the left half times ``parity`` (+1 or -1).  The operations of the numpy form in
    :func:`fdsolver.boundstates.result.unfold_into`.  psi in length^-1/2.  O(N)."""
    n = u.shape[0]
    if parity == 0:
        for i in range(n):
            row[1 + i] = u[i] / math.sqrt(w[i])
        return
    size = row.shape[0]
    centre = (size - 1) // 2
    start = centre if neumann else centre + 1
    root2 = math.sqrt(2.0)
    for i in range(n):
        row[start + i] = u[i] / math.sqrt(w[i]) / root2
    for j in range(centre):
        row[j] = parity * row[size - 1 - j]


@njit
def home_of(inside, tie):
    """Each row's home: the first column within ``tie`` of the row's largest entry (``inside``: states x regions,
    at least one column), -1 where that largest entry is not above 0 or is NaN.  The comparisons of
    ``numpy.max``, ``numpy.argmax`` and ``numpy.where`` in :func:`fdsolver.boundstates.result.home_regions`, one
    pass per row.  Dimensionless.  O(states x regions)."""
    n, r = inside.shape
    out = np.empty(n, np.int64)
    for k in range(n):
        best = inside[k, 0]
        for j in range(1, r):
            v = inside[k, j]
            if math.isnan(v) or v > best:  # numpy.max propagates NaN
                best = v
            if math.isnan(best):
                break
        out[k] = -1
        if best > 0.0:
            cut = best - tie
            for j in range(r):
                if inside[k, j] >= cut:
                    out[k] = j
                    break
    return out


@njit
def wave_columns(x, psi, bounds, x_ref, fraction, v_cells, reps, columns):
    """What the observables of the states ``psi`` (states x nodes, on the nodes ``x``, length unit) are summed
    from, and their sums, in one pass: (node weights w, columns, sign changes, V at the nodes, sums).

    w_i = (h_{i-1} + h_i)/2 (0 at the ends); column 0 is w x, column 1 w (x - x_ref)^2, and column 2 + j the
    length of each node's dual cell [x_i - h_{i-1}/2, x_i + h_i/2] (the ends' half cells) inside
    [bounds[j, 0], bounds[j, 1]] (made as an N x (2 + K) array only with ``columns``, else an empty one); the
    sums are sum_i psi_i^2 column_i for every state and column (states x (2 + K); psi in length^-1/2, so
    <x>, <(x - x_ref)^2> and each interval's probability), added in node order, an interval's only over the
    nodes whose dual cells reach into it; all NaN for a row holding a NaN.  The sign changes of each row of psi
    counted between neighbours that both exceed ``fraction`` of the row's largest |psi| (none in a row holding
    a NaN).  With V on every cell
    (``v_cells``, energy unit, each value on ``reps`` cells in a row: V_i = v_cells[i // reps]; empty for none)
    also V at the interior nodes as the operator sees it, the average over the node's dual cell,
    (h_{i-1}/2 V_{i-1} + h_i/2 V_i) / w_i (the ends left NaN; an empty array without V on the cells, or where
    its values times ``reps`` do not cover the N - 1 cells exactly).  The weights, columns and V by the same
    floating-point operations as the numpy forms of :mod:`fdsolver.boundstates.result`.  O(N states + K log N),
    and O(N K) more with ``columns``.
    """
    n = x.shape[0]
    k = bounds.shape[0]
    w = np.zeros(n)
    moments = np.zeros((n, 2))
    for i in range(1, n - 1):
        w[i] = 0.5 * ((x[i] - x[i - 1]) + (x[i + 1] - x[i]))
    for i in range(n):
        moments[i, 0] = w[i] * x[i]
        dx = x[i] - x_ref
        moments[i, 1] = w[i] * (dx * dx)
    # each interval's nodes [first, stop) and their overlaps, one after another in ``overlap``
    first = np.zeros(k, np.int64)
    stop = np.zeros(k, np.int64)
    start = np.zeros(k + 1, np.int64)
    lo_cell = np.empty(n)
    hi_cell = np.empty(n)
    if k:
        lo_cell[0] = x[0]
        hi_cell[n - 1] = x[n - 1]
        for i in range(n - 1):
            h = x[i + 1] - x[i]
            lo_cell[i + 1] = x[i + 1] - 0.5 * h
            hi_cell[i] = x[i] + 0.5 * h
        for j in range(k):
            first[j] = search_sorted(hi_cell, bounds[j, 0], True)  # the first cell ending beyond lo
            # past the last cell starting before hi
            stop[j] = max(search_sorted(lo_cell, bounds[j, 1], False), first[j])
            start[j + 1] = start[j] + stop[j] - first[j]
    overlap = np.empty(start[k])
    for j in range(k):
        for i in range(first[j], stop[j]):
            overlap[start[j] + i - first[j]] = min(hi_cell[i], bounds[j, 1]) - max(lo_cell[i], bounds[j, 0])
    cols = np.zeros((n if columns else 0, 2 + k))
    if columns:
        for i in range(n):
            cols[i, 0] = moments[i, 0]
            cols[i, 1] = moments[i, 1]
        for j in range(k):
            for i in range(first[j], stop[j]):
                cols[i, 2 + j] = overlap[start[j] + i - first[j]]
    states = psi.shape[0]
    changes = np.zeros(states, np.int64)
    sums = np.zeros((states, 2 + k))
    square = np.empty(n)
    for r in range(states):
        peak = 0.0
        nan = False
        mean = 0.0
        second = 0.0
        for i in range(n):
            p = psi[r, i]
            square[i] = p * p
            mean += square[i] * moments[i, 0]
            second += square[i] * moments[i, 1]
            a = abs(p)
            if a != a:
                nan = True
            elif a > peak:
                peak = a
        sums[r, 0] = mean
        sums[r, 1] = second
        for j in range(k):
            total = 0.0
            for i in range(first[j], stop[j]):
                total += square[i] * overlap[start[j] + i - first[j]]
            sums[r, 2 + j] = total
        if nan:  # as in a product with every column: NaN times 0 is NaN
            for j in range(2 + k):
                sums[r, j] = np.nan
            continue
        limit = fraction * peak
        count = 0
        for i in range(n - 1):
            p, q = psi[r, i], psi[r, i + 1]
            if abs(p) > limit and abs(q) > limit and (p > 0.0) != (q > 0.0):
                count += 1
        changes[r] = count
    given = v_cells.shape[0] > 0 and v_cells.shape[0] * reps == n - 1  # else V is not known on every cell
    v_nodes = np.empty(n if given else 0)
    if given:
        v_nodes[0] = v_nodes[n - 1] = np.nan
        for i in range(1, n - 1):
            v_nodes[i] = ((0.5 * (x[i] - x[i - 1])) * v_cells[(i - 1) // reps]
                          + (0.5 * (x[i + 1] - x[i])) * v_cells[i // reps]) / (
                0.5 * ((x[i] - x[i - 1]) + (x[i + 1] - x[i])))
    return w, cols, changes, v_nodes, sums
