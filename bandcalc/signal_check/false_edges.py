"""False edges from noise, predicted by Rice's formula: parked at a point, and at each crossing.

Rice's formula (S. O. Rice, "Mathematical analysis of random noise", *Bell System Technical
Journal* 23 (1944) 282-332 and 24 (1945) 46-156): a stationary Gaussian process with spectral
moments m0 and m2 (angular frequency) crosses a level h above or below its mean, in one direction,

    nu(h) = sqrt(m2 / m0) / (2 pi) * exp(-h^2 / (2 m0))   times per second.

The same argument, about a known moving mean s(t) with slope s'(t) (the noise and its derivative
are independent, each Gaussian), gives the intensity of crossings of a level u, with
sigma = sqrt(m0), sigma' = sqrt(m2) and r = s' / sigma':

    upward:    phi((u - s) / sigma) / sigma * (sigma' phi(r) + s' Phi(r))
    downward:  phi((u - s) / sigma) / sigma * (sigma' phi(r) - s' Phi(-r))

(phi, Phi: the standard normal density and distribution).  With s' = 0 both reduce to nu(h);
without noise they are the signal's own crossings.  From these:

* **Parked** (:func:`parked_rate`): the input held at the upper point, the stage in its
  input-high state; a false edge comes with every downward crossing of the lower point, a
  distance h (the hysteresis) below.  Hum moves the mean: the rate is the intensity averaged over
  one hum period.
* **Per crossing** (:func:`extra_edges_per_crossing`): the signal passes through the band at
  slope k.  The stage is a two-state process: it leaves the input-low state when the input
  crosses the upper point upward, the input-high state when it crosses the lower point downward.
  Taking those crossings, in each state, as a Poisson stream whose intensity is the crossing
  intensity above divided by the chance that the input is on the state's side of the point,
  the chance p(t) of the input-high state follows

      dp/dt = a(t) (1 - p) - b(t) p,   a = up(U) / P(x < U),   b = down(L) / P(x > L),

  and the expected number of edges over the passage is the integral of a (1 - p) + b p.  One
  edge is wanted; the rest are extra.  (Derivation and limits: docs/methods.md.)

Simplifications, stated wherever results are shown (:data:`SIMPLIFICATIONS`): the noise is
Gaussian, stationary, flat up to its bandwidth and nothing above; the filter is first order; hum
is a sine with harmonics; crossings in each state are a Poisson stream (an upper estimate where
false edges are rare); the signal passes each point as a straight ramp at its slope there.
"""

from __future__ import annotations

import math

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.signal_check.disturbance import Hum, NoiseSpectrum
from bandcalc.signal_check.first_order import decaying_sum
from bandcalc.signal_check.normal import normal_cdf, normal_pdf, normal_sf

__all__ = [
    "SECONDS_PER_YEAR",
    "SIMPLIFICATIONS",
    "crossing_rate",
    "extra_edges_per_crossing",
    "mean_path_crossings",
    "parked_rate",
    "passage_edges",
]

SECONDS_PER_YEAR = 365.25 * 86400.0
"""A Julian year, s."""

SIMPLIFICATIONS = (
    "Noise is taken as Gaussian and stationary, flat from 0 to its bandwidth and nothing above.",
    "The input filter is first order (one pole); hum is a sine at the mains frequency with its "
    "harmonics, not noise.",
    "False-edge rates follow Rice's formula; the expected edges per crossing take the crossings in "
    "each state as a Poisson stream (an upper estimate where false edges are rare), with the signal "
    "passing each point as a straight ramp at its slope there.",
)

_WINDOW_SIGMAS = 10.0  # beyond 10 sigma from both points the crossing intensity is below e^-50
_CELLS = (300, 150, 300)  # cells of the passage: about the lower point, between, about the upper
_HUM_PHASES = 16  # hum phases averaged in a passage
_FINEST_HUM_STEP = 2.0**-10  # noise below 1/1024 of the hum's span is taken as that much


def crossing_rate(noise: NoiseSpectrum, distance: np.ndarray | float) -> np.ndarray:
    """Rice: crossings per second, in one direction, of a level ``distance`` from the noise's mean.

    Uses the spectrum after the filter (``noise.pole``); 0 without noise.
    """
    d = np.asarray(distance, dtype=np.float64)
    if noise.m0 == 0.0:
        return np.zeros_like(d)
    with np.errstate(under="ignore"):
        return noise.zero_crossing_frequency * np.exp(-d * d / (2.0 * noise.m0))


