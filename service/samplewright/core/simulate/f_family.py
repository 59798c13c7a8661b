"""Monte Carlo of the F-family designs beyond the one-way layout.

Each simulator generates data sets from the planned model and computes the real test
statistic on them:

* two-way factorial: the F of the chosen effect in the full two-way model, hypotheses
  about the unweighted means (equal to the textbook two-way ANOVA F when cells are equal);
* random effects: group effects drawn N(0, θσ²), the one-way F referred to F(k − 1, N − k);
* ANCOVA: q independent standard normal covariates jointly explaining R² of the error
  variance, and the covariate-adjusted F (groups tested after the covariates);
* repeated measures: compound-symmetric data (correlation ρ), the univariate
  repeated-measures F with (m − 1, (n − 1)(m − 1)) df. Only sphericity (ε = 1) is
  simulated: with ε < 1 the analytic answer is an approximation for data this generator
  does not produce, so such a design is refused;
* Welch: Welch's F with the sample variances and its estimated df.

``draw(shape)`` gives the standardised errors of the chosen error distribution. Group
effects and covariates are normal by the model's own definition, so they come from
``draw.normal`` (the same seeded stream), whatever the error distribution. Each simulator
declares the values one replicate draws, which the framework's work budget counts.
"""

from __future__ import annotations

import math

import numpy as np

from ..designs.ancova import OneWayAncova
from ..designs.factorial import FactorialAnova
from ..designs.random_effects import RandomEffectsAnova
from ..designs.repeated_measures import RepeatedMeasuresAnova
from ..designs.welch import WelchAnova
from ..distributions import central_f_sf, f_critical_value
from ..errors import InvalidParameter
from . import simulator
from .one_way import f_statistic


