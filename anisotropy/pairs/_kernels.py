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

Accumulator layout: (n_chunks, n_bins, width) rows, allocated on 64-byte
boundaries; fine rows hold the 15 channels in order padded to ``NPAD = 16``
(128 bytes, two cache lines); block and map rows hold the kept channels
(``bcols``/``mcols``) in rows of 8 or 16. The canonical flip is branch-free
(it is a coin toss per pair, so a branch mispredicts half the time).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

NCH = 15
#: Row width of the volume accumulators (channels padded to 16 = 128 bytes).
NPAD = 16
_SQRT2 = math.sqrt(2.0)


@njit(cache=True)
def _pair_values(vals, d, h, t, dx, dy, dz):
    """Fill ``vals`` (15,) with one pair's channel contributions."""
    delta = h - t
    sq = delta * delta
    ad = abs(delta)
    vals[0] = 1.0
    vals[1] = d
    vals[2] = sq
    vals[3] = ad
    vals[4] = math.sqrt(ad)
    vals[5] = h
    vals[6] = t
    vals[7] = h * h
    vals[8] = t * t
    vals[9] = h * t
    s = h + t
    if s != 0.0:
        vals[10] = 4.0 * sq / (s * s)
        vals[11] = 1.0
    else:
        vals[10] = 0.0
        vals[11] = 0.0
    vals[12] = dx
    vals[13] = dy
    vals[14] = dz


