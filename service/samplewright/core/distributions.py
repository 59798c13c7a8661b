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
* Boost's series also degrades as λ grows (relative error ~1e-8 at λ ≈ 2e9 with
  df1 = 1000; half the true value from λ ≈ 1e11 when df2 ≤ 2, with a warning; NaN from
  λ ≈ 1e19). Above ``LARGE_NONCENTRALITY`` the numerator is integrated out by
  Gauss–Hermite quadrature instead (``_ncf_sf_large_nc``), and Boost is not called.
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
#: Above this noncentrality the power comes from ``_ncf_sf_large_nc``, never from Boost.
LARGE_NONCENTRALITY = 1e6
#: At or below this noncentrality the central tail is used: the noncentral one exceeds it
#: by a relative 26·λ at most for α ≥ 1e-12 (d log P/dλ at λ = 0, measured with mpmath),
#: invisible in double precision, while Boost warns and errs (by ~5e-8, or returns 0)
#: for λ below ~1e-157.
TINY_NONCENTRALITY = 1e-20

# Gauss–Hermite rules for expectations over a standard normal (weights summing to 1).
_Z_NODES, _Z_WEIGHTS = np.polynomial.hermite_e.hermegauss(24)
_Z_WEIGHTS = _Z_WEIGHTS / _Z_WEIGHTS.sum()
_W_NODES, _W_WEIGHTS = np.polynomial.hermite_e.hermegauss(8)
_W_WEIGHTS = _W_WEIGHTS / _W_WEIGHTS.sum()


def _as_float_arrays(*values):
    return [np.asarray(v, dtype=float) for v in values]


def _float_arrays_1d(*values):
    """The values as float arrays of one common shape, at least 1-d, and whether all were scalars.

    Equal shapes (the usual case: one request's one-element rows, or a batch's columns) skip
    ``np.broadcast_arrays``, which costs more than the rest of a one-element evaluation.
    """
    arrays = [np.asarray(v, dtype=float) for v in values]
    shape = arrays[0].shape
    if all(a.shape == shape for a in arrays):
        if shape == ():
            return [a.reshape(1) for a in arrays], True
        return arrays, False
    return np.broadcast_arrays(*(np.atleast_1d(a) for a in arrays)), False


def _any(mask: np.ndarray) -> bool:
    """``mask.any()``; for one element, read it (the reduction costs twenty times as much)."""
    return bool(mask[0]) if mask.size == 1 else bool(mask.any())


def _all(mask: np.ndarray) -> bool:
    """``mask.all()``; for one element, read it."""
    return bool(mask[0]) if mask.size == 1 else bool(mask.all())


def _unwrap(out: np.ndarray, scalar: bool):
    return out[0] if scalar else out


def central_f_sf(x, df1, df2):
    """Upper tail P(F(df1, df2) > x) of the central F, accurate in both regimes.

    P(F > x) = I_{1-z}(df2/2, df1/2) = 1 - I_z(df1/2, df2/2),  z = df1·x / (df1·x + df2),
    with the incomplete-beta argument chosen so that it never rounds near 1
    (Abramowitz & Stegun 26.6.2). Only the branch each element needs is evaluated.
    """
    (x, df1, df2), scalar = _float_arrays_1d(x, df1, df2)
    d1x = df1 * x
    denom = d1x + df2
    small_z = d1x < df2  # z < 1/2
    if _all(small_z):
        out = special.betaincc(df1 / 2, df2 / 2, d1x / denom)
    elif not _any(small_z):
        out = special.betainc(df2 / 2, df1 / 2, df2 / denom)
    else:
        out = np.empty(x.shape)
        m = small_z
        out[m] = special.betaincc(df1[m] / 2, df2[m] / 2, d1x[m] / denom[m])
        m = ~small_z
        out[m] = special.betainc(df2[m] / 2, df1[m] / 2, df2[m] / denom[m])
    return _unwrap(out, scalar)


