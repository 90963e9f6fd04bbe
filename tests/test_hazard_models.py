"""One implementation of each model's hazard, cumulative hazard, density and distribution."""

import numpy as np
import pytest
from scipy import integrate, stats

from spikevar.recovery import hazard_models as hm


@pytest.mark.parametrize("model,tau,d", [("poisson", np.nan, np.nan),
                                         ("dead_time", np.nan, 0.002),
                                         ("exp_recovery", 0.01, 0.001)])
def test_density_integrates_to_the_distribution_function(model, tau, d):
    s = np.linspace(0.0, 0.3, 7)
    kw = dict(rate_hz=40.0, tau_s=tau, dead_time_s=d)
    for value in s[1:]:
        area, _ = integrate.quad(lambda x: hm.model_pdf(model, x, **kw), 0, value, points=[0.002])
        assert area == pytest.approx(hm.model_cdf(model, value, **kw), abs=1e-8)


def test_poisson_and_dead_time_are_scipy_exponentials():
    # scipy's reference exponential distribution (shifted by the dead time)
    s = np.array([0.0005, 0.003, 0.02, 0.2])
    np.testing.assert_allclose(hm.model_cdf("poisson", s, rate_hz=25.0),
                               stats.expon(scale=1 / 25.0).cdf(s))
    np.testing.assert_allclose(hm.model_pdf("dead_time", s, rate_hz=25.0, dead_time_s=0.002),
                               stats.expon(loc=0.002, scale=1 / 25.0).pdf(s))


def test_fitted_parameters_a_model_does_not_have_are_ignored():
    # table rows hold NaN for tau (poisson, dead_time) and dead time (poisson)
    s = np.array([0.01, 0.1])
    assert np.isfinite(hm.model_cumulative_hazard("poisson", s, rate_hz=5.0, tau_s=np.nan,
                                                  dead_time_s=np.nan)).all()
    with pytest.raises(ValueError, match="unknown model"):
        hm.model_cdf("gamma", s, rate_hz=5.0)


def test_fit_likelihood_is_the_sum_of_log_model_densities():
    # the fit's profile likelihood (rate profiled out: r = n / sum G) must be the log density
    # of the same closed form, so fits, goodness of fit and figures describe one model
    from spikevar.recovery.exp_likelihood import profile_loglik as exp_recovery_profile_loglik
    from spikevar.recovery.fit import Intervals

    rng = np.random.default_rng(4)
    isi = np.sort(0.002 + rng.exponential(0.03, 400))
    iv = Intervals.build(isi)
    tau, d = 0.006, 0.0015
    u = isi - d
    rate = len(isi) / np.sum(u - tau * -np.expm1(-u / tau))
    direct = np.log(hm.model_pdf("exp_recovery", isi, rate_hz=rate, tau_s=tau,
                                 dead_time_s=d)).sum()
    assert exp_recovery_profile_loglik(iv, tau, d) == pytest.approx(direct, rel=1e-10)
