"""Compiled pair loops (Numba, ``cache=True``).

Two passes share the same cell-list walk (see ``_cells.py``):

* :func:`volume_pass` bins every pair into (distance class x fine direction
  cell), into (block x class x coarse cell) and into the Cartesian map;
* :func:`exact_pass` applies the lag-class, angle and bandwidth rules of
  design.md to every pair for one direction.

Work is split into a fixed number of chunks (``n_chunks``); chunk ``t``
handles the occupied cells whose position in the occupied-cell list is
``t`` modulo ``n_chunks`` and adds into its own slice of the accumulators,
so there are no write conflicts, the result does not depend on the number of
threads, and batching a run (calling the pass on consecutive ranges of
occupied cells) gives bit-identical sums. Slices are merged once at the end,
in Python.

Per pair: a squared distance, the canonical flip, one square root for the
distance, a divide for the class, one square root and one divide for the
Lambert coordinates, two floors and a table read for the direction cell, and
the channel additions. No trigonometry, no allocation.

Channels (``CHANNELS`` in ``__init__``), in order: count, dist, sq, abs,
sqrt, head, tail, head2, tail2, cross, rel, rel_n, dx, dy, dz.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

NCH = 15
_SQRT2 = math.sqrt(2.0)


@njit(cache=True)
def _add(acc, c, base, d, h, t, dx, dy, dz):
    """Add one pair (head ``h``, tail ``t``, distance ``d``) at ``acc[c, base:base+15]``."""
    delta = h - t
    sq = delta * delta
    ad = abs(delta)
    acc[c, base + 0] += 1.0
    acc[c, base + 1] += d
    acc[c, base + 2] += sq
    acc[c, base + 3] += ad
    acc[c, base + 4] += math.sqrt(ad)
    acc[c, base + 5] += h
    acc[c, base + 6] += t
    acc[c, base + 7] += h * h
    acc[c, base + 8] += t * t
    acc[c, base + 9] += h * t
    s = h + t
    if s != 0.0:
        acc[c, base + 10] += 4.0 * sq / (s * s)
        acc[c, base + 11] += 1.0
    acc[c, base + 12] += dx
    acc[c, base + 13] += dy
    acc[c, base + 14] += dz


@njit(cache=True)
def _volume_pair(c, xi, yi, zi, vi, xj, yj, zj, vj, maxd2, lag, n_lags,
                 table, tsize, inv_pix, n_fine, f2c, n_coarse,
                 do_blocks, borig, binv, bshape, do_map, minv, mhalf, mny, mnz,
                 acc_fine, acc_blk, acc_map, stats):
    dx = xj - xi
    dy = yj - yi
    dz = zj - zi
    d2 = dx * dx + dy * dy + dz * dz
    if d2 > maxd2:
        return
    d = math.sqrt(d2)
    kf = math.ceil(d / lag - 0.5)
    if kf > n_lags:
        return
    k = int(kf)
    if k < 0:
        k = 0
    # canonical orientation (geometry.to_lower_hemisphere): head = tail + v
    if dz > 0.0 or (dz == 0.0 and (dx < 0.0 or (dx == 0.0 and dy < 0.0))):
        dx = -dx
        dy = -dy
        dz = -dz
        h = vi
        t = vj
    else:
        h = vj
        t = vi
    if d2 > 0.0:
        s = math.sqrt(2.0 / (d * (d - dz)))
        ix = int(math.floor((dx * s + _SQRT2) * inv_pix))
        iy = int(math.floor((dy * s + _SQRT2) * inv_pix))
        if ix < 0:
            ix = 0
        elif ix >= tsize:
            ix = tsize - 1
        if iy < 0:
            iy = 0
        elif iy >= tsize:
            iy = tsize - 1
        f = np.int64(table[ix, iy])
    else:
        f = np.int64(0)  # coincident points: class 0, first cell
    stats[c, 1] += 1
    _add(acc_fine, c, (k * n_fine + f) * NCH, d, h, t, dx, dy, dz)
    if do_blocks:
        bx = int(math.floor((0.5 * (xi + xj) - borig[0]) * binv[0]))
        by = int(math.floor((0.5 * (yi + yj) - borig[1]) * binv[1]))
        bz = int(math.floor((0.5 * (zi + zj) - borig[2]) * binv[2]))
        bx = min(max(bx, 0), bshape[0] - 1)
        by = min(max(by, 0), bshape[1] - 1)
        bz = min(max(bz, 0), bshape[2] - 1)
        b = (bx * bshape[1] + by) * bshape[2] + bz
        _add(acc_blk, c, ((b * (n_lags + 1) + k) * n_coarse + f2c[f]) * NCH, d, h, t, dx, dy, dz)
    if do_map:
        mx = int(math.floor(dx * minv + 0.5)) + mhalf
        my = int(math.floor(dy * minv + 0.5)) + mhalf
        mz = int(math.floor(dz * minv + 0.5)) + mhalf
        mx = min(max(mx, 0), mny - 1)
        my = min(max(my, 0), mny - 1)
        mz = min(max(mz, 0), mnz - 1)
        _add(acc_map, c, ((mx * mny + my) * mnz + mz) * NCH, d, h, t, dx, dy, dz)


@njit(cache=True, parallel=True)
def volume_pass(x, y, z, v, start, dims, occupied, offsets, q0, q1, n_chunks,
                maxd2, lag, n_lags, table, inv_pix, f2c, n_coarse,
                do_blocks, borig, binv, bshape, do_map, minv, mhalf,
                acc_fine, acc_blk, acc_map, stats):
    """Accumulate all pairs of occupied cells ``q0 <= q < q1`` (see module doc).

    ``stats[c, 0]`` counts candidate pairs looked at, ``stats[c, 1]`` pairs kept.
    """
    tsize = table.shape[0]
    n_fine = f2c.shape[0]
    mny = 2 * mhalf + 1
    mnz = mhalf + 1
    ny = dims[1]
    nz = dims[2]
    n_off = offsets.shape[0]
    for c in prange(n_chunks):
        first = q0 + ((c - q0) % n_chunks)
        for q in range(first, q1, n_chunks):
            a = occupied[q]
            ax = a // (ny * nz)
            ay = (a // nz) % ny
            az = a % nz
            a0 = start[a]
            a1 = start[a + 1]
            # pairs inside the cell
            stats[c, 0] += (a1 - a0) * (a1 - a0 - 1) // 2
            for i in range(a0, a1):
                xi = x[i]
                yi = y[i]
                zi = z[i]
                vi = v[i]
                for j in range(i + 1, a1):
                    _volume_pair(c, xi, yi, zi, vi, x[j], y[j], z[j], v[j], maxd2, lag, n_lags,
                                 table, tsize, inv_pix, n_fine, f2c, n_coarse,
                                 do_blocks, borig, binv, bshape, do_map, minv, mhalf, mny, mnz,
                                 acc_fine, acc_blk, acc_map, stats)
            # pairs with the half neighbourhood
            for o in range(n_off):
                bx = ax + offsets[o, 0]
                by = ay + offsets[o, 1]
                bz = az + offsets[o, 2]
                if bx < 0 or bx >= dims[0] or by < 0 or by >= ny or bz < 0 or bz >= nz:
                    continue
                b = (bx * ny + by) * nz + bz
                b0 = start[b]
                b1 = start[b + 1]
                if b1 == b0:
                    continue
                stats[c, 0] += (a1 - a0) * (b1 - b0)
                for i in range(a0, a1):
                    xi = x[i]
                    yi = y[i]
                    zi = z[i]
                    vi = v[i]
                    for j in range(b0, b1):
                        _volume_pair(c, xi, yi, zi, vi, x[j], y[j], z[j], v[j], maxd2, lag, n_lags,
                                     table, tsize, inv_pix, n_fine, f2c, n_coarse,
                                     do_blocks, borig, binv, bshape, do_map, minv, mhalf, mny, mnz,
                                     acc_fine, acc_blk, acc_map, stats)


@njit(cache=True)
def _exact_pair(c, xi, yi, zi, vi, xj, yj, zj, vj, maxd2, lag, tol, n_lags,
                omni, ux, uy, uz, cos_tol, use_band, band2, acc, stats):
    dx = xj - xi
    dy = yj - yi
    dz = zj - zi
    d2 = dx * dx + dy * dy + dz * dz
    if d2 > maxd2:
        return
    if not omni:
        if d2 == 0.0:
            return
        dot = dx * ux + dy * uy + dz * uz
        d = math.sqrt(d2)
        if abs(dot) < d * cos_tol:
            return
        if use_band and d2 - dot * dot > band2:
            return
    else:
        d = math.sqrt(d2)
    kmin = int(math.floor((d - tol) / lag))
    kmax = int(math.ceil((d + tol) / lag))
    if kmin < 1:
        kmin = 1
    if kmax > n_lags:
        kmax = n_lags
    if kmin > kmax:
        return
    if dz > 0.0 or (dz == 0.0 and (dx < 0.0 or (dx == 0.0 and dy < 0.0))):
        dx = -dx
        dy = -dy
        dz = -dz
        h = vi
        t = vj
    else:
        h = vj
        t = vi
    for k in range(kmin, kmax + 1):
        if k * lag - tol < d and d <= k * lag + tol:
            stats[c, 1] += 1
            _add(acc, c, k * NCH, d, h, t, dx, dy, dz)


@njit(cache=True, parallel=True)
def exact_pass(x, y, z, v, start, dims, occupied, offsets, q0, q1, n_chunks,
               maxd2, lag, tol, n_lags, omni, ux, uy, uz, cos_tol, use_band, band2,
               acc, stats):
    """Exact directional accumulation into ``acc[c, k*15:(k+1)*15]``, k = 1..n_lags."""
    ny = dims[1]
    nz = dims[2]
    n_off = offsets.shape[0]
    for c in prange(n_chunks):
        first = q0 + ((c - q0) % n_chunks)
        for q in range(first, q1, n_chunks):
            a = occupied[q]
            ax = a // (ny * nz)
            ay = (a // nz) % ny
            az = a % nz
            a0 = start[a]
            a1 = start[a + 1]
            stats[c, 0] += (a1 - a0) * (a1 - a0 - 1) // 2
            for i in range(a0, a1):
                for j in range(i + 1, a1):
                    _exact_pair(c, x[i], y[i], z[i], v[i], x[j], y[j], z[j], v[j], maxd2, lag, tol,
                                n_lags, omni, ux, uy, uz, cos_tol, use_band, band2, acc, stats)
            for o in range(n_off):
                bx = ax + offsets[o, 0]
                by = ay + offsets[o, 1]
                bz = az + offsets[o, 2]
                if bx < 0 or bx >= dims[0] or by < 0 or by >= ny or bz < 0 or bz >= nz:
                    continue
                b = (bx * ny + by) * nz + bz
                b0 = start[b]
                b1 = start[b + 1]
                if b1 == b0:
                    continue
                stats[c, 0] += (a1 - a0) * (b1 - b0)
                for i in range(a0, a1):
                    for j in range(b0, b1):
                        _exact_pair(c, x[i], y[i], z[i], v[i], x[j], y[j], z[j], v[j], maxd2, lag,
                                    tol, n_lags, omni, ux, uy, uz, cos_tol, use_band, band2, acc,
                                    stats)


@njit(cache=True)
def count_estimate(counts_flat, dims, occupied, offsets, weights):
    """Sum over occupied cells A and half-stencil offsets o of n_A n_{A+o} w_o,
    plus n_A (n_A - 1) / 2 w_0 for the pairs inside A (``weights[0]`` is the
    self weight, ``weights[1:]`` the offsets' weights)."""
    ny = dims[1]
    nz = dims[2]
    total = 0.0
    for q in range(occupied.shape[0]):
        a = occupied[q]
        na = counts_flat[a]
        ax = a // (ny * nz)
        ay = (a // nz) % ny
        az = a % nz
        total += weights[0] * na * (na - 1) / 2.0
        for o in range(offsets.shape[0]):
            bx = ax + offsets[o, 0]
            by = ay + offsets[o, 1]
            bz = az + offsets[o, 2]
            if bx < 0 or bx >= dims[0] or by < 0 or by >= ny or bz < 0 or bz >= nz:
                continue
            total += weights[o + 1] * na * counts_flat[(bx * ny + by) * nz + bz]
    return total


@njit(cache=True)
def cell_work(start, dims, occupied, offsets):
    """Candidate pairs per occupied cell (for planning batches)."""
    ny = dims[1]
    nz = dims[2]
    out = np.zeros(occupied.shape[0], dtype=np.float64)
    for q in range(occupied.shape[0]):
        a = occupied[q]
        na = start[a + 1] - start[a]
        ax = a // (ny * nz)
        ay = (a // nz) % ny
        az = a % nz
        w = na * (na - 1) / 2.0
        for o in range(offsets.shape[0]):
            bx = ax + offsets[o, 0]
            by = ay + offsets[o, 1]
            bz = az + offsets[o, 2]
            if bx < 0 or bx >= dims[0] or by < 0 or by >= ny or bz < 0 or bz >= nz:
                continue
            b = (bx * ny + by) * nz + bz
            w += na * (start[b + 1] - start[b])
        out[q] = w
    return out