def _central_f_logpdf(x, df1, df2):
    """log density of the central F (Abramowitz & Stegun 26.6.1)."""
    return (
        (df1 / 2) * np.log(df1 / df2)
        + (df1 / 2 - 1) * np.log(x)
        - ((df1 + df2) / 2) * np.log1p(df1 * x / df2)
        - special.betaln(df1 / 2, df2 / 2)
    )


#: A critical value is accepted when its tail probability is within this relative
#: distance of α; otherwise Newton steps polish it.
_CRIT_RTOL = 8e-15
#: Outside these bounds the inverse-beta start is not trusted and is always polished. Inside
#: them the start's tail probability is within 2e-12 of α (measured over 20,000 random
#: (α, df1, df2) against our tail function), so the check is skipped: it would cost more
#: than the rest of a power evaluation.
_TRUSTED_ALPHA = 1e-8
_TRUSTED_DF2 = 1e5


def f_critical_value(alpha, df1, df2):
    """Upper-α point of the central F: the x with P(F(df1, df2) > x) = α.

    Start: P(F > x) = I_y(df2/2, df1/2) with y = df2/(df2 + df1·x), so
    y = I⁻¹(α; df2/2, df1/2) and x = df2(1 − y)/(df1·y); when y > 1/2 the complement
    1 − y = I_c⁻¹(α; df1/2, df2/2) is used instead so that 1 − y does not cancel.
    The complement is computed first, for every element, and y only where the complement
    is 1/4 or more (small df2 or large α), to choose the branch there as above.
    For α < 1e-8 or df2 > 1e5, where the start can be off, and wherever its tail
    probability is then not within 8e-15 of α, up to three Newton steps on
    log P(F > x) − log α, using the density, polish it.
    """
    (alpha, df1, df2), scalar = _float_arrays_1d(alpha, df1, df2)
    if alpha.size == 1:
        # One question at a time (a single request, or a search step): the same few
        # (α, df1, df2) recur, so the value is remembered (a fresh array each time).
        key = (float(alpha[0]), float(df1[0]), float(df2[0]))
        hit = _CRITICAL_CACHE.get(key)
        if hit is None:
            hit = float(_f_critical_value_arrays(alpha, df1, df2)[0])
            if len(_CRITICAL_CACHE) >= _CRITICAL_CACHE_SIZE:
                _CRITICAL_CACHE.clear()
            _CRITICAL_CACHE[key] = hit
        return _unwrap(np.array([hit]), scalar)
    return _unwrap(_f_critical_value_arrays(alpha, df1, df2), scalar)


#: One-element critical values by (α, df1, df2); emptied when full (bounded memory).
_CRITICAL_CACHE: dict[tuple[float, float, float], float] = {}
_CRITICAL_CACHE_SIZE = 4096


def _f_critical_value_arrays(alpha: np.ndarray, df1: np.ndarray, df2: np.ndarray) -> np.ndarray:
    """f_critical_value on 1-d float arrays of one shape."""
    with np.errstate(all="ignore"):
        # The usual case is y > 1/2, where x comes from z = 1 − y alone; the second inverse
        # costs as much as the first. Where z < 1/4, y > 1/2 without computing it: the two
        # inverses agree to 4e-16 (measured over 600,000 random α ≥ 1e-12, df1 ≤ 1e4,
        # df2 ≤ 1e8), so the branch, and the value, are those y would have chosen.
        z = special.betainccinv(df1 / 2, df2 / 2, alpha)
        x = df2 * z / (df1 * (1 - z))
        unsure = ~(z < 0.25)  # also NaN
        if _any(unsure):
            idx = np.flatnonzero(unsure)
            y = special.betaincinv(df2[idx] / 2, df1[idx] / 2, alpha[idx])
            lo = ~(y > 0.5)
            idx, y = idx[lo], y[lo]
            x[idx] = df2[idx] * (1 - y) / (df1[idx] * y)
        todo = alpha < _TRUSTED_ALPHA
        todo |= df2 > _TRUSTED_DF2
        for _ in range(3 if _any(todo) else 0):
            sf = central_f_sf(x[todo], df1[todo], df2[todo])
            err = sf / alpha[todo] - 1
            still = np.abs(err) > _CRIT_RTOL
            if not _any(still):
                break
            idx = np.flatnonzero(todo)[still]
            sf = sf[still]
            step = (np.log(sf) - np.log(alpha[idx])) * sf / np.exp(
                _central_f_logpdf(x[idx], df1[idx], df2[idx])
            )
            x[idx] = np.where(np.isfinite(step), x[idx] + step, x[idx])
            todo = np.zeros(x.shape, dtype=bool)
            todo[idx] = True
    return x


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


