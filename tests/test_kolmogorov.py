"""The two-sided Kolmogorov-Smirnov survival function against scipy's reference distribution."""

import numpy as np
import pytest
from scipy.stats import kstwo

from spikevar.recovery.kolmogorov import durbin_cdf, ks_two_sided_sf, pelz_good_sf


@pytest.mark.parametrize("n", [1, 2, 3, 7, 20, 60, 140, 141, 400, 1500, 6000, 10_000])
def test_every_region_agrees_with_scipy_kstwo(n):
    # scipy.stats.kstwo implements the same published methods (Simard & L'Ecuyer 2011,
    # J Stat Softw 39(11)); Pomeranz's recursion there, the Durbin matrix here for n <= 140
    rng = np.random.default_rng(n)
    d = np.unique(np.r_[rng.uniform(0, 1, 60), np.geomspace(0.3 / n, 0.999, 60),
                        rng.uniform(0.2, 3.0, 120) / np.sqrt(n)])
    d = d[(d > 0) & (d < 1)]
    ours = np.array([ks_two_sided_sf(n, x) for x in d])
    reference = kstwo.sf(d, n)
    keep = reference > 1e-250
    np.testing.assert_allclose(ours[keep], reference[keep], rtol=1e-9, atol=0)
    assert np.all(ours[~keep] < 1e-240)


def test_closed_forms_and_the_edges():
    # n d <= 1/2: D_n >= 1/(2n) always; n = 1: D_1 = max(U, 1 - U), so P(D_1 >= d) = 2 (1 - d)
    assert ks_two_sided_sf(50, 0.5 / 50) == 1.0
    assert ks_two_sided_sf(1, 0.7) == pytest.approx(0.6, rel=1e-12)
    assert ks_two_sided_sf(10, 1.0) == 0.0 and ks_two_sided_sf(10, 0.0) == 1.0
    # Durbin's matrix for n = 2 against the exact law of D_2 (closed form, here integrated
    # numerically by brute force over a fine grid of the two uniforms)
    u = (np.arange(2000) + 0.5) / 2000
    a, b = np.meshgrid(u, u)
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    d2 = np.maximum.reduce([lo, 0.5 - lo, hi - 0.5, 1.0 - hi])
    for x in (0.3, 0.45, 0.6, 0.8):
        assert durbin_cdf(2, x) == pytest.approx(np.mean(d2 < x), abs=2e-3)


def test_the_pelz_good_series_is_close_to_the_exact_matrix_where_both_apply():
    # the series is an asymptotic expansion (Pelz & Good 1976, J R Stat Soc B 38:152): at
    # n = 2000 its error is far below the p-values' own sampling uncertainty
    for x in (0.02, 0.025, 0.03):
        assert pelz_good_sf(2000, x) == pytest.approx(1.0 - durbin_cdf(2000, x), rel=1e-4)
