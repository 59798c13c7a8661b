"""Two crossed fixed factors (an a × b factorial with replication): the F test of one effect.

With cell means μ_ij (a rows for factor A, b columns for factor B), common error SD σ and
n units in every cell, the effects are the deviations of the *unweighted* marginal means,

    α_i = μ̄_i. − μ̄,   β_j = μ̄_.j − μ̄,   (αβ)_ij = μ_ij − μ̄_i. − μ̄_.j + μ̄,

and the F tests of the full two-way model have (Montgomery, *Design and Analysis of
Experiments*, 8th ed., §5.3, with the sample-size choice of §5.3.5):

    effect A:   df1 = a − 1,          df2 = ab(n − 1),   λ = n b Σ α_i² / σ²
    effect B:   df1 = b − 1,          df2 = ab(n − 1),   λ = n a Σ β_j² / σ²
    effect AB:  df1 = (a − 1)(b − 1), df2 = ab(n − 1),   λ = n ΣΣ (αβ)_ij² / σ²

Montgomery's operating-characteristic parameter is Φ² = λ / (df1 + 1); for factor A with
two row means D apart and the rest midway, Φ² = n b D² / (2 a σ²).

Unequal cell sizes n_ij (``group_sizes``, one per cell in row-major order) are served by
the same hypotheses about the unweighted means ("Type III"), tested in the cell-means
model. For a contrast matrix C of full row rank whose rows span the hypothesis, with
ψ = C μ and D = diag(n_ij), the general linear hypothesis gives

    λ = ψ' (C D⁻¹ C')⁻¹ ψ / σ²,   df1 = rank C,   df2 = N − ab

(Searle, *Linear Models*, Wiley, 1971, the general linear hypothesis), which reduces to the
balanced formulas above when every n_ij = n. The contrast matrices used are Kronecker
products of orthonormal Helmert contrasts H_a (rows orthonormal and orthogonal to 1):
A: H_a ⊗ 1_b'/b, B: 1_a'/a ⊗ H_b, AB: H_a ⊗ H_b; λ does not depend on this choice.
In Cohen's terms (*Statistical Power Analysis for the Behavioral Sciences*, 2nd ed., 1988,
§8.3) the effect size is f = σ_effect/σ with σ_A² = Σα_i²/a, σ_B² = Σβ_j²/b and
σ_AB² = ΣΣ(αβ)_ij²/(ab), so λ = N f² in a balanced design for each of the three effects.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import helmert

from ..errors import InvalidParameter
from .base import FTest, FTestDesign

METHOD_ID = "factorial_anova.noncentral_f"
REFERENCE = (
    "Montgomery, Design and Analysis of Experiments, 8th ed., §5.3 and §5.3.5; "
    "Searle (1971) Linear Models (general linear hypothesis, unequal cells); "
    "Cohen (1988) Statistical Power Analysis for the Behavioral Sciences, 2nd ed., §8.3"
)
EFFECTS = ("factor_a", "factor_b", "interaction")


def contrast_matrix(rows: int, columns: int, effect: str) -> np.ndarray:
    """The hypothesis matrix C (df1 × ab, cells in row-major order) of ``effect``."""
    h_a, h_b = helmert(rows), helmert(columns)
    if effect == "factor_a":
        return np.kron(h_a, np.full((1, columns), 1.0 / columns))
    if effect == "factor_b":
        return np.kron(np.full((1, rows), 1.0 / rows), h_b)
    if effect == "interaction":
        return np.kron(h_a, h_b)
    raise InvalidParameter("design.effect", effect, f"must be one of {list(EFFECTS)}")


def effects_of(cell_means: np.ndarray) -> dict[str, np.ndarray]:
    """Row effects α_i, column effects β_j and interaction effects (αβ)_ij (unweighted)."""
    mu = np.asarray(cell_means, dtype=float)
    grand = mu.mean()
    rows = mu.mean(axis=1) - grand
    cols = mu.mean(axis=0) - grand
    inter = mu - grand - rows[:, None] - cols[None, :]
    return {"factor_a": rows, "factor_b": cols, "interaction": inter}


def quadratic_forms(contrast: np.ndarray, psi: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """ψ' (C D⁻¹ C')⁻¹ ψ for each row of ``sizes`` (D = diag of that row).

    ``psi`` is either one vector (df1,) or one per row (rows, df1).
    """
    sizes = np.asarray(sizes, dtype=float)
    g = np.einsum("dc,rc,ec->rde", contrast, 1.0 / sizes, contrast)
    rhs = np.broadcast_to(psi, (sizes.shape[0], contrast.shape[0]))[..., None]
    sol = np.linalg.solve(g, rhs)[..., 0]
    return np.einsum("rd,rd->r", rhs[..., 0], sol)


@dataclass(frozen=True)
class FactorialAnova(FTestDesign):
    """An a × b crossed factorial, tested for one of its effects.

    ``cell_means`` has shape (a, b); ``groups`` is a·b (one independently sized group per
    cell, row-major) and ``ratios`` are all 1 (the engine plans balanced designs).
    """

    cell_means: np.ndarray
    sd: float
    effect: str
    groups: int
    ratios: np.ndarray
    contrast: np.ndarray
    psi: np.ndarray  # C μ / σ, the hypothesis in SD units
    unit_noncentrality: float  # λ with one unit per cell (λ = n · this when balanced)

    method_id = METHOD_ID
    reference = REFERENCE

    @classmethod
    def from_cells(cls, cell_means, sd: float, effect: str) -> FactorialAnova:
        mu = np.asarray(cell_means, dtype=float)
        if mu.ndim != 2 or mu.shape[0] < 2 or mu.shape[1] < 2:
            raise InvalidParameter("design.cell_means", mu.tolist(), "must be a rectangular table of at least 2 × 2")
        if not sd > 0:
            raise InvalidParameter("design.sd", sd, "must be positive")
        a, b = mu.shape
        contrast = contrast_matrix(a, b, effect)
        # Contrasts annihilate a constant: centring first keeps means of 1e12 precise.
        centred = ((mu - mu.mean()) / sd).reshape(-1)
        psi = contrast @ centred
        # An effect that is zero in exact arithmetic leaves rounding residue (1e-16 of the
        # other effects); clear it so that a null effect has λ = 0 and power exactly α.
        psi[np.abs(psi) <= 64 * np.finfo(float).eps * np.abs(centred).max(initial=0.0)] = 0.0
        unit = float(quadratic_forms(contrast, psi, np.ones((1, a * b)))[0])
        return cls(
            cell_means=mu, sd=float(sd), effect=effect, groups=a * b, ratios=np.ones(a * b),
            contrast=contrast, psi=psi, unit_noncentrality=max(unit, 0.0),
        )

    @property
    def shape(self) -> tuple[int, int]:
        return self.cell_means.shape

    def test_at(self, sizes: np.ndarray) -> FTest:
        """df and λ for each row of cell sizes (shape (designs, a·b), row-major)."""
        sizes = np.atleast_2d(np.asarray(sizes, dtype=float))
        total = sizes.sum(axis=-1)
        balanced = np.all(sizes == sizes[:, :1], axis=-1)
        lam = sizes[:, 0] * self.unit_noncentrality
        if not np.all(balanced) and np.any(self.psi):
            lam = np.array(lam, copy=True)
            lam[~balanced] = np.maximum(quadratic_forms(self.contrast, self.psi, sizes[~balanced]), 0.0)
        df1 = np.full(total.shape, float(self.contrast.shape[0]))
        return FTest(df1=df1, df2=total - self.groups, noncentrality=lam)

    def smallest_unit(self) -> int:
        """Two units per cell: one leaves no error degrees of freedom (ab(n − 1) = 0)."""
        return 2

    def effect_values(self) -> np.ndarray:
        """α_i, β_j or (αβ)_ij for the tested effect, in data units."""
        return effects_of(self.cell_means)[self.effect]