def _ncf_sf_large_nc(x, df1, df2, nc):
    """Noncentral F upper tail for very large λ, with the numerator integrated out.

    F' = (V/df1)/(U/df2) with U ~ χ²(df2) and V ~ χ'²(df1, λ) independent, so
    P(F' > x) = E_V[P(df2/2, df2·V/(2·df1·x))], P the regularised lower incomplete gamma
    function. Writing V = (Z + √λ)² + W with Z ~ N(0, 1) and W ~ χ²(df1 − 1), the
    expectation over Z is a 24-point Gauss–Hermite rule (Z is exactly normal) and the one
    over W an 8-point rule on the normal with W's mean and variance. For λ above
    ``LARGE_NONCENTRALITY`` the integrand varies by a relative df2/√λ across Z's range, so
    the rules are exact to rounding and W's skewness enters only at third order (below
    1e-12 for df1 ≤ 10^4). λ = ∞ gives 1.
    """
    x, df1, df2, nc = (np.asarray(v, dtype=float)[:, None, None] for v in (x, df1, df2, nc))
    v = (np.sqrt(nc) + _Z_NODES[:, None]) ** 2 + ((df1 - 1) + np.sqrt(2 * (df1 - 1)) * _W_NODES)
    with np.errstate(all="ignore"):
        g = special.gammainc(df2 / 2, df2 * v / (2 * df1 * x))
    return np.sum(_Z_WEIGHTS[:, None] * _W_WEIGHTS * g, axis=(1, 2))


def noncentral_f_sf(x, df1, df2, nc):
    """Upper tail P(F'(df1, df2, λ) > x) of the noncentral F; λ = 0 gives the central F."""
    (x, df1, df2, nc), scalar = _float_arrays_1d(x, df1, df2, nc)
    big = nc > LARGE_NONCENTRALITY
    central = nc <= TINY_NONCENTRALITY
    # The masks are only applied where some element needs them (for one-element rows the
    # boolean indexing would cost more than the evaluation itself).
    guarded = _any(big | central)
    with np.errstate(all="ignore"):
        # Boost never sees a tiny or a very large λ: it warns, errs or returns NaN there.
        out = _boost_ncf_sf(x, df1, df2, np.where(big | central, 1.0, nc) if guarded else nc)
        if guarded and _any(central):
            out[central] = central_f_sf(x[central], df1[central], df2[central])
    large_df2 = df2 > LARGE_DF2
    if _any(large_df2):
        series = large_df2 & ~central & (nc <= SERIES_MAX_NONCENTRALITY)
        for i in np.flatnonzero(series):
            out[i] = _ncf_sf_series(x[i], df1[i], df2[i], nc[i])
    if guarded and _any(big):
        out[big] = _ncf_sf_large_nc(x[big], df1[big], df2[big], nc[big])
    return _unwrap(out, scalar)


def f_test_power(alpha, df1, df2, nc, critical=None):
    """Power P(F'(df1, df2, λ) > F_crit) of the level-α F test.

    At λ = 0 the power equals α exactly. Results are clipped to [α, 1]: the noncentral
    F is stochastically larger than the central one, so anything outside is rounding.
    """
    if critical is None:
        critical = f_critical_value(alpha, df1, df2)
    (alpha_a, df1, df2, nc, critical), scalar = _float_arrays_1d(alpha, df1, df2, nc, critical)
    live = nc > 0
    if _all(live):
        power = noncentral_f_sf(critical, df1, df2, nc)
    else:
        power = np.array(alpha_a, dtype=float, copy=True)
        if _any(live):
            power[live] = noncentral_f_sf(critical[live], df1[live], df2[live], nc[live])
    # clip(power, α, 1), as max then min (np.clip's own dispatch costs more than both)
    np.minimum(np.maximum(power, alpha_a, out=power), 1.0, out=power)
    return _unwrap(power, scalar)


