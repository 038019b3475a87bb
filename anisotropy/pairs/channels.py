"""Channels of the pair sums: which the estimators read, which are kept together, and
the head-tail turn of bins whose canonical lag points against a direction."""

from __future__ import annotations

import numpy as np

from ..constants import CHANNEL_INDEX as CH
from ..constants import CHANNELS
from ..errors import InputError
from . import _kernels

#: Channels every set of bins keeps (pair count, mean distance, mean lag vector).
CORE_CHANNELS = ("count", "dist", "dx", "dy", "dz")
#: Channels that are kept or dropped together in block and map sums.
CHANNEL_GROUPS = (("sq",), ("abs",), ("sqrt",), ("head", "tail", "head2", "tail2", "cross"),
                  ("rel", "rel_n"))
#: Channels each estimator reads (besides the core), see ``anisotropy.estimators``.
ESTIMATOR_CHANNELS = {"semivariogram": ("sq",), "correlogram": ("head", "tail", "head2", "tail2", "cross"),
                      "pairwise_relative": ("rel", "rel_n"), "madogram": ("abs",), "robust": ("sqrt",)}


def against_cells(sums, directions, U) -> np.ndarray:
    """Fine cells whose pairs' canonical lag points against each direction, (n_dir, n_fine).

    Read from the cell's summed canonical lag vector (channels dx, dy, dz
    over every class), and from the cell axis where the cell is empty. The
    summed vector, not the axis, decides because a cell on the rim of the
    lattice (near-horizontal lags) may be filed under an axis pointing the
    other way round (axes are undirected; the canonical lag of an exactly
    horizontal pair has x > 0 whatever its cell). A rim cell holding pairs of
    both orientations (lags within a fraction of a cell of the horizontal,
    above and below it) cannot be split from its sums; its minority keeps
    the other orientation.
    """
    M = np.asarray(sums, dtype=np.float64)[..., [CH["dx"], CH["dy"], CH["dz"]]].sum(axis=0)
    empty = ~np.any(M != 0.0, axis=1)
    M[empty] = np.asarray(directions, dtype=np.float64)[empty]
    return np.atleast_2d(np.asarray(U, dtype=np.float64)) @ M.T < 0.0


def turn_round(out, against, sums, subscripts):
    """Swap head and tail (and their squares) of the bins ``against`` in summed channels.

    A directional variogram gathers bins whose canonical lag can point either
    way along its direction (a cone crossing the horizontal). Its head must be
    the sample further along the direction, so in the bins whose canonical lag
    points against it head and tail are exchanged (issue 17). ``out`` holds
    the gathered sums (channels last) and is changed in place:
    ``out[..., head] += einsum(subscripts, against, sums[..., tail] -
    sums[..., head])`` and ``out[..., tail]`` loses the same (likewise head2,
    tail2); cross, the squared differences and every other channel are
    symmetric in the two samples and are left alone.

    Returns
    -------
    ndarray
        ``out``.
    """
    w = np.asarray(against, dtype=np.float64)
    if not w.any() or np.isnan(sums[..., CH["head"]]).all():   # no head/tail channels kept
        return out
    for h, t in ((CH["head"], CH["tail"]), (CH["head2"], CH["tail2"])):
        d = np.einsum(subscripts, w, sums[..., t] - sums[..., h])
        out[..., h] += d
        out[..., t] -= d
    return out


def resolve_channels(spec) -> tuple:
    """Channels kept by block or map sums for a ``block_channels``/``map_channels`` value.

    None or "all": every channel. An estimator name (or a list of them): the
    core channels (count, dist, dx, dy, dz) plus what those estimators read.
    A list of channel names: the core plus the groups holding them (sq; abs;
    sqrt; head, tail, head2, tail2, cross; rel, rel_n). Returned in
    ``CHANNELS`` order.
    """
    if spec is None or (isinstance(spec, str) and spec == "all"):
        return CHANNELS
    items = [spec] if isinstance(spec, str) else list(spec)
    want = set(CORE_CHANNELS)
    for it in items:
        if it in ESTIMATOR_CHANNELS:
            want.update(ESTIMATOR_CHANNELS[it])
        elif it in CH:
            want.add(it)
        else:
            raise InputError(
                f"unknown channel or estimator {it!r} for the volume channels; use None, 'all', "
                f"estimator names {tuple(ESTIMATOR_CHANNELS)} or channel names {CHANNELS}.")
    for grp in CHANNEL_GROUPS:
        if want.intersection(grp):
            want.update(grp)
    return tuple(c for c in CHANNELS if c in want)


def _columns(kept):
    """Column of each channel in a compact accumulator row (-1 = dropped), and the row width."""
    cols = np.full(len(CHANNELS), -1, dtype=np.int64)
    for i, name in enumerate(kept):
        cols[CH[name]] = i
    width = 8 if len(kept) <= 8 else _kernels.NPAD
    return cols, width
