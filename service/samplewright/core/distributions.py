"""Critical values and power of F tests, with the guarded numerics in one place.

Power of an F test with ``df1`` and ``df2`` degrees of freedom and noncentrality ``λ`` is

    power = P(F'(df1, df2, λ) > F_crit),   F_crit the upper-α point of the central F,

where F' is the noncentral F distribution (Johnson, Kotz & Balakrishnan, *Continuous
Univariate Distributions*, vol. 2, 2nd ed., 1995, ch. 30). Everything here is a numpy
ufunc-style function: scalars in, scalars out; arrays in, arrays out.

Numerical choices (each measured against a 50-digit mpmath series, see the tests):

* The upper tail is evaluated directly (never ``1 - cdf``, which cancels to 0 or NaN
  once the power is close to 1).
* At λ = 0 the power *is* α by definition; scipy's noncentral F survival function
  returns a negative number there, so the central case never reaches it.
* The noncentral F survival function of scipy (Boost's algorithm) loses accuracy when
  df2 is very large (relative error ~1e-9 at df2 ≈ 1e8) because it works with
  df2/(df2 + df1·x), which rounds near 1. Above ``LARGE_DF2`` we sum the Poisson
  mixture of complemented incomplete beta functions ourselves, with the argument
  df1·x/(df1·x + df2) that keeps full precision.
* Critical values start from the inverse incomplete beta and are polished by Newton
  steps on log(sf), so they stay accurate for α down to 1e-12 and for huge df2,
  where ``scipy.stats.f.isf`` loses digits.
"""

from __future__ import annotations

import numpy as np
from scipy import special

try:  # the ufunc behind scipy.stats.ncf.sf, ~20x cheaper than the distribution object
    from scipy.special._ufuncs import _ncf_sf as _boost_ncf_sf
except ImportError:  # pragma: no cover - older or future scipy layouts
    from scipy.stats import ncf as _ncf

    _boost_ncf_sf = _ncf.sf

#: Above this many denominator degrees of freedom the Poisson-mixture sum is used.
LARGE_DF2 = 1e6
#: Beyond this noncentrality at huge df2 the power is 1 to double precision for every
#: supported design (df1 ≤ 10^4), so the Boost value is used as is.
SERIES_MAX_NONCENTRALITY = 2e5


def central_f_sf(x, df1, df2):
    """Upper tail P(F(df1, df2) > x) of the central F, accurate in both regimes.

    P(F > x) = I_{1-z}(df2/2, df1/2) = 1 - I_z(df1/2, df2/2),  z = df1·x / (df1·x + df2),
    with the incomplete-beta argument chosen so that it never rounds near 1
    (Abramowitz & Stegun 26.6.2).
    """
    x, df1, df2 = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (x, df1, df2)))
    d1x = df1 * x
    z = d1x / (d1x + df2)
    one_minus_z = df2 / (d1x + df2)
    small_z = z < 0.5
    with np.errstate(all="ignore"):
        upper = np.where(
            small_z,
            special.betaincc(df1 / 2, df2 / 2, z),
            special.betainc(df2 / 2, df1 / 2, one_minus_z),
        )
    return upper[()] if upper.ndim == 0 else upper


def _central_f_logpdf(x, df1, df2):
    """log density of the central F (Abramowitz & Stegun 26.6.1)."""
    return (
        (df1 / 2) * np.log(df1 / df2)
        + (df1 / 2 - 1) * np.log(x)
        - ((df1 + df2) / 2) * np.log1p(df1 * x / df2)
        - special.betaln(df1 / 2, df2 / 2)
    )


def f_critical_value(alpha, df1, df2):
    """Upper-α point of the central F: the x with P(F(df1, df2) > x) = α.

    Start: P(F > x) = I_y(df2/2, df1/2) with y = df2/(df2 + df1·x), so
    y = I⁻¹(α; df2/2, df1/2) and x = df2(1 − y)/(df1·y); when y > 1/2 the complement
    1 − y = I_c⁻¹(α; df1/2, df2/2) is used instead so that 1 − y does not cancel.
    Then three Newton steps on log P(F > x) − log α, using the density, bring the
    tail probability at the returned value to α within a few units in the last place.
    """
    alpha, df1, df2 = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (alpha, df1, df2))
    )
    with np.errstate(all="ignore"):
        y = special.betaincinv(df2 / 2, df1 / 2, alpha)
        one_minus_y = special.betainccinv(df1 / 2, df2 / 2, alpha)
        x = np.where(
            y <= 0.5,
            df2 * (1 - y) / (df1 * y),
            df2 * one_minus_y / (df1 * (1 - one_minus_y)),
        )
        log_alpha = np.log(alpha)
        for _ in range(3):
            sf = central_f_sf(x, df1, df2)
            step = (np.log(sf) - log_alpha) * sf / np.exp(_central_f_logpdf(x, df1, df2))
            x = np.where(np.isfinite(step), x + step, x)
    return x[()] if x.ndim == 0 else x


def _ncf_sf_series(x: float, df1: float, df2: float, nc: float) -> float:
    """Noncentral F upper tail as a Poisson mixture, for very large df2.

    P(F' > x) = Σ_j e^{−λ/2} (λ/2)^j / j! · [1 − I_z(df1/2 + j, df2/2)],
    z = df1·x/(df1·x + df2) (Johnson, Kotz & Balakrishnan 1995, eq. 30.5). The sum is
    taken over the Poisson mode ± 13 standard deviations plus 30 terms, which leaves a
    truncated mass far below double precision.
    """
    half = nc / 2
    width = int(np.ceil(13 * np.sqrt(half) + 30))
    mode = np.floor(half)
    j = np.arange(max(0.0, mode - width), mode + width + 1)
    log_weight = -half + j * np.log(half) - special.gammaln(j + 1)
    z = df1 * x / (df1 * x + df2)
    return float(np.sum(np.exp(log_weight) * special.betaincc(df1 / 2 + j, df2 / 2, z)))


def noncentral_f_sf(x, df1, df2, nc):
    """Upper tail P(F'(df1, df2, λ) > x) of the noncentral F; λ = 0 gives the central F."""
    x, df1, df2, nc = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (x, df1, df2, nc))
    )
    with np.errstate(all="ignore"):
        out = np.where(nc > 0, _boost_ncf_sf(x, df1, df2, nc), central_f_sf(x, df1, df2))
    series = (df2 > LARGE_DF2) & (nc > 0) & (nc <= SERIES_MAX_NONCENTRALITY)
    if np.any(series):
        out = np.array(out, dtype=float, copy=True)
        flat = out.reshape(-1)
        for i in np.flatnonzero(series):
            flat[i] = _ncf_sf_series(x.flat[i], df1.flat[i], df2.flat[i], nc.flat[i])
        out = flat.reshape(out.shape)
    return out[()] if out.ndim == 0 else out


def f_test_power(alpha, df1, df2, nc, critical=None):
    """Power P(F'(df1, df2, λ) > F_crit) of the level-α F test.

    At λ = 0 the power equals α exactly. Results are clipped to [α, 1]: the noncentral
    F is stochastically larger than the central one, so anything outside is rounding.
    """
    alpha = np.asarray(alpha, dtype=float)
    if critical is None:
        critical = f_critical_value(alpha, df1, df2)
    nc = np.asarray(nc, dtype=float)
    power = np.where(nc > 0, noncentral_f_sf(critical, df1, df2, nc), alpha)
    power = np.clip(power, alpha, 1.0)
    return power[()] if power.ndim == 0 else power