def f_power_one(alpha: float, df1: float, df2: float, nc: float) -> tuple[float, float]:
    """(power, critical value) of one level-α F test, in Python floats.

    Exactly what ``f_critical_value`` and then ``f_test_power(..., critical=...)`` give
    for one-element arrays (a single request's evaluations), without their array
    conversions, which cost more than the Boost call itself. The critical value comes
    from the same cache (filled by ``f_critical_value`` on a miss). Where every guard of
    ``noncentral_f_sf`` is off (TINY_NONCENTRALITY < λ ≤ LARGE_NONCENTRALITY,
    df2 ≤ LARGE_DF2) the tail is the same Boost ufunc on the same doubles, clipped to
    [α, 1] by the same comparisons; anything else (NaN included) is handed to the array
    functions. Checked bit for bit against them in tests/core/test_distributions.py.
    """
    crit = _CRITICAL_CACHE.get((alpha, df1, df2))
    if crit is None:
        crit = f_critical_value(np.array([alpha]), np.array([df1]), np.array([df2])).item(0)
    if TINY_NONCENTRALITY < nc <= LARGE_NONCENTRALITY and df2 <= LARGE_DF2 and alpha > 0:
        with np.errstate(all="ignore"):  # as in noncentral_f_sf
            power = _boost_ncf_sf(np.array([crit]), np.array([df1]), np.array([df2]), np.array([nc])).item(0)
        # np.minimum(np.maximum(power, α), 1): a NaN power stays NaN (α > 0 is not NaN)
        if power < alpha:
            power = alpha
        if power > 1.0:
            power = 1.0
        return power, crit
    power = f_test_power(np.array([alpha]), np.array([df1]), np.array([df2]), np.array([nc]),
                         critical=np.array([crit]))
    return power.item(0), crit


# -- Student t: one-sided tests -------------------------------------------------------------
#
# A two-sided t test is the F test with df1 = 1 and λ = δ² (use f_test_power). A one-sided
# test rejects when T = (Z + δ)/√(χ²_ν/ν) exceeds the upper-α point t_α of the central t,
# so its power is the upper tail of the noncentral t (Johnson, Kotz & Balakrishnan 1995,
# ch. 31; Cohen 1988, ch. 2). Measured against a 50-digit mpmath series and quadrature
# (see tests/core/designs/test_t_family.py):
#
# * scipy's noncentral t survival function (Boost) is accurate to ~1e-11 relative for
#   ν ≤ 1e5, but loses digits for huge ν (2e-9 relative at ν = 2e7, as in the F case:
#   its incomplete-beta argument rounds near 1). Above ``LARGE_DF_T`` the Poisson-type
#   mixture of complemented incomplete beta functions is summed here instead.
# * Boost slows down (≈ 10 ms a call) and then fails with a warning ("series did not
#   converge") once δ exceeds ~1.5e5 with a large t (few df, tiny α). Above
#   ``T_LARGE_NONCENTRALITY`` the normal numerator is integrated out by Gauss–Hermite
#   quadrature and Boost is not called.
# * The one-sided critical value comes from the F critical value: t_α = √F_crit(1, ν; 2α),
#   since T² ~ F(1, ν) and the t is symmetric; it keeps f_critical_value's accuracy for
#   α down to 1e-12 and for huge ν.


def _nct_sf_fallback(x, df, nc):  # pragma: no cover - scipy layouts without the private ufunc
    from scipy.stats import nct

    return nct.sf(x, df, nc)


#: The ufunc behind scipy.stats.nct.sf (~2 µs a call), or the distribution method.
_boost_nct_sf = getattr(getattr(special, "_ufuncs", None), "_nct_sf", None) or _nct_sf_fallback
#: Above this many degrees of freedom the noncentral t tail is summed as a series here.
LARGE_DF_T = 1e5
#: Above this noncentrality δ the t tail comes from Gauss–Hermite quadrature over the
#: normal numerator (for δ this large either the integrand is smooth or the power is 1).
T_LARGE_NONCENTRALITY = 200.0


