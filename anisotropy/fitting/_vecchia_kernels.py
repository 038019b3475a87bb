"""Compiled loops of the nearest-neighbour (Vecchia) likelihood and its gradient.

Used by :mod:`anisotropy.fitting.likelihood`; nothing here is public.

The model covariance between samples ``a`` and ``b`` at unit total sill is
``C(a, b) = f0 [a == b] + sum_k f_k rho_k(h_k)``, with ``f0`` the nugget
share, ``f_k`` the structure shares and ``h_k = |(y_a - y_b) F / r_k|`` the
scaled distance of structure ``k`` (frame ``F``, ranges ``r_k`` along its
columns; geometric anisotropy, Journel & Huijbregts 1978, ch. II). The
correlation functions are those of :func:`anisotropy.models.correlation`
(Chiles & Delfiner 2012, ch. 2).

Gradient.  For one conditioning set (neighbours ``N`` of sample ``i``) with
``Sigma = C_NN``, ``k = C_Ni``, ``w = Sigma^-1 k`` and ``b = Sigma^-1 y_N``,
the conditional variance and innovation are ``v = c0 - k.w`` and
``e = y_i - k.b``; differentiating the linear solves gives

    dv = dc0 - 2 w.dk + w' dSigma w,      de = -b.dk + w' dSigma b.

With ``q = sum e^2 / v`` and ``-log L = n/2 log(q/n) + 1/2 sum log v``, the
derivative is ``n / (2 q) Gq + Gl / 2`` with ``Gq = sum (2 e de / v - e^2 dv / v^2)``
and ``Gl = sum dv / v`` over the sets. Both are sums over sample pairs of a
weight (from ``w``, ``b``, ``e``, ``v``) times the derivatives of ``C(a, b)``.

With ``g(h) = rho'(h) / h`` and ``u = (y_a - y_b) F / r_k`` (so ``h_k = |u|``):

* ``dC / d log r_kd = -f_k g(h_k) u_d^2``;
* ``dC / dF_ed = (y_a - y_b)_e sum_k f_k g(h_k) u_kd / r_kd``;
* ``dC / df_k = rho_k(h_k)``, ``dC / df0 = [a == b]``.

Since ``y_a - y_b = F diag(r_k) u``, both the frame and the range derivatives
follow from the weighted moments ``M_k = sum w f_k g(h_k) u u'`` (six
numbers per structure) and ``sum w rho_k``: the kernel accumulates those
(thread-local, per fixed chunk) and the caller turns them into derivatives
by the frame entries, log ranges and shares (held independent here), then
chains them to the rotation vector and the share logits.

Derivatives of the correlation functions, from the formulas above:
spherical ``rho' = -3/2 + 3/2 h^2`` (``h < 1``); exponential
``rho' = -3 exp(-3 h)``; Gaussian ``rho' = -6 h exp(-3 h^2)``; cubic
``rho' = -(14 h - 105/4 h^2 + 35/2 h^4 - 21/4 h^6)`` (``h < 1``). Spherical and
cubic have ``rho'(1) = 0`` from the left, so the covariance is continuously
differentiable through the range. At zero distance (two samples at the same
place) ``h`` is 0 whatever the parameters, so the pair's frame and range
derivatives are exactly 0; ``g`` is set to 0 there (the exponential's and
spherical's ``g`` is unbounded as ``h -> 0`` but always multiplies a factor
of order ``h^2``).
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

#: Fixed number of work chunks of the likelihood terms (each sums its own
#: samples; the chunk sums are added in chunk order, so the value does not
#: depend on the number of threads).
TERM_CHUNKS = 16


@njit(cache=True)
def rho(code, h):
    # the formulas of anisotropy.models.correlation, repeated for the compiled loop
    if code == 0:
        return 1.0 - 1.5 * h + 0.5 * h ** 3 if h < 1.0 else 0.0
    if code == 1:
        return np.exp(-3.0 * h)
    if code == 2:
        return np.exp(-3.0 * h * h)
    if h >= 1.0:
        return 0.0
    h2 = h * h
    return 1.0 - (7.0 * h2 - 8.75 * h2 * h + 3.5 * h2 * h2 * h - 0.75 * h2 * h2 * h2 * h)


@njit(cache=True)
def slope_over_h(code, h):
    """``rho'(h) / h``; 0 at ``h == 0`` (see the module notes)."""
    if h <= 0.0:
        return 0.0
    if code == 0:
        return -1.5 / h + 1.5 * h if h < 1.0 else 0.0
    if code == 1:
        return -3.0 * np.exp(-3.0 * h) / h
    if code == 2:
        return -6.0 * np.exp(-3.0 * h * h)
    if h >= 1.0:
        return 0.0
    h2 = h * h
    return -(14.0 - 26.25 * h + 17.5 * h2 * h - 5.25 * h2 * h2 * h)


