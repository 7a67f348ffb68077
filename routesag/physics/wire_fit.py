"""Robust fit of the exact inclined catenary to surveyed wire points of one span.

Frame: the vertical plane of the span's chord. ``along_m`` is the horizontal
distance from attachment A along the chord, ``z_m`` the elevation. The wire
between A at ``(0, z_a)`` and B at ``(S, z_b)`` hangs as the catenary of
constant ``c = H / w`` (:mod:`routesag.physics.catenary`); the fit finds ``c``
and, with free attachments, ``z_a`` and ``z_b`` (the clamp heights a survey
gives are uncertain by decimetres, and a wrong clamp height biases ``c``).

The fit is a robust non-linear least squares (soft-L1 loss, so LiDAR
outliers such as birds, vegetation or the wrong wire weigh little), then
points further than a threshold from the curve are rejected as outliers and
the fit is repeated on the rest.

References
----------
.. [1] Irvine, H.M., Cable Structures, MIT Press, 1981, ch. 1 (the inelastic
   catenary between supports at different heights).
.. [2] Virtanen, P. et al., "SciPy 1.0: fundamental algorithms for scientific
   computing in Python", Nature Methods 17, 2020 (``least_squares``, the
   trust-region reflective method and the soft-L1 loss).
.. [3] Huber, P.J. and Ronchetti, E.M., Robust Statistics, 2nd ed., Wiley,
   2009, ch. 5 (the median absolute deviation, 1.4826 MAD as a consistent
   estimate of the standard deviation of normal residuals).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from .catenary import catenary_z, low_point_x, midspan_sag

__all__ = ["FitSettings", "CatenaryFit", "fit_catenary", "coverage", "section_tension"]

#: 1.4826 MAD estimates the standard deviation of normal residuals [3].
MAD_TO_SIGMA = 1.4826


@dataclass(frozen=True)
class FitSettings:
    """Thresholds of the fit and of its quality flag.

    Attributes
    ----------
    attachments : str
        ``"free"`` (fit z_a and z_b) or ``"fixed"`` (hold them).
    loss_scale_m : float
        Residual size where the soft-L1 loss turns from quadratic to linear [m].
    outlier_m : float
        Smallest residual rejected as an outlier [m]; the threshold is the
        larger of this and ``outlier_sigmas`` robust standard deviations.
    outlier_sigmas : float
        Outlier threshold in robust standard deviations [-].
    min_points : int
        Fewer used points than this: ``failed``.
    cover_radius_m : float
        A metre of span is covered when a used point lies this close along it [m].
    min_half_coverage : float
        Each half of the span needs this share covered, else ``weak`` (one-sided).
    min_coverage : float
        Share of the whole span that must be covered, else ``weak``.
    max_rms_m : float
        RMS of used residuals above this: ``weak``.
    """

    attachments: str = "free"
    loss_scale_m: float = 0.1
    outlier_m: float = 0.3
    outlier_sigmas: float = 4.0
    min_points: int = 10
    cover_radius_m: float = 2.0
    min_half_coverage: float = 0.25
    min_coverage: float = 0.5
    max_rms_m: float = 0.15


@dataclass(frozen=True)
class CatenaryFit:
    """Result of one span's fit. Lengths [m]; ``None``/NaN values when the fit failed."""

    catenary_m: float
    catenary_sigma_m: float     # one standard deviation of c from the fit's Jacobian [m]
    z_a_m: float                # attachment A elevation (fitted or fixed) [m]
    z_b_m: float
    span_m: float
    rms_m: float                # RMS of residuals of the used points [m]
    n_points: int               # points given
    n_used: int
    n_outliers: int
    coverage: float             # share of the span covered [-]
    both_halves: bool
    low_point_along_m: float    # horizontal distance of the lowest point of the curve in 0..S from A [m]
    low_point_m: float          # its elevation [m]
    sag_m: float                # mid-span sag below the chord [m]
    quality: str                # "good", "weak" or "failed"
    reason: str
    residual_m: np.ndarray      # residual of every given point (z - curve) [m]; NaN when failed
    used: np.ndarray            # bool mask of the used points

    def z(self, along_m):
        """Elevation of the fitted curve at ``along_m`` [m]."""
        return self.z_a_m + catenary_z(along_m, self.span_m, self.z_b_m - self.z_a_m, self.catenary_m)

    def horizontal_tension_n(self, weight_n_m: float) -> float:
        """``H = c w`` for the wire's bare weight per metre ``weight_n_m`` [N/m] [N]."""
        return self.catenary_m * weight_n_m


