"""Factor analysis of a trial x unit count matrix, by EM, with the number of factors chosen by
cross-validated likelihood.

The model: counts x (centred) ~ N(0, L Lᵀ + Ψ) with loadings L (units x k) and diagonal private
variances Ψ. EM updates after Rubin & Thayer 1982 (Psychometrika 47:69) and Ghahramani & Hinton
1996 (Tech. Rep. CRG-TR-96-1), written on the sample covariance so each step costs O(p² k) and
the trial count enters only through that covariance. Shared-variance summaries follow
Williamson et al. 2016 (PLoS Comput Biol 12:e1005141) and Umakantha et al. 2021 (Neuron
109:2740).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

LOG_2PI = float(np.log(2 * np.pi))
#: private variances are kept at least this fraction of the unit's total variance (Heywood cases)
PSI_FLOOR = 1e-4
#: share of shared variance that dim_shared must explain (Williamson et al. 2016)
DIM_SHARED_FRACTION = 0.95


@dataclass(frozen=True)
class FactorFit:
    """One fitted model: ``loadings`` (p x k), ``private`` (p,) and the mean log-likelihood."""

    loadings: np.ndarray
    private: np.ndarray
    loglik_per_trial: float
    n_iter: int
    converged: bool

    @property
    def shared_cov(self) -> np.ndarray:
        return self.loadings @ self.loadings.T


def covariance(x: np.ndarray) -> np.ndarray:
    """Maximum-likelihood covariance (ddof 0) of the rows of centred ``x`` (trials x units)."""
    return (x.T @ x) / max(x.shape[0], 1)


def gaussian_loglik(cov_data: np.ndarray, loadings: np.ndarray, private: np.ndarray) -> float:
    """Mean log-likelihood per trial of data with covariance ``cov_data`` under L Lᵀ + Ψ.

    Uses the matrix determinant lemma and the Woodbury identity, so only k x k systems are
    solved.
    """
    p, k = loadings.shape
    a = loadings / private[:, None]                       # Ψ⁻¹ L
    m = np.eye(k) + loadings.T @ a                         # I + Lᵀ Ψ⁻¹ L
    sign, logdet_m = np.linalg.slogdet(m) if k else (1.0, 0.0)
    logdet = float(np.sum(np.log(private)) + logdet_m)
    trace = float(np.sum(np.diag(cov_data) / private))
    if k:
        trace -= float(np.trace(np.linalg.solve(m, a.T @ (cov_data @ a))))
    return -0.5 * (p * LOG_2PI + logdet + trace)


def _initial(cov: np.ndarray, k: int, floor: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Probabilistic-PCA start: top-k eigenvectors scaled by the eigenvalue excess."""
    values, vectors = np.linalg.eigh(cov)
    values, vectors = values[::-1], vectors[:, ::-1]
    rest = values[k:].mean() if k < len(values) else 0.0
    loadings = vectors[:, :k] * np.sqrt(np.maximum(values[:k] - rest, 1e-12))
    private = np.maximum(np.diag(cov) - np.sum(loadings**2, axis=1), floor)
    return loadings, private


#: EM steps between likelihood checks (EM raises the likelihood at every step, so checking the
#: rise over several steps only saves work; the tolerance is scaled to match)
CHECK_EVERY = 8
#: looser stopping rule of the many fits inside the cross-validation (they only rank k; the
#: chosen k is then fitted to the full tolerance). The CV test of the tests measures the choice.
CV_TOL = 1e-5
CV_MAX_ITER = 500


def fit_factors(cov: np.ndarray, k: int, *, max_iter: int = 2000, tol: float = 1e-7,
                start: tuple[np.ndarray, np.ndarray] | None = None) -> FactorFit:
    """Maximum-likelihood factor analysis with ``k`` factors of sample covariance ``cov``.

    ``tol``: stop when the mean log-likelihood per trial and unit rises by less than this.
    ``start``: loadings and private variances to begin from (a warm start), else a PCA start.
    """
    p = cov.shape[0]
    diag = np.diag(cov).copy()
    floor = np.maximum(PSI_FLOOR * diag, 1e-12)
    if k == 0:
        private = np.maximum(diag, floor)
        return FactorFit(np.zeros((p, 0)), private, gaussian_loglik(cov, np.zeros((p, 0)),
                                                                    private), 0, True)
    loadings, private = start if start is not None else _initial(cov, k, floor)
    loadings, private = loadings.copy(), np.maximum(private, floor)
    previous = current = gaussian_loglik(cov, loadings, private)
    converged, n_iter = False, 0
    eye = np.eye(k)
    while n_iter < max_iter:
        n_iter += 1
        a = loadings / private[:, None]
        m = eye + loadings.T @ a
        beta = np.linalg.solve(m, a.T)                     # Lᵀ (L Lᵀ + Ψ)⁻¹, k x p
        s_beta = cov @ beta.T                              # p x k
        ezz = eye - beta @ loadings + beta @ s_beta        # E[z zᵀ] averaged over trials
        loadings = np.linalg.solve(ezz, s_beta.T).T
        private = np.maximum(diag - np.sum(loadings * s_beta, axis=1), floor)
        if n_iter % CHECK_EVERY and n_iter < max_iter:
            continue  # the likelihood (the costly part) is checked every CHECK_EVERY steps
        current = gaussian_loglik(cov, loadings, private)
        if abs(current - previous) < tol * p * CHECK_EVERY:
            converged = True
            break
        previous = current
    return FactorFit(loadings, private, current, n_iter, converged)