def central_t_sf(x, df):
    """Upper tail P(T(ν) > x) of the central t: ½·P(F(1, ν) > x²) for x ≥ 0, by symmetry below 0."""
    x, df = _as_float_arrays(x, df)
    scalar = x.ndim == 0 and df.ndim == 0
    x, df = np.broadcast_arrays(np.atleast_1d(x), np.atleast_1d(df))
    half = 0.5 * np.atleast_1d(central_f_sf(x * x, 1.0, df))
    out = np.where(x >= 0, half, 1.0 - half)
    return _unwrap(out, scalar)


def t_critical_value(alpha, df):
    """Upper-α point t_α of the central t with ν = ``df``: P(T(ν) > t_α) = α, for 0 < α ≤ ½.

    t_α = √F_crit(1, ν; 2α), because P(T > t) = ½·P(F(1, ν) > t²) for t ≥ 0.
    """
    alpha, df = _as_float_arrays(alpha, df)
    scalar = alpha.ndim == 0 and df.ndim == 0
    alpha, df = np.broadcast_arrays(np.atleast_1d(alpha), np.atleast_1d(df))
    crit = np.sqrt(np.atleast_1d(f_critical_value(2.0 * alpha, 1.0, df)))
    return _unwrap(crit, scalar)


def _nct_sf_series(x: float, df: float, nc: float) -> float:
    """Noncentral t upper tail for x ≥ 0 and δ > 0 as a mixture, for very large ν.

    With h = δ²/2 and y = x²/(x² + ν),
    P(T' > x) = ½ Σ_j [p_j · I_c(y; j + ½, ν/2) + q_j · I_c(y; j + 1, ν/2)],
    p_j = e^{−h} h^j / j!,  q_j = δ e^{−h} h^j / (√2 Γ(j + 3/2)), I_c = 1 − I the
    complemented regularised incomplete beta (the complement of Guenther's 1978 series
    for the distribution function, J. Statist. Comput. Simul. 6, 199–206; Lenth 1989,
    Applied Statistics 38, AS 243). Every term is positive, so there is no cancellation;
    the sum runs over the mode ± 13√h + 30 terms, as in the F series.

    The weights are built from their ratios p_j/p_{j−1} = h/j and q_j/q_{j−1} = h/(j + ½)
    and scaled to their known totals Σ p_j = 1 and Σ q_j = erf(δ/√2): written as
    exp(−h + j log h − log Γ(j + 1)) they would carry a relative error of ~1e-11 from the
    cancellation of exponents near 10⁵, which shows as a power of 1 − 1e-11 for large δ.
    """
    half = nc * nc / 2
    width = int(np.ceil(13 * np.sqrt(half) + 30))
    mode = np.floor(half)
    j = np.arange(max(0.0, mode - width), mode + width + 1)

    def weights(offset: float, total: float) -> np.ndarray:
        steps = np.log(half / (j[1:] + offset))  # log of w_j / w_{j−1}, each accurate near 1
        log_w = np.concatenate([[0.0], np.cumsum(steps)])
        w = np.exp(log_w - log_w.max())
        return w * (total / w.sum())

    p = weights(0.0, 1.0)
    q = weights(0.5, float(special.erf(nc / np.sqrt(2.0))))
    y = x * x / (x * x + df)
    terms = p * special.betaincc(j + 0.5, df / 2, y) + q * special.betaincc(j + 1.0, df / 2, y)
    return 0.5 * float(np.sum(terms))


def _nct_sf_large_nc(x, df, nc):
    """Noncentral t upper tail for x > 0 and very large δ, the normal numerator integrated out.

    T' = (Z + δ)/√(V/ν) with V ~ χ²(ν), so P(T' > x) = E_Z[P(ν/2, ν(Z + δ)²/(2x²))] over
    Z + δ > 0, P the regularised lower incomplete gamma function; the expectation is the
    24-point Gauss–Hermite rule (Z > −7 at every node, so Z + δ > 0 for δ above
    ``T_LARGE_NONCENTRALITY``). The integrand varies with Z through (1 + Z/δ)² only, so it
    is smooth wherever the power is not 1 to double precision.
    """
    x, df, nc = (np.asarray(v, dtype=float)[:, None] for v in (x, df, nc))
    with np.errstate(all="ignore"):
        g = special.gammainc(df / 2, df * (nc + _Z_NODES) ** 2 / (2 * x * x))
    return np.sum(_Z_WEIGHTS * g, axis=1)