def coverage(along_m, span_m, radius_m=2.0):
    """Share of ``0..S`` within ``radius_m`` of a point, overall and per half.

    Parameters
    ----------
    along_m : array
        Positions of the points along the span [m].
    span_m : float
        Horizontal span [m].
    radius_m : float
        Cover radius [m].

    Returns
    -------
    tuple of float
        (whole span, first half, second half) shares [-].
    """
    along = np.sort(np.asarray(along_m, dtype=float))
    stations = np.linspace(0.0, span_m, max(int(math.ceil(span_m / 0.25)) + 1, 3))
    if along.size == 0:
        return 0.0, 0.0, 0.0
    i = np.clip(np.searchsorted(along, stations), 1, along.size) - 1
    nearest = np.minimum(np.abs(along[i] - stations), np.abs(along[np.minimum(i + 1, along.size - 1)] - stations))
    covered = nearest <= radius_m
    first = stations <= span_m / 2.0
    return float(covered.mean()), float(covered[first].mean()), float(covered[~first].mean())


def fit_catenary(along_m, z_m, span_m, z_a_m, z_b_m, settings: FitSettings = FitSettings()) -> CatenaryFit:
    """Fit the exact inclined catenary to the points of one wire in one span.

    Parameters
    ----------
    along_m : array
        Horizontal distance of each point from attachment A along the chord [m].
    z_m : array
        Elevation of each point [m].
    span_m : float
        Horizontal span between the attachments [m].
    z_a_m, z_b_m : float
        Attachment elevations [m]: held with ``attachments="fixed"``, the
        starting values otherwise.
    settings : FitSettings

    Returns
    -------
    CatenaryFit
        With ``quality`` ``failed`` (too few points, not converged), ``weak``
        (one-sided or low coverage, high RMS) or ``good``, and the reason.

    References
    ----------
    .. [1] Irvine, Cable Structures, 1981, ch. 1.
    .. [2] SciPy ``least_squares`` with ``loss="soft_l1"`` (Virtanen et al. 2020).
    """
    along = np.asarray(along_m, dtype=float)
    z = np.asarray(z_m, dtype=float)
    n = along.size
    if n < settings.min_points:
        return _failed(n, span_m, z_a_m, z_b_m, f"too few points ({n} < {settings.min_points})")
    free = settings.attachments == "free"
    start = _start(along, z, span_m, z_a_m, z_b_m)
    used = np.ones(n, dtype=bool)
    for _ in range(3):  # fit, reject outliers, refit until the used set settles
        result = _solve(along[used], z[used], span_m, z_a_m, z_b_m, free, start, settings.loss_scale_m)
        if not result.success:
            return _failed(n, span_m, z_a_m, z_b_m, f"fit not converged ({result.message})")
        start = np.concatenate([result.x, start[result.x.size:]])
        residual = z - _curve(result.x, along, span_m, z_a_m, z_b_m, free)
        sigma = MAD_TO_SIGMA * float(np.median(np.abs(residual[used] - np.median(residual[used]))))
        keep = np.abs(residual) <= max(settings.outlier_m, settings.outlier_sigmas * sigma)
        if np.array_equal(keep, used) or keep.sum() < settings.min_points:
            break
        used = keep
    return _result(result, along, residual, used, span_m, z_a_m, z_b_m, free, settings)


def _params(x, z_a_m, z_b_m, free):
    c = math.exp(x[0])
    return (c, x[1], x[2]) if free else (c, z_a_m, z_b_m)


def _curve(x, along, span_m, z_a_m, z_b_m, free):
    c, za, zb = _params(x, z_a_m, z_b_m, free)
    return za + catenary_z(along, span_m, zb - za, c)


def _solve(along, z, span_m, z_a_m, z_b_m, free, start, loss_scale_m):
    # log c keeps c positive and the problem well scaled; the bounds (sag about 1/6 of the span down to
    # a wire practically straight) keep sinh from overflowing on a wild trial step
    low = np.array([math.log(span_m / 4.0), -np.inf, -np.inf])
    high = np.array([math.log(1000.0 * span_m), np.inf, np.inf])
    x0 = start if free else start[:1]
    return least_squares(lambda x: _curve(x, along, span_m, z_a_m, z_b_m, free) - z,
                         np.clip(x0, low[:x0.size] + 1e-9, high[:x0.size] - 1e-9),
                         bounds=(low[:x0.size], high[:x0.size]), loss="soft_l1", f_scale=loss_scale_m,
                         x_scale="jac", max_nfev=200)


