"""Sample layouts with a known spacing, shared by the exploration tests (not a test module)."""

import numpy as np


def drill_layout(dx=25.0, dy=40.0, nx=6, ny=5, n_comp=30, comp=2.0, dip=60.0, shuffle_rng=None):
    """Parallel holes dipping east from a collar grid, composites every ``comp`` m."""
    d = np.array([np.cos(np.radians(dip)), 0.0, -np.sin(np.radians(dip))])
    coords, holes = [], []
    for i in range(nx):
        for j in range(ny):
            collar = np.array([dx * i, dy * j, 300.0])
            t = comp / 2 + comp * np.arange(n_comp)
            coords.append(collar + t[:, None] * d)
            holes += [f"FH{i:02d}{j:02d}"] * n_comp
    c, h = np.vstack(coords), np.array(holes, dtype=object)
    if shuffle_rng is not None:
        order = shuffle_rng.permutation(len(c))
        c, h = c[order], h[order]
    return c, h


def blast_layout(rng, burden=4.0, spacing=5.0, bench=10.0, n_bench=4, jitter=0.3):
    pts = []
    for k in range(n_bench):
        xx, yy = np.meshgrid(np.arange(0, 120, spacing), np.arange(0, 80, burden))
        z = np.full(xx.size, bench * k) + rng.uniform(-jitter, jitter, xx.size)
        pts.append(np.column_stack([xx.ravel(), yy.ravel(), z]))
    return np.vstack(pts)