def cross_validated_loglik(x: np.ndarray, ks, *, n_folds: int,
                           rng: np.random.Generator) -> np.ndarray:
    """Held-out log-likelihood per trial, summed over ``n_folds`` folds, for each ``k`` in ks.

    ``x`` is centred trials x units; each fold is centred again with its training mean.
    """
    n = x.shape[0]
    folds = np.array_split(rng.permutation(n), n_folds)
    total = np.zeros(len(ks))
    for test in folds:
        train = np.setdiff1d(np.arange(n), test)
        mean = x[train].mean(axis=0)
        cov_train = covariance(x[train] - mean)
        cov_test = covariance(x[test] - mean)
        for j, k in enumerate(ks):
            fit = fit_factors(cov_train, int(k), tol=CV_TOL, max_iter=CV_MAX_ITER)
            total[j] += gaussian_loglik(cov_test, fit.loadings, fit.private) * len(test)
    return total / n


def choose_n_factors(x: np.ndarray, *, max_factors: int, n_folds: int,
                     rng: np.random.Generator, patience: int = 2) -> tuple[int, np.ndarray]:
    """The k with the highest cross-validated likelihood, searching 0, 1, ... upward.

    The search stops once ``patience`` consecutive k have not improved on the best (common
    practice: the held-out likelihood is unimodal in k in practice) or at ``max_factors``
    (capped at units - 1 and at the training trials - 1). Returns k and the likelihoods tried.
    """
    n, p = x.shape
    n_train = n - int(np.ceil(n / n_folds))
    cap = int(max(0, min(max_factors, p - 1, n_train - 1)))
    tried: list[float] = []
    best, since_best = 0, 0
    for k in range(cap + 1):
        tried.append(float(cross_validated_loglik(x, [k], n_folds=n_folds,
                                                  rng=np.random.default_rng(rng.integers(2**32))
                                                  )[0]))
        if tried[-1] > tried[best]:
            best, since_best = k, 0
        elif k:
            since_best += 1
            if since_best >= patience:
                break
    return best, np.array(tried)


@dataclass(frozen=True)
class SharedSummary:
    """What the population_structure and shared_variance tables report of one fit."""

    shared_variance: np.ndarray   # (L Lᵀ)ᵢᵢ per unit
    private_variance: np.ndarray  # Ψᵢ
    percent_shared: np.ndarray    # 100 (L Lᵀ)ᵢᵢ / ((L Lᵀ)ᵢᵢ + Ψᵢ)
    dim_shared: int
    loading_similarity: float


def summarise_fit(fit: FactorFit) -> SharedSummary:
    """Percent shared per unit, dim_shared and loading similarity of one fitted model.

    ``dim_shared``: the number of eigenvalues of L Lᵀ, largest first, whose sum reaches 95% of
    its trace (Williamson et al. 2016). ``loading_similarity``: ``1 - p var(w)`` for the unit
    vector w of the dominant shared dimension, 1 when every unit loads equally and 1/p when
    one unit carries it (Umakantha et al. 2021; formula recalled from memory, checked in the tests
    on its two limits). NaN without any factor.
    """
    shared = np.sum(fit.loadings**2, axis=1)
    total = shared + fit.private
    percent = 100 * shared / total
    k = fit.loadings.shape[1]
    if k == 0 or not np.any(shared > 0):
        return SharedSummary(shared, fit.private, percent, 0, float("nan"))
    values, vectors = np.linalg.eigh(fit.shared_cov)
    values, vectors = np.clip(values[::-1], 0, None), vectors[:, ::-1]
    cumulative = np.cumsum(values) / values.sum()
    dim = int(np.searchsorted(cumulative, DIM_SHARED_FRACTION - 1e-12) + 1)
    w = vectors[:, 0]
    similarity = float(1 - len(w) * np.var(w))
    return SharedSummary(shared, fit.private, percent, min(dim, k), similarity)