def mean_path_crossings(level: float | np.ndarray, mean: np.ndarray, slope: np.ndarray,
                        sigma: np.ndarray | float, sigma_slope: np.ndarray | float,
                        upward: bool) -> np.ndarray:
    """Intensity (per second) of crossings of ``level`` by Gaussian noise about a moving mean.

    Rice's argument about a mean ``mean`` moving at ``slope`` (unit/s), noise of RMS ``sigma``
    whose slope has RMS ``sigma_slope``; see the module's docstring.  Arrays broadcast.
    """
    sd = np.asarray(sigma_slope, dtype=np.float64)
    s = np.asarray(sigma, dtype=np.float64)
    k = np.asarray(slope, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore", under="ignore"):
        r = np.where(sd > 0, k / sd, np.sign(k) * np.inf)
        drift = k * normal_cdf(r) if upward else -k * normal_sf(r)
        spread = np.where(sd > 0, sd * normal_pdf(r), 0.0)
        density = normal_pdf((np.asarray(level) - mean) / s) / s
        return density * np.maximum(spread + drift, 0.0)


def _hum_sigma(noise: NoiseSpectrum, hum: Hum) -> tuple[float, float]:
    """(sigma, sigma') for averaging over the hum's phase: at least 1/1024 of the hum's span, so
    that the phase grid resolves each crossing; sigma' keeps the noise's own ratio to sigma."""
    sigma, sigma_d = math.sqrt(noise.m0), math.sqrt(noise.m2)
    floor = _FINEST_HUM_STEP * hum.span() if hum.present else 0.0
    if sigma >= floor:
        return sigma, sigma_d
    ratio = sigma_d / sigma if sigma > 0 else 2.0 * math.pi * noise.bandwidth / math.sqrt(3.0)
    return floor, floor * ratio


def _phases(hum: Hum, sigma: float) -> np.ndarray:
    """Times over one hum period, fine enough for crossings of width ``sigma``."""
    # The hum moves at most pi x span / n between phases: a fifth of sigma or less.
    n = 256 if not hum.present else int(np.clip(16.0 * hum.span() / max(sigma, 1e-300), 256, 1 << 14))
    return (np.arange(n) + 0.5) / (n * hum.frequency)


def parked_rate(noise: NoiseSpectrum, hysteresis: np.ndarray | float, hum: Hum | None = None,
                *, upward: bool = False) -> np.ndarray:
    """False switchings per second with the input parked at one point (Rice).

    The input is held at the upper point and the stage is input-high; each downward crossing of
    the lower point, ``hysteresis`` below, switches it (``upward=True``: held at the lower point,
    upward crossings of the upper one).  Noise and hum as at the stage (after the filter: pass
    ``noise`` with its pole and ``hum.filtered(noise)``).  Without hum this is
    :func:`crossing_rate` at the hysteresis; with hum, the intensity about the moving mean,
    averaged over one hum period.
    """
    h = np.asarray(hysteresis, dtype=np.float64)
    if hum is None or not hum.present:
        return crossing_rate(noise, h)
    sigma, sigma_d = _hum_sigma(noise, hum)
    t = _phases(hum, sigma)
    level = h[..., None] if upward else -h[..., None]
    rate = mean_path_crossings(level, hum.at(t), hum.slope_at(t), sigma, sigma_d, upward)
    return rate.mean(axis=-1)


def _passage_grid(h: np.ndarray, sigma: np.ndarray, reach: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Cell middles and widths of the input's mean over a passage through the band, per case.

    The band is centred on 0 (lower point -h/2, upper +h/2).  Dense cells reach 10 sigma and the
    hum's reach either side of each point; coarser ones cross the middle, where both points are
    far away.
    """
    w = _WINDOW_SIGMAS * sigma + reach
    lower, upper = -0.5 * h, 0.5 * h
    stops = (lower - w, np.minimum(lower + w, 0.0), np.maximum(upper - w, 0.0), upper + w)
    parts = [stops[0][:, None]]
    for a, b, cells in zip(stops[:-1], stops[1:], _CELLS, strict=True):
        u = np.arange(1, cells + 1) / cells
        parts.append(a[:, None] + (b - a)[:, None] * u[None, :])
    bounds = np.concatenate(parts, axis=1)
    return 0.5 * (bounds[:, 1:] + bounds[:, :-1]), np.diff(bounds, axis=1)


def _ratio(top: np.ndarray, bottom: np.ndarray) -> np.ndarray:
    """top / bottom, where a vanishing ``bottom`` (the input surely past the point) gives a hazard
    so large that the state changes within the cell."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(bottom > 0.0, top / np.where(bottom > 0.0, bottom, 1.0), 1e300)


def passage_edges(h: np.ndarray, slope: np.ndarray, sigma: np.ndarray, sigma_slope: np.ndarray,
                  hum_path: np.ndarray | None = None, hum_slope: np.ndarray | None = None) -> np.ndarray:
    """Expected edges while the input's mean passes once through the band (wanted: 1).

    Arrays of cases (1-D, broadcast together): hysteresis ``h``, the mean's slope ``slope``
    (unit/s, its size counts), the noise's RMS ``sigma`` and its slope's RMS ``sigma_slope`` at the
    stage.  ``hum_path`` and ``hum_slope`` (cases x phases) are the hum over one period at the
    stage, averaged over.  The two-state process of the module's docstring, integrated exactly
    over cells in which the hazards are held constant (:func:`decaying_sum`).
    """
    h, k, sigma, sigma_d = (np.atleast_1d(np.asarray(x, dtype=np.float64)) for x in
                            np.broadcast_arrays(h, np.abs(slope), sigma, sigma_slope))
    cases = h.size
    if hum_path is None:
        hum_path = hum_slope = np.zeros((cases, 1))
    reach = np.abs(hum_path).max(axis=1)
    mid, width = _passage_grid(h, sigma, reach)
    dt = width / k[:, None]
    mean = mid[:, :, None] + hum_path[:, None, :]
    moving = k[:, None, None] + hum_slope[:, None, :]
    s3, sd3 = sigma[:, None, None], sigma_d[:, None, None]
    upper, lower = (0.5 * h)[:, None, None], (-0.5 * h)[:, None, None]
    up = mean_path_crossings(upper, mean, moving, s3, sd3, True).mean(axis=2)
    down = mean_path_crossings(lower, mean, moving, s3, sd3, False).mean(axis=2)
    a = _ratio(up, normal_cdf((upper - mean) / s3).mean(axis=2))
    b = _ratio(down, normal_cdf((mean - lower) / s3).mean(axis=2))
    lam = a + b
    with np.errstate(invalid="ignore", over="ignore"):
        rho_a = np.where(lam > 0, a / np.where(lam > 0, lam, 1.0), 0.0)
        rho_b = np.where(lam > 0, b / np.where(lam > 0, lam, 1.0), 0.0)
        decay = np.minimum(lam * dt, 1e3)
    q = -np.expm1(-decay)
    first = decay.copy()
    first[:, 0] = 1e3  # each case starts in the input-low state
    p = decaying_sum(first.reshape(-1), (q * rho_a).reshape(-1)).reshape(cases, -1)
    before = np.concatenate((np.zeros((cases, 1)), p[:, :-1]), axis=1)
    with np.errstate(over="ignore", invalid="ignore"):
        flux = 2.0 * b * rho_a * dt + (rho_b - rho_a) * (before - rho_a) * q
    return np.nansum(flux, axis=1)


def _hum_arrays(hum: Hum | None, sigma: float,
                finest: float) -> tuple[np.ndarray | None, np.ndarray | None, float]:
    if hum is None or not hum.present:
        return None, None, sigma
    t = (np.arange(_HUM_PHASES) + 0.5) / (_HUM_PHASES * hum.frequency)
    return hum.at(t)[None, :], hum.slope_at(t)[None, :], max(sigma, finest * hum.span())


def extra_edges_per_crossing(noise: NoiseSpectrum, hysteresis: np.ndarray | float,
                             slope: np.ndarray | float, hum: Hum | None = None) -> np.ndarray:
    """Expected extra edges each time the signal passes a point at ``slope`` (unit/s).

    ``noise`` and ``hum`` as at the stage (after the filter).  0 without noise or hum; the
    signal passes the band as a straight ramp at ``slope`` (see the module's docstring).
    """
    h = np.atleast_1d(np.asarray(hysteresis, dtype=np.float64))
    k = np.atleast_1d(np.abs(np.asarray(slope, dtype=np.float64)))
    if (k <= 0).any() or not np.isfinite(k).all():
        raise BandcalcError("slope: the signal's slope at a point must be a finite number other than 0")
    path, moving, sigma = _hum_arrays(hum, math.sqrt(noise.m0), 1.0 / 256.0)
    if sigma == 0.0:
        return np.zeros(np.broadcast(h, k).shape)
    sigma_d = sigma * (math.sqrt(noise.m2 / noise.m0) if noise.m0 > 0
                       else 2.0 * math.pi * noise.bandwidth / math.sqrt(3.0))
    h, k = np.broadcast_arrays(h, k)
    if path is not None:
        path, moving = np.repeat(path, h.size, axis=0), np.repeat(moving, h.size, axis=0)
    edges = passage_edges(h.reshape(-1), k.reshape(-1), sigma, sigma_d, path, moving)
    return np.maximum(edges - 1.0, 0.0).reshape(h.shape)