@njit(cache=True)
def cov(S, codes, shares, a, b):
    c = 0.0
    for k in range(S.shape[0]):
        d0 = S[k, a, 0] - S[k, b, 0]
        d1 = S[k, a, 1] - S[k, b, 1]
        d2 = S[k, a, 2] - S[k, b, 2]
        c += shares[k] * rho(codes[k], np.sqrt(d0 * d0 + d1 * d1 + d2 * d2))
    return c


@njit(cache=True, parallel=True)
def vecchia_terms(S, y, nbr, codes, shares, nugget):
    """(sum of squared standardised innovations, sum of log conditional variances)."""
    n, m = nbr.shape
    nc = TERM_CHUNKS
    qs = np.zeros(nc)
    lds = np.zeros(nc)
    bad = np.zeros(nc, dtype=np.int64)
    c0 = nugget + np.sum(shares)
    for c in prange(nc):
        A = np.empty((m, m))
        kv = np.empty(m)
        yv = np.empty(m)
        q = 0.0
        ld = 0.0
        for i in range(c * n // nc, (c + 1) * n // nc):
            k = 0
            for j in range(m):
                if nbr[i, j] >= 0:
                    k += 1
            # covariance of the neighbours and with the sample; Cholesky in place
            for r in range(k):
                a = nbr[i, r]
                kv[r] = cov(S, codes, shares, a, i)
                yv[r] = y[a]
                for t in range(r + 1):
                    A[r, t] = cov(S, codes, shares, a, nbr[i, t])
                A[r, r] += nugget
            if not cholesky_lower(A, k):
                bad[c] = 1
                break
            kk, ky = forward(A, k, kv, yv)
            var = c0 - kk
            if var <= 1e-12:
                bad[c] = 1
                break
            e = y[i] - ky
            q += e * e / var
            ld += np.log(var)
        qs[c] = q
        lds[c] = ld
    if bad.sum() > 0:
        return np.inf, np.inf
    qt = 0.0
    ldt = 0.0
    for c in range(nc):
        qt += qs[c]
        ldt += lds[c]
    return qt, ldt


@njit(cache=True)
def cholesky_lower(A, k):
    """Cholesky factor of the leading ``k x k`` lower triangle of ``A``, in place."""
    for r in range(k):
        s = A[r, r]
        for t in range(r):
            s -= A[r, t] * A[r, t]
        if s <= 1e-12:
            return False
        d = np.sqrt(s)
        A[r, r] = d
        for u in range(r + 1, k):
            s2 = A[u, r]
            for t in range(r):
                s2 -= A[u, t] * A[r, t]
            A[u, r] = s2 / d
    return True


@njit(cache=True)
def forward(A, k, kv, yv):
    """``L^-1 k`` and ``L^-1 y_N`` in place; returns ``|L^-1 k|^2`` and their dot."""
    kk = 0.0
    ky = 0.0
    for r in range(k):
        s = kv[r]
        s2 = yv[r]
        for t in range(r):
            s -= A[r, t] * kv[t]
            s2 -= A[r, t] * yv[t]
        kv[r] = s / A[r, r]
        yv[r] = s2 / A[r, r]
        kk += kv[r] * kv[r]
        ky += kv[r] * yv[r]
    return kk, ky


@njit(cache=True)
def backward(A, k, v):
    """``L^-T v`` in place."""
    for r in range(k - 1, -1, -1):
        s = v[r]
        for t in range(r + 1, k):
            s -= A[t, r] * v[t]
        v[r] = s / A[r, r]


@njit(cache=True)
def cov_keep(S, codes, shares, a, b, H, Rh, r, t):
    """As :func:`cov` (same arithmetic, same bits), keeping each structure's scaled
    distance and correlation in ``H[:, r, t]`` and ``Rh[:, r, t]`` for the gradient."""
    c = 0.0
    for k in range(S.shape[0]):
        d0 = S[k, a, 0] - S[k, b, 0]
        d1 = S[k, a, 1] - S[k, b, 1]
        d2 = S[k, a, 2] - S[k, b, 2]
        h = np.sqrt(d0 * d0 + d1 * d1 + d2 * d2)
        rk = rho(codes[k], h)
        H[k, r, t] = h
        Rh[k, r, t] = rk
        c += shares[k] * rk
    return c


@njit(cache=True)
def slope_kept(code, h, rk):
    """:func:`slope_over_h` from a kept correlation (same bits: the exponential's
    and Gaussian's slopes are multiples of the correlation itself)."""
    if h <= 0.0:
        return 0.0
    if code == 1:
        return -3.0 * rk / h
    if code == 2:
        return -6.0 * rk
    return slope_over_h(code, h)


@njit(cache=True)
def _set_grad(S, codes, shares, i, idx, k, w, bb, e, var, H, Rh, gq, gl):
    """One conditioning set's share of ``Gq`` and ``Gl`` (see the module notes).

    Per structure ``s`` the sums ``f_s g(h_s) u u'`` (entries 00, 11, 22, 01,
    02, 12) and ``rho_s(h_s)`` weighted by each pair's ``Gq`` and ``Gl``
    weights go to ``7 s .. 7 s + 6``, then the diagonal's weight to
    ``7 K``. The pairs are the neighbour pairs ``(r, t)``, ``t < r``, and each
    neighbour with the sample (column ``k`` of ``H`` and ``Rh``, as
    :func:`cov_keep` filled them).
    """
    K = S.shape[0]
    aq = -e * e / (var * var)  # weight of dv in Gq
    bq = 2.0 * e / var         # weight of de in Gq
    al = 1.0 / var             # weight of dv in Gl
    # dc0 and the diagonal of dSigma: 1 for every share (rho(0) = 1), 0 otherwise
    dq = aq
    dl = al
    for r in range(k):
        dq += w[r] * (aq * w[r] + bq * bb[r])
        dl += al * w[r] * w[r]
    gq[7 * K] += dq
    gl[7 * K] += dl
    for s in range(K):
        code = codes[s]
        f = shares[s]
        # fourteen scalars rather than a small array: the compiler keeps them in
        # registers; a 14-entry array here ran 10-60 % slower
        # (benchmarks/vecchia_kernel_cost.py, 2026-12-04)
        q0 = q1 = q2 = q3 = q4 = q5 = q6 = 0.0
        l0 = l1 = l2 = l3 = l4 = l5 = l6 = 0.0
        for r in range(k):
            a = idx[r]
            cr = aq * w[r] + bq * bb[r]
            for tt in range(r + 1):
                if tt == r:  # the neighbour with the sample: weight -(2 alpha w + beta b)
                    t, b = k, i
                    wq = -(cr + aq * w[r])
                    wl = -2.0 * al * w[r]
                else:
                    t, b = tt, idx[tt]
                    wq = w[r] * (aq * w[t] + bq * bb[t]) + w[t] * cr
                    wl = 2.0 * al * w[r] * w[t]
                u0 = S[s, a, 0] - S[s, b, 0]
                u1 = S[s, a, 1] - S[s, b, 1]
                u2 = S[s, a, 2] - S[s, b, 2]
                g = f * slope_kept(code, H[s, r, t], Rh[s, r, t])
                sq = wq * g
                sl = wl * g
                q0 += sq * u0 * u0
                q1 += sq * u1 * u1
                q2 += sq * u2 * u2
                q3 += sq * u0 * u1
                q4 += sq * u0 * u2
                q5 += sq * u1 * u2
                q6 += wq * Rh[s, r, t]
                l0 += sl * u0 * u0
                l1 += sl * u1 * u1
                l2 += sl * u2 * u2
                l3 += sl * u0 * u1
                l4 += sl * u0 * u2
                l5 += sl * u1 * u2
                l6 += wl * Rh[s, r, t]
        j = 7 * s
        gq[j] += q0
        gq[j + 1] += q1
        gq[j + 2] += q2
        gq[j + 3] += q3
        gq[j + 4] += q4
        gq[j + 5] += q5
        gq[j + 6] += q6
        gl[j] += l0
        gl[j + 1] += l1
        gl[j + 2] += l2
        gl[j + 3] += l3
        gl[j + 4] += l4
        gl[j + 5] += l5
        gl[j + 6] += l6


@njit(cache=True, parallel=True)
def vecchia_terms_grad(S, y, nbr, codes, shares, nugget):
    """As :func:`vecchia_terms`, with the raw gradients ``Gq`` and ``Gl``.

    Returns ``(q, ld, Gq, Gl, ok)``; the raw gradients hold ``7 K + 1``
    sums: per structure the layout of :func:`_set_grad`, then the weight of
    the diagonal (``dc0`` and ``diag dSigma``, 1 for every share). The value
    is computed with the same arithmetic as :func:`vecchia_terms` (same bits);
    the scaled distances and correlations of its covariances are kept
    (:func:`cov_keep`) and reused by the gradient.
    """
    n, m = nbr.shape
    K = S.shape[0]
    P = 7 * K + 1
    nc = TERM_CHUNKS
    qs = np.zeros(nc)
    lds = np.zeros(nc)
    gqs = np.zeros((nc, P))
    gls = np.zeros((nc, P))
    bad = np.zeros(nc, dtype=np.int64)
    c0 = nugget + np.sum(shares)
    for c in prange(nc):
        A = np.empty((m, m))
        kv = np.empty(m)
        yv = np.empty(m)
        idx = np.empty(m, dtype=np.int64)
        H = np.empty((K, m, m + 1))  # per structure: scaled distances and correlations
        Rh = np.empty((K, m, m + 1))  # of the set's pairs (column m: with the sample)
        gq = np.zeros(P)  # thread-local, copied out at the end of the chunk
        gl = np.zeros(P)
        q = 0.0
        ld = 0.0
        for i in range(c * n // nc, (c + 1) * n // nc):
            k = 0
            for j in range(m):
                if nbr[i, j] >= 0:
                    idx[k] = nbr[i, j]
                    k += 1
            for r in range(k):
                a = idx[r]
                kv[r] = cov_keep(S, codes, shares, a, i, H, Rh, r, k)
                yv[r] = y[a]
                for t in range(r + 1):
                    A[r, t] = cov_keep(S, codes, shares, a, idx[t], H, Rh, r, t)
                A[r, r] += nugget
            if not cholesky_lower(A, k):
                bad[c] = 1
                break
            kk, ky = forward(A, k, kv, yv)
            var = c0 - kk
            if var <= 1e-12:
                bad[c] = 1
                break
            e = y[i] - ky
            q += e * e / var
            ld += np.log(var)
            backward(A, k, kv)  # w = Sigma^-1 k
            backward(A, k, yv)  # b = Sigma^-1 y_N
            _set_grad(S, codes, shares, i, idx, k, kv, yv, e, var, H, Rh, gq, gl)
        qs[c] = q
        gqs[c] = gq
        gls[c] = gl
        lds[c] = ld
    gq = np.zeros(P)
    gl = np.zeros(P)
    if bad.sum() > 0:
        return np.inf, np.inf, gq, gl, False
    qt = 0.0
    ldt = 0.0
    for c in range(nc):
        qt += qs[c]
        ldt += lds[c]
        for j in range(P):
            gq[j] += gqs[c, j]
            gl[j] += gls[c, j]
    return qt, ldt, gq, gl, True