@njit(cache=True, parallel=True)
def volume_pass(x, y, z, v, start, dims, occupied, offsets, g0, g1, n_chunks,
                maxd2, lag, n_lags, table, inv_pix, f2c, n_coarse,
                do_blocks, borig, binv, bshape, do_map, minv, mhalf,
                acc_fine, acc_blk, acc_map, stats, occ_index, cell_lo, cell_hi,
                bcols, mcols):
    """Accumulate the pairs of stencil offsets ``g0 <= g < g1`` over all occupied cells.

    Accumulators are (n_chunks, n_bins, NPAD) with the channels of a bin
    contiguous in one 128-byte row (``NPAD = 16``, the last column unused):
    a bin row starts on a cache line and a pair's additions into it touch two
    lines; the row index is checked once per bin, not once per channel, so the
    compiler can add the channels as vectors.

    ``offsets[0]`` must be (0, 0, 0): the pairs inside a cell (j > i). The loop
    runs offset by offset (outer) over all cells (inner): for one offset the
    lag vectors of all its cell pairs lie in a small box, so the bins they
    touch stay in cache. Chunk ``c`` takes the offsets ``g`` with
    ``g % n_chunks == c``. ``stats[c, 0]`` counts candidate pairs looked at,
    ``stats[c, 1]`` pairs kept.

    Blocks: when the midpoints of every pair of a cell pair fall in one block
    (tested on the cells' bounding boxes: the rounded midpoint, shift, scale,
    floor and clamp are all monotone, so the block of the two corners bounds
    every pair's), the block is computed once for the cell pair.
    ``occ_index[cell]`` is the position of a cell in ``occupied`` and
    ``cell_lo``/``cell_hi`` (n_occupied, 3) the bounding boxes of its samples.

    ``bcols`` / ``mcols`` (15,): column of each channel in a block / map
    accumulator row, -1 for a channel not kept (count, dist, dx, dy, dz are
    always kept; sq, abs, sqrt, the five head/tail channels and the two
    relative channels are kept or dropped as groups). Fine rows always hold
    all channels in order.
    """
    tsize = table.shape[0]
    n_fine = f2c.shape[0]
    mny = 2 * mhalf + 1
    mnz = mhalf + 1
    ny = dims[1]
    nz = dims[2]
    n_occ = occupied.shape[0]
    kb0 = bcols[0]
    kb1 = bcols[1]
    kb2 = bcols[2]
    kb3 = bcols[3]
    kb4 = bcols[4]
    kb5 = bcols[5]
    kb6 = bcols[6]
    kb7 = bcols[7]
    kb8 = bcols[8]
    kb9 = bcols[9]
    kb10 = bcols[10]
    kb11 = bcols[11]
    kb12 = bcols[12]
    kb13 = bcols[13]
    kb14 = bcols[14]
    km0 = mcols[0]
    km1 = mcols[1]
    km2 = mcols[2]
    km3 = mcols[3]
    km4 = mcols[4]
    km5 = mcols[5]
    km6 = mcols[6]
    km7 = mcols[7]
    km8 = mcols[8]
    km9 = mcols[9]
    km10 = mcols[10]
    km11 = mcols[11]
    km12 = mcols[12]
    km13 = mcols[13]
    km14 = mcols[14]
    for c in prange(n_chunks):
        af = acc_fine[c]
        ab = acc_blk[c]
        am = acc_map[c]
        bcur = -1
        bq0 = 0.0
        bq1 = 0.0
        bq2 = 0.0
        bq3 = 0.0
        bq4 = 0.0
        bq5 = 0.0
        bq6 = 0.0
        bq7 = 0.0
        bq8 = 0.0
        bq9 = 0.0
        bq10 = 0.0
        bq11 = 0.0
        bq12 = 0.0
        bq13 = 0.0
        bq14 = 0.0
        cand = 0
        kept = 0
        first = g0 + ((c - g0) % n_chunks)
        for g in range(first, g1, n_chunks):
            ox = offsets[g, 0]
            oy = offsets[g, 1]
            oz = offsets[g, 2]
            self_pairs = ox == 0 and oy == 0 and oz == 0
            for q in range(n_occ):
                a = occupied[q]
                ax = a // (ny * nz)
                ay = (a // nz) % ny
                az = a % nz
                bx = ax + ox
                by = ay + oy
                bz = az + oz
                if bx < 0 or bx >= dims[0] or by < 0 or by >= ny or bz < 0 or bz >= nz:
                    continue
                b = (bx * ny + by) * nz + bz
                b0 = start[b]
                b1 = start[b + 1]
                if b1 == b0:
                    continue
                a0 = start[a]
                a1 = start[a + 1]
                bconst = -1
                if do_blocks:
                    qa = occ_index[a]
                    qb = occ_index[b]
                    same = True
                    bl = 0
                    for ax_ in range(3):
                        lo = int(math.floor((0.5 * (cell_lo[qa, ax_] + cell_lo[qb, ax_]) - borig[ax_])
                                            * binv[ax_]))
                        hi = int(math.floor((0.5 * (cell_hi[qa, ax_] + cell_hi[qb, ax_]) - borig[ax_])
                                            * binv[ax_]))
                        lo = min(max(lo, 0), bshape[ax_] - 1)
                        hi = min(max(hi, 0), bshape[ax_] - 1)
                        if lo != hi:
                            same = False
                        bl = bl * bshape[ax_] + lo
                    if same:
                        bconst = bl
                for i in range(a0, a1):
                    xi = x[i]
                    yi = y[i]
                    zi = z[i]
                    vi = v[i]
                    jstart = i + 1 if self_pairs else b0
                    cand += b1 - jstart
                    for j in range(jstart, b1):
                        dx = x[j] - xi
                        dy = y[j] - yi
                        dz = z[j] - zi
                        d2 = dx * dx + dy * dy + dz * dz
                        if d2 > maxd2:
                            continue
                        d = math.sqrt(d2)
                        kf = math.ceil(d / lag - 0.5)
                        if kf > n_lags:
                            continue
                        k = int(kf)
                        if k < 0:
                            k = 0
                        # canonical orientation (geometry.to_lower_hemisphere): head = tail + v
                        # branch-free (the flip is a coin toss per pair); sign changes are exact
                        vj = v[j]
                        fl = (dz > 0.0) | ((dz == 0.0) & ((dx < 0.0) | ((dx == 0.0) & (dy < 0.0))))
                        sg = -1.0 if fl else 1.0
                        dx = dx * sg
                        dy = dy * sg
                        dz = dz * sg
                        h = vi if fl else vj
                        t = vj if fl else vi
                        if d2 > 0.0:
                            s = math.sqrt(2.0 / (d * (d - dz)))
                            ix = int(math.floor((dx * s + _SQRT2) * inv_pix))
                            iy = int(math.floor((dy * s + _SQRT2) * inv_pix))
                            ix = min(max(ix, 0), tsize - 1)
                            iy = min(max(iy, 0), tsize - 1)
                            f = np.int64(table[ix, iy])
                        else:
                            f = np.int64(0)  # coincident points: class 0, first cell
                        kept += 1
                        delta = h - t
                        sq = delta * delta
                        ad = abs(delta)
                        sr = math.sqrt(ad)
                        hh = h * h
                        tt = t * t
                        ht = h * t
                        ssum = h + t
                        if ssum != 0.0:
                            rel = 4.0 * sq / (ssum * ssum)
                            reln = 1.0
                        else:
                            rel = 0.0
                            reln = 0.0
                        fb = k * n_fine + f
                        af[fb, 0] += 1.0
                        af[fb, 1] += d
                        af[fb, 2] += sq
                        af[fb, 3] += ad
                        af[fb, 4] += sr
                        af[fb, 5] += h
                        af[fb, 6] += t
                        af[fb, 7] += hh
                        af[fb, 8] += tt
                        af[fb, 9] += ht
                        af[fb, 10] += rel
                        af[fb, 11] += reln
                        af[fb, 12] += dx
                        af[fb, 13] += dy
                        af[fb, 14] += dz
                        if do_blocks:
                            if bconst >= 0:
                                bb = bconst
                            else:
                                bx = int(math.floor((0.5 * (xi + x[j]) - borig[0]) * binv[0]))
                                by = int(math.floor((0.5 * (yi + y[j]) - borig[1]) * binv[1]))
                                bz = int(math.floor((0.5 * (zi + z[j]) - borig[2]) * binv[2]))
                                bx = min(max(bx, 0), bshape[0] - 1)
                                by = min(max(by, 0), bshape[1] - 1)
                                bz = min(max(bz, 0), bshape[2] - 1)
                                bb = (bx * bshape[1] + by) * bshape[2] + bz
                            # consecutive pairs mostly share a block bin: sum in registers, store on change
                            rb = (bb * (n_lags + 1) + k) * n_coarse + f2c[f]
                            if rb != bcur:
                                if bcur >= 0:
                                    ab[bcur, kb0] += bq0
                                    ab[bcur, kb1] += bq1
                                    ab[bcur, kb12] += bq12
                                    ab[bcur, kb13] += bq13
                                    ab[bcur, kb14] += bq14
                                    if kb2 >= 0:
                                        ab[bcur, kb2] += bq2
                                    if kb3 >= 0:
                                        ab[bcur, kb3] += bq3
                                    if kb4 >= 0:
                                        ab[bcur, kb4] += bq4
                                    if kb5 >= 0:
                                        ab[bcur, kb5] += bq5
                                        ab[bcur, kb6] += bq6
                                        ab[bcur, kb7] += bq7
                                        ab[bcur, kb8] += bq8
                                        ab[bcur, kb9] += bq9
                                    if kb10 >= 0:
                                        ab[bcur, kb10] += bq10
                                        ab[bcur, kb11] += bq11
                                bcur = rb
                                bq0 = 1.0
                                bq1 = d
                                bq2 = sq
                                bq3 = ad
                                bq4 = sr
                                bq5 = h
                                bq6 = t
                                bq7 = hh
                                bq8 = tt
                                bq9 = ht
                                bq10 = rel
                                bq11 = reln
                                bq12 = dx
                                bq13 = dy
                                bq14 = dz
                            else:
                                bq0 += 1.0
                                bq1 += d
                                bq2 += sq
                                bq3 += ad
                                bq4 += sr
                                bq5 += h
                                bq6 += t
                                bq7 += hh
                                bq8 += tt
                                bq9 += ht
                                bq10 += rel
                                bq11 += reln
                                bq12 += dx
                                bq13 += dy
                                bq14 += dz
                        if do_map:
                            mx = int(math.floor(dx * minv + 0.5)) + mhalf
                            my = int(math.floor(dy * minv + 0.5)) + mhalf
                            mz = int(math.floor(dz * minv + 0.5)) + mhalf
                            mx = min(max(mx, 0), mny - 1)
                            my = min(max(my, 0), mny - 1)
                            mz = min(max(mz, 0), mnz - 1)
                            mb = (mx * mny + my) * mnz + mz
                            am[mb, km0] += 1.0
                            am[mb, km1] += d
                            am[mb, km12] += dx
                            am[mb, km13] += dy
                            am[mb, km14] += dz
                            if km2 >= 0:
                                am[mb, km2] += sq
                            if km3 >= 0:
                                am[mb, km3] += ad
                            if km4 >= 0:
                                am[mb, km4] += sr
                            if km5 >= 0:
                                am[mb, km5] += h
                                am[mb, km6] += t
                                am[mb, km7] += hh
                                am[mb, km8] += tt
                                am[mb, km9] += ht
                            if km10 >= 0:
                                am[mb, km10] += rel
                                am[mb, km11] += reln
        if bcur >= 0:
            ab[bcur, kb0] += bq0
            ab[bcur, kb1] += bq1
            ab[bcur, kb12] += bq12
            ab[bcur, kb13] += bq13
            ab[bcur, kb14] += bq14
            if kb2 >= 0:
                ab[bcur, kb2] += bq2
            if kb3 >= 0:
                ab[bcur, kb3] += bq3
            if kb4 >= 0:
                ab[bcur, kb4] += bq4
            if kb5 >= 0:
                ab[bcur, kb5] += bq5
                ab[bcur, kb6] += bq6
                ab[bcur, kb7] += bq7
                ab[bcur, kb8] += bq8
                ab[bcur, kb9] += bq9
            if kb10 >= 0:
                ab[bcur, kb10] += bq10
                ab[bcur, kb11] += bq11
        stats[c, 0] += cand
        stats[c, 1] += kept


@njit(cache=True)
def offset_work(start, dims, occupied, offsets):
    """Candidate pairs per stencil offset (``offsets[0]`` = self), for planning batches."""
    ny = dims[1]
    nz = dims[2]
    out = np.zeros(offsets.shape[0], dtype=np.float64)
    for q in range(occupied.shape[0]):
        a = occupied[q]
        na = start[a + 1] - start[a]
        ax = a // (ny * nz)
        ay = (a // nz) % ny
        az = a % nz
        out[0] += na * (na - 1) / 2.0
        for o in range(1, offsets.shape[0]):
            bx = ax + offsets[o, 0]
            by = ay + offsets[o, 1]
            bz = az + offsets[o, 2]
            if bx < 0 or bx >= dims[0] or by < 0 or by >= ny or bz < 0 or bz >= nz:
                continue
            b = (bx * ny + by) * nz + bz
            out[o] += na * (start[b + 1] - start[b])
    return out


@njit(cache=True, parallel=True)
def exact_pass(x, y, z, v, start, dims, occupied, offsets, q0, q1, n_chunks,
               maxd2, lag, tol, n_lags, omni, ux, uy, uz, cos_tol, use_band, band2,
               acc, stats):
    """Exact directional accumulation into ``acc[c, k*15:(k+1)*15]``, k = 1..n_lags."""
    ny = dims[1]
    nz = dims[2]
    n_off = offsets.shape[0]
    for c in prange(n_chunks):
        vals = np.empty(NCH)
        cand = 0
        kept = 0
        first = q0 + ((c - q0) % n_chunks)
        for q in range(first, q1, n_chunks):
            a = occupied[q]
            ax = a // (ny * nz)
            ay = (a // nz) % ny
            az = a % nz
            a0 = start[a]
            a1 = start[a + 1]
            for o in range(-1, n_off):
                if o < 0:
                    b0 = a0
                    b1 = a1
                else:
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
                for i in range(a0, a1):
                    xi = x[i]
                    yi = y[i]
                    zi = z[i]
                    vi = v[i]
                    jstart = i + 1 if o < 0 else b0
                    cand += b1 - jstart
                    for j in range(jstart, b1):
                        dx = x[j] - xi
                        dy = y[j] - yi
                        dz = z[j] - zi
                        d2 = dx * dx + dy * dy + dz * dz
                        if d2 > maxd2:
                            continue
                        d = math.sqrt(d2)
                        if not omni:
                            if d2 == 0.0:
                                continue
                            dot = dx * ux + dy * uy + dz * uz
                            if abs(dot) < d * cos_tol:
                                continue
                            if use_band and d2 - dot * dot > band2:
                                continue
                        kmin = int(math.floor((d - tol) / lag))
                        kmax = int(math.ceil((d + tol) / lag))
                        if kmin < 1:
                            kmin = 1
                        if kmax > n_lags:
                            kmax = n_lags
                        if kmin > kmax:
                            continue
                        if dz > 0.0 or (dz == 0.0 and (dx < 0.0 or (dx == 0.0 and dy < 0.0))):
                            dx = -dx
                            dy = -dy
                            dz = -dz
                            h = vi
                            t = v[j]
                        else:
                            h = v[j]
                            t = vi
                        filled = False
                        for k in range(kmin, kmax + 1):
                            if k * lag - tol < d and d <= k * lag + tol:
                                if not filled:
                                    _pair_values(vals, d, h, t, dx, dy, dz)
                                    filled = True
                                kept += 1
                                base = k * NCH
                                for ch in range(NCH):
                                    acc[c, base + ch] += vals[ch]
        stats[c, 0] += cand
        stats[c, 1] += kept


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