def _group_sums(y: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    bounds = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    return np.add.reduceat(y, bounds, axis=1)


# -- two-way factorial --------------------------------------------------------------------


def factorial_f_statistic(y: np.ndarray, sizes: np.ndarray, contrast: np.ndarray) -> np.ndarray:
    """F of the hypothesis C μ = 0 in the cell-means model, for each row of ``y`` (R × N).

    Cells are consecutive blocks of ``sizes`` units (row-major); F = [ψ̂'(C D⁻¹ C')⁻¹ψ̂/d] /
    [SS_within/(N − ab)] with ψ̂ = C ȳ, D = diag(n_ij), d = rank C.
    """
    sizes = np.asarray(sizes)
    n_total, cells = int(sizes.sum()), len(sizes)
    sums = _group_sums(y, sizes)
    cell_means = sums / sizes
    ss_within = (y**2).sum(axis=1) - (sums**2 / sizes).sum(axis=1)
    psi = cell_means @ contrast.T
    g = (contrast / sizes) @ contrast.T
    q = np.einsum("rd,rd->r", psi, np.linalg.solve(g, psi.T).T)
    return (q / contrast.shape[0]) / (ss_within / (n_total - cells))


@simulator(FactorialAnova, values_per_replicate=lambda design, sizes: int(sizes.sum()))
def simulate_factorial(design: FactorialAnova, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    mu = ((design.cell_means - design.cell_means.mean()) / design.sd).reshape(-1)
    mu = np.repeat(mu, sizes)
    n_total = int(sizes.sum())
    crit = f_critical_value(alpha, design.contrast.shape[0], n_total - design.groups)
    y = mu + draw((replicates, n_total))
    return factorial_f_statistic(y, sizes, design.contrast) > crit


# -- one-way random effects ---------------------------------------------------------------


@simulator(RandomEffectsAnova, values_per_replicate=lambda design, sizes: int(sizes.sum()) + design.groups)
def simulate_random_effects(design: RandomEffectsAnova, sizes: np.ndarray, alpha: float, replicates: int,
                            draw) -> np.ndarray:
    k, n_total = design.groups, int(sizes.sum())
    effects = math.sqrt(design.theta) * draw.normal((replicates, k))
    y = np.repeat(effects, sizes, axis=1) + draw((replicates, n_total))
    crit = f_critical_value(alpha, k - 1, n_total - k)
    return f_statistic(y, sizes) > crit


# -- one-way ANCOVA -----------------------------------------------------------------------


def ancova_f_statistic(y: np.ndarray, x: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """Covariate-adjusted F for groups after q covariates, for each replicate.

    ``y`` is (R, N), ``x`` is (R, N, q); groups are consecutive blocks of ``sizes``.
    SSE(full) uses within-group centred sums of squares and products, SSE(covariates only)
    the totals; F = [(SSE_reduced − SSE_full)/(k − 1)] / [SSE_full/(N − k − q)].
    """
    sizes = np.asarray(sizes)
    k, n_total, q = len(sizes), int(sizes.sum()), x.shape[2]
    sy, sx = _group_sums(y, sizes), _group_sums(x, sizes)  # (R, k), (R, k, q)
    ty, tx = sy.sum(axis=1), sx.sum(axis=1)
    yy = (y**2).sum(axis=1)
    xy = np.einsum("rni,rn->ri", x, y)
    xx = np.einsum("rni,rnj->rij", x, x)
    inv_n = 1.0 / sizes
    w_yy = yy - (sy**2 * inv_n).sum(axis=1)
    w_xy = xy - np.einsum("rgi,rg,g->ri", sx, sy, inv_n)
    w_xx = xx - np.einsum("rgi,rgj,g->rij", sx, sx, inv_n)
    t_yy = yy - ty**2 / n_total
    t_xy = xy - tx * ty[:, None] / n_total
    t_xx = xx - np.einsum("ri,rj->rij", tx, tx) / n_total

    def residual(s_yy, s_xy, s_xx):
        beta = np.linalg.solve(s_xx, s_xy[..., None])[..., 0]
        return s_yy - np.einsum("ri,ri->r", s_xy, beta)

    sse_full = residual(w_yy, w_xy, w_xx)
    sse_reduced = residual(t_yy, t_xy, t_xx)
    return ((sse_reduced - sse_full) / (k - 1)) / (sse_full / (n_total - k - q))


@simulator(OneWayAncova, values_per_replicate=lambda design, sizes: int(sizes.sum()) * (design.covariates + 1))
def simulate_ancova(design: OneWayAncova, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    k, q, n_total = design.groups, design.covariates, int(sizes.sum())
    mu = np.repeat((design.means - design.means.mean()) / design.sd, sizes)
    slope = math.sqrt(design.covariate_r2 / q)
    noise = math.sqrt(1.0 - design.covariate_r2)
    crit = f_critical_value(alpha, k - 1, n_total - k - q)
    x = draw.normal((replicates, n_total, q))
    y = mu + slope * x.sum(axis=2) + noise * draw((replicates, n_total))
    return ancova_f_statistic(y, x, sizes) > crit


# -- repeated measures --------------------------------------------------------------------


def repeated_measures_f_statistic(y: np.ndarray) -> np.ndarray:
    """Univariate RM F = [SS_levels/(m − 1)] / [SS_subjects×levels/((n − 1)(m − 1))]; y is (R, n, m)."""
    _, n, m = y.shape
    level = y.mean(axis=1, keepdims=True)
    subject = y.mean(axis=2, keepdims=True)
    grand = level.mean(axis=2, keepdims=True)
    ss_levels = n * ((level - grand) ** 2).sum(axis=(1, 2))
    ss_error = ((y - subject - level + grand) ** 2).sum(axis=(1, 2))
    return (ss_levels / (m - 1)) / (ss_error / ((n - 1) * (m - 1)))


@simulator(RepeatedMeasuresAnova, values_per_replicate=lambda design, sizes: int(sizes[0]) * design.levels)
def simulate_repeated_measures(design: RepeatedMeasuresAnova, sizes: np.ndarray, alpha: float, replicates: int,
                               draw) -> np.ndarray:
    if design.epsilon < 1.0:
        raise InvalidParameter(
            "design.epsilon", design.epsilon,
            "the simulation generates compound-symmetric (spherical) data, for which ε = 1; "
            "leave epsilon out to simulate (with ε < 1 the analytic power is an approximation)",
        )
    n, m, rho = int(sizes[0]), design.levels, design.correlation
    mu = (design.level_means - design.level_means.mean()) / design.sd
    # Σ^{1/2} of σ²[(1 − ρ)I + ρJ] applied to standardised errors: the subject-mean
    # component gets √(1 + (m − 1)ρ), the within-subject deviations √(1 − ρ); valid for
    # every ρ in (−1/(m − 1), 1).
    within, between = math.sqrt(1.0 - rho), math.sqrt(1.0 + (m - 1) * rho)
    crit = f_critical_value(alpha, m - 1, (n - 1) * (m - 1))
    z = draw((replicates, n, m))
    zbar = z.mean(axis=2, keepdims=True)
    y = mu + within * (z - zbar) + between * zbar
    return repeated_measures_f_statistic(y) > crit


# -- Welch --------------------------------------------------------------------------------


def welch_test(y: np.ndarray, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Welch's F and its df2 ν for each row of ``y`` (R × N), groups in consecutive blocks."""
    sizes = np.asarray(sizes)
    k = len(sizes)
    means = _group_sums(y, sizes) / sizes
    dev = y - np.repeat(means, sizes, axis=1)
    var = _group_sums(dev**2, sizes) / (sizes - 1)
    w = sizes / var
    big_w = w.sum(axis=1, keepdims=True)
    tilde = (w * means).sum(axis=1, keepdims=True) / big_w
    a = ((1.0 - w / big_w) ** 2 / (sizes - 1)).sum(axis=1)
    numerator = (w * (means - tilde) ** 2).sum(axis=1) / (k - 1)
    f = numerator / (1.0 + 2.0 * (k - 2) * a / (k * k - 1))
    return f, (k * k - 1) / (3.0 * a)


@simulator(WelchAnova, values_per_replicate=lambda design, sizes: int(sizes.sum()))
def simulate_welch(design: WelchAnova, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    scale = design.sds.max()
    mu = np.repeat((design.means - design.means.mean()) / scale, sizes)
    sd = np.repeat(design.sds / scale, sizes)
    y = mu + sd * draw((replicates, int(sizes.sum())))
    f, nu = welch_test(y, sizes)
    return central_f_sf(f, design.groups - 1, nu) < alpha