def _start(along, z, span_m, z_a_m, z_b_m):
    """Starting c from a parabola through the points (``z'' = 1/c``), clipped to credible values."""
    curvature = np.polyfit(along, z, 2)[0] * 2.0 if np.ptp(along) > 0.2 * span_m else 0.0
    c0 = 1.0 / curvature if curvature > 1.0 / (100.0 * span_m) else 100.0 * span_m
    c0 = float(np.clip(c0, span_m / 20.0, 100.0 * span_m))
    return np.array([math.log(c0), z_a_m, z_b_m])


def _result(result, along, residual, used, span_m, z_a_m, z_b_m, free, s: FitSettings) -> CatenaryFit:
    c, za, zb = _params(result.x, z_a_m, z_b_m, free)
    rms = float(np.sqrt(np.mean(residual[used] ** 2)))
    whole, first, second = coverage(along[used], span_m, s.cover_radius_m)
    both = first >= s.min_half_coverage and second >= s.min_half_coverage
    x_low = float(np.clip(low_point_x(span_m, zb - za, c), 0.0, span_m))
    quality, reason = _grade(rms, whole, both, s)
    return CatenaryFit(
        catenary_m=c, catenary_sigma_m=c * _log_sigma(result, rms, used.sum()), z_a_m=za, z_b_m=zb,
        span_m=float(span_m), rms_m=rms, n_points=int(along.size), n_used=int(used.sum()),
        n_outliers=int((~used).sum()), coverage=whole, both_halves=bool(both), low_point_along_m=x_low,
        low_point_m=float(za + catenary_z(x_low, span_m, zb - za, c)),
        sag_m=float(midspan_sag(span_m, zb - za, c)), quality=quality, reason=reason,
        residual_m=residual, used=used)


def _grade(rms, whole, both, s: FitSettings):
    reasons = []
    if not both:
        reasons.append("one-sided coverage")
    if whole < s.min_coverage:
        reasons.append(f"coverage {whole:.0%} < {s.min_coverage:.0%}")
    if rms > s.max_rms_m:
        reasons.append(f"rms {rms:.2f} m > {s.max_rms_m:g} m")
    return ("weak", "; ".join(reasons)) if reasons else ("good", "")


def _log_sigma(result, rms, n_used):
    """Standard deviation of log c from ``(J^T J)^-1 rms^2`` [-]; inf when singular."""
    jac = result.jac
    try:
        cov = np.linalg.inv(jac.T @ jac) * rms ** 2 * n_used / max(n_used - jac.shape[1], 1)
    except np.linalg.LinAlgError:
        return math.inf
    return float(math.sqrt(max(cov[0, 0], 0.0)))


def _failed(n, span_m, z_a_m, z_b_m, reason) -> CatenaryFit:
    nan = math.nan
    return CatenaryFit(nan, nan, z_a_m, z_b_m, float(span_m), nan, int(n), 0, 0, 0.0, False, nan, nan, nan,
                       "failed", reason, np.full(int(n), nan), np.zeros(int(n), dtype=bool))


def section_tension(tensions_n, sigmas_n):
    """One horizontal tension for a tension section from its spans' fits.

    All spans of a section share one horizontal tension at one temperature
    (ruling-span assumption), so the estimate is the weighted least-squares
    (inverse-variance) mean of the span values; the spread shows a section
    that does not share one tension.

    Parameters
    ----------
    tensions_n : array
        Horizontal tension of each good fit [N].
    sigmas_n : array
        Its standard deviation [N] (weights ``1/sigma^2``; non-finite or zero
        sigmas get the weight of the best fit).

    Returns
    -------
    tuple of float
        (estimate [N], spread (max - min) / estimate [%]); NaN for no fit.

    References
    ----------
    .. [1] Taylor, J.R., An Introduction to Error Analysis, 2nd ed., University
       Science Books, 1997, ch. 7 (the weighted average).
    """
    h = np.asarray(tensions_n, dtype=float)
    if h.size == 0:
        return math.nan, math.nan
    sigma = np.asarray(sigmas_n, dtype=float)
    ok = np.isfinite(sigma) & (sigma > 0)
    floor = sigma[ok].min() if ok.any() else 1.0
    weight = 1.0 / np.where(ok, sigma, floor) ** 2
    estimate = float(np.sum(weight * h) / np.sum(weight))
    return estimate, float(100.0 * np.ptp(h) / estimate)
