"""The linear and quadratic trend check of the grades against the coordinates."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from anisotropy.geometry import vector_to_line
from anisotropy.exploration.common import MIN_SAMPLES, TREND_R2_THRESHOLD, _coords_values, _f


@dataclass
class TrendCheck:
    """Linear and quadratic trend of the grade in x, y, z.

    Attributes
    ----------
    r2_linear, r2_quadratic : float or None
        Share of variance explained (ordinary least squares R^2).
    gradient : list of float
        Linear-trend gradient (grade per metre) along (east, north, up).
    gradient_trend, gradient_plunge : float or None
        The gradient as an undirected axis (lower hemisphere).
    rising_azimuth, rising_inclination : float or None
        Azimuth and inclination below horizontal (negative = upward) of the
        direction in which grade increases.
    material : bool
        True when either R^2 exceeds ``threshold``.
    threshold : float
    axes_used : list of str
    warning : str or None
    notes : list of str
    """

    r2_linear: float | None
    r2_quadratic: float | None
    gradient: list
    gradient_trend: float | None
    gradient_plunge: float | None
    rising_azimuth: float | None
    rising_inclination: float | None
    material: bool
    threshold: float = TREND_R2_THRESHOLD
    axes_used: list = field(default_factory=list)
    warning: str | None = None
    notes: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "r2_linear": _f(self.r2_linear), "r2_quadratic": _f(self.r2_quadratic),
            "gradient": [_f(g) for g in self.gradient],
            "gradient_per_100m": _f(100 * float(np.linalg.norm(self.gradient)))
            if self.gradient else None,
            "gradient_trend": _f(self.gradient_trend), "gradient_plunge": _f(self.gradient_plunge),
            "rising_azimuth": _f(self.rising_azimuth),
            "rising_inclination": _f(self.rising_inclination),
            "material": bool(self.material), "threshold": float(self.threshold),
            "threshold_basis": "judgement (common practice)",
            "axes_used": list(self.axes_used), "warning": self.warning,
            "method": "least squares on polynomial features of x, y, z (scikit-learn "
                      "PolynomialFeatures + LinearRegression), degree 1 and 2",
            "notes": list(self.notes),
        }


def trend_check(coords, values, *, threshold: float = TREND_R2_THRESHOLD) -> TrendCheck:
    """Fit linear and quadratic trends of the grade in x, y, z.

    Parameters
    ----------
    coords : array_like, shape (n, 3)
    values : array_like, shape (n,)
    threshold : float, default 0.1
        R^2 above which the trend is called material (a judgement; common
        practice is to look hard at a trend explaining more than about a
        tenth of the variance).

    Returns
    -------
    TrendCheck
        Axes without spread are left out; the quadratic fit is skipped when
        there are fewer than three samples per coefficient.
    """
    from sklearn.linear_model import LinearRegression
    from sklearn.preprocessing import PolynomialFeatures

    c, v = _coords_values(coords, values)
    names = np.array(["x", "y", "z"])
    spread = c.std(axis=0)
    active = spread > 0
    notes = []
    if not active.any() or v.size < MIN_SAMPLES or np.all(v == v[0]):
        notes.append("No trend fitted: the samples have no spatial spread or the grade is "
                     "constant.")
        return TrendCheck(None, None, [], None, None, None, None, False, threshold,
                          names[active].tolist(), None, notes)
    from threadpoolctl import threadpool_limits

    X = (c[:, active] - c[:, active].mean(axis=0)) / spread[active]
    d = int(active.sum())
    n_quad = d + d * (d + 1) // 2
    r2_quad = None
    # a thin least-squares problem: one BLAS thread is faster, above all on a busy machine
    with threadpool_limits(1):
        lin = LinearRegression().fit(X, v)
        r2_lin = float(lin.score(X, v))
        if v.size >= 3 * (n_quad + 1):
            Xq = PolynomialFeatures(degree=2, include_bias=False).fit_transform(X)
            r2_quad = float(LinearRegression().fit(Xq, v).score(Xq, v))
    grad = np.zeros(3)
    grad[active] = lin.coef_ / spread[active]
    if r2_quad is None:
        notes.append(f"Quadratic trend skipped: {v.size} samples for {n_quad + 1} coefficients.")
    g_trend = g_plunge = az = inc = None
    if np.linalg.norm(grad) > 0:

        g_trend, g_plunge = vector_to_line(grad)
        az = float(np.degrees(np.arctan2(grad[0], grad[1])) % 360.0)
        inc = float(np.degrees(np.arctan2(-grad[2], np.hypot(grad[0], grad[1]))))
    material = bool(r2_lin > threshold or (r2_quad is not None and r2_quad > threshold))
    warning = None
    if material:
        best = max(r2_lin, r2_quad or 0.0)
        kind = "quadratic" if (r2_quad or 0.0) > r2_lin else "linear"
        warning = (f"A {kind} trend explains {100 * best:.0f} % of the grade variance (more than "
                   f"{100 * threshold:.0f} %, a judgement): work on residuals from the trend, or "
                   "prefer the correlogram, which is less sensitive to a drifting mean.")
    return TrendCheck(r2_lin, r2_quad, grad.tolist(), g_trend, g_plunge, az, inc, material,
                      float(threshold), names[active].tolist(), warning, notes)