def _nct_sf_upper(x, df, nc):
    """P(T'(ν, δ) > x) for x ≥ 0 (1-d float arrays of equal shape)."""
    with np.errstate(all="ignore"):
        out = np.asarray(_boost_nct_sf(x, df, np.clip(nc, -T_LARGE_NONCENTRALITY, T_LARGE_NONCENTRALITY)),
                         dtype=float).copy()
    central = nc == 0
    if central.any():
        out[central] = np.atleast_1d(central_t_sf(x[central], df[central]))
    series = (df > LARGE_DF_T) & (nc > 0) & (nc <= T_LARGE_NONCENTRALITY) & (x > 0)
    for i in np.flatnonzero(series):
        out[i] = _nct_sf_series(x[i], df[i], nc[i])
    big = (nc > T_LARGE_NONCENTRALITY) & (x > 0)
    if big.any():
        out[big] = _nct_sf_large_nc(x[big], df[big], nc[big])
    # P(T' > 0) = P(Z > −δ) = Φ(δ) exactly; and P(T' > x ≥ 0) ≤ Φ(δ), which underflows to 0
    # for δ below −T_LARGE_NONCENTRALITY.
    exact = (x == 0) | (nc < -T_LARGE_NONCENTRALITY)
    if exact.any():
        out[exact] = special.ndtr(nc[exact])
    return out


def noncentral_t_sf(x, df, nc):
    """Upper tail P(T'(ν, δ) > x) of the noncentral t; δ = 0 gives the central t.

    For x < 0 the reflection P(T'(ν, δ) > x) = 1 − P(T'(ν, −δ) > −x) is used, so the
    guarded computation above only ever sees x ≥ 0.
    """
    x, df, nc = _as_float_arrays(x, df, nc)
    scalar = x.ndim == 0 and df.ndim == 0 and nc.ndim == 0
    x, df, nc = (np.array(v, dtype=float) for v in np.broadcast_arrays(*(np.atleast_1d(v) for v in (x, df, nc))))
    negative = x < 0
    out = np.empty(x.shape)
    if (~negative).any():
        out[~negative] = _nct_sf_upper(x[~negative], df[~negative], nc[~negative])
    if negative.any():
        out[negative] = 1.0 - _nct_sf_upper(-x[negative], df[negative], -nc[negative])
    np.clip(out, 0.0, 1.0, out=out)
    return _unwrap(out, scalar)


def t_test_power(alpha, df, nc, critical=None):
    """Power P(T'(ν, δ) > t_α) of the one-sided (upper-tail) level-α t test.

    ``nc`` is δ oriented along the alternative (a "less" test passes −δ). At δ = 0 the
    power equals α exactly; for δ > 0 it is clipped to [α, 1] and for δ < 0 to [0, α]
    (the noncentral t is stochastically increasing in δ, so anything outside is rounding).
    ``critical`` is t_α when already known.
    """
    if critical is None:
        critical = t_critical_value(alpha, df)
    alpha_a, df, nc, critical = _as_float_arrays(alpha, df, nc, critical)
    scalar = all(v.ndim == 0 for v in (alpha_a, df, nc, critical))
    alpha_a, df, nc, critical = np.broadcast_arrays(*(np.atleast_1d(v) for v in (alpha_a, df, nc, critical)))
    power = np.array(alpha_a, dtype=float, copy=True)
    live = nc != 0
    if live.any():
        power[live] = noncentral_t_sf(critical[live], df[live], nc[live])
    power = np.where(nc > 0, np.clip(power, alpha_a, 1.0), np.where(nc < 0, np.clip(power, 0.0, alpha_a), alpha_a))
    return _unwrap(power, scalar)
