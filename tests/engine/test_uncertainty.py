"""service/engine/uncertainty.py: the draws, and bands that the model's monotonicity pins down."""

from __future__ import annotations

import copy

import numpy as np
import pytest
from scipy import stats

from service import bands, sensitivity, simulate
from service.engine.uncertainty import Distribution, UncertainInput, draw


def market(eta=-0.5, sr=0.2, lr=1.2, form="linear"):
    return {
        "price": 100.0,
        "quantity": 1000.0,
        "form": form,
        "demand": {"price_elasticity": eta, "shifters": {"income": 1.0}},
        "supply": {"short_run_elasticity": sr, "long_run_elasticity": lr, "shifters": {"cost": -0.4}},
    }


def request(**kw):
    return {
        "market": market(**kw),
        "shocks": [{"shifter": "income", "profile": "step", "change": 0.08}],
        "adjustment": {"schedule": "linear", "periods": 4},
        "horizon": 6,
        "policies": [
            {"name": "free", "kind": "none"},
            {"name": "freeze", "kind": "price_ceiling", "level": "base"},
            {"name": "levy", "kind": "unit_tax", "amount": 5.0},
        ],
    }


DISTRIBUTIONS = [
    pytest.param(
        Distribution("normal", mean=-0.6, sd=0.2, lower=-100.0, upper=0.0, upper_open=True),
        stats.truncnorm(-99.4 / 0.2, 3.0, -0.6, 0.2),
        id="normal-truncated-at-zero",
    ),
    pytest.param(Distribution("uniform", low=0.1, high=0.9), stats.uniform(0.1, 0.8), id="uniform"),
    pytest.param(
        Distribution("triangular", low=1.0, mode=1.8, high=3.0), stats.triang(0.4, 1.0, 2.0), id="triangular"
    ),
]


@pytest.mark.parametrize(("distribution", "reference"), DISTRIBUTIONS)
def test_draws_have_the_mean_and_variance_of_scipy_stats(distribution, reference):
    n = 200_000
    x = draw([UncertainInput("demand_elasticity", "/x", distribution)], n, seed=11)[:, 0]
    mean, var = reference.stats(moments="mv")
    assert abs(x.mean() - mean) < 4.0 * np.sqrt(var / n)
    # Variance of the sample variance ~ (mu4 - var^2) / n; 5 % is far beyond 4 standard errors here.
    assert x.var() == pytest.approx(float(var), rel=0.02)
    assert stats.kstest(x, reference.cdf).pvalue > 1e-3


def test_a_truncated_normal_is_redrawn_inside_the_sign_rule_never_clipped():
    d = Distribution("normal", mean=-0.05, sd=0.3, lower=-100.0, upper=0.0, upper_open=True)
    x = draw([UncertainInput("demand_elasticity", "/x", d)], 100_000, seed=3)[:, 0]
    assert x.max() < 0.0
    assert np.mean(x > -1e-6) < 1e-3  # no pile of mass at the bound, as clipping would leave
    reference = stats.truncnorm(-np.inf, 0.05 / 0.3, loc=-0.05, scale=0.3)
    assert x.mean() == pytest.approx(reference.mean(), abs=4 * reference.std() / np.sqrt(x.size))


def test_same_seed_same_draws_other_seed_other_draws():
    items = [UncertainInput("demand_elasticity", "/x", Distribution("uniform", low=-1.0, high=-0.2))]
    assert np.array_equal(draw(items, 1000, 5), draw(items, 1000, 5))
    assert not np.array_equal(draw(items, 1000, 5), draw(items, 1000, 6))


def test_supply_elasticities_can_be_drawn_correlated():
    items = [
        UncertainInput("short_run_elasticity", "/a", Distribution("uniform", low=0.0, high=0.5)),
        UncertainInput("long_run_elasticity", "/b", Distribution("triangular", low=0.5, mode=1.0, high=3.0)),
    ]
    x = draw(items, 50_000, 1, supply_correlation=0.7)
    rho = stats.spearmanr(x[:, 0], x[:, 1]).statistic
    # Spearman's rho of a Gaussian copula with r = 0.7 is (6/pi) asin(r/2).
    assert rho == pytest.approx(6 / np.pi * np.arcsin(0.35), abs=0.01)


def _with_eta(req, eta):
    r = copy.deepcopy(req)
    r["market"]["demand"]["price_elasticity"] = eta
    return r


def test_a_band_is_the_path_at_the_elasticitys_order_statistics():
    """Linear form: P*_t is monotone in eta, so the q-th percentile of the band is the
    interpolation, between neighbouring order statistics of the draws, of paths at them."""
    base = request()
    dist = {"distribution": "normal", "mean": -0.5, "sd": 0.12}
    body = bands({**_with_eta(base, dist), "draws": 4001, "seed": 9, "percentiles": [5, 50, 95]})
    d = Distribution("normal", mean=-0.5, sd=0.12, lower=-100.0, upper=0.0, upper_open=True)
    x = np.sort(draw([UncertainInput("demand_elasticity", "/x", d)], 4001, 9)[:, 0])
    for q in (5, 50, 95):
        position = (x.size - 1) * q / 100.0
        lo, frac = int(np.floor(position)), position - np.floor(position)
        at_lo = simulate(_with_eta(base, float(x[lo])))["paths"][0]["consumer_price"]
        at_hi = simulate(_with_eta(base, float(x[lo + 1])))["paths"][0]["consumer_price"]
        band = body["bands"][0]["series"]["consumer_price"][str(q)]
        for t in range(1, 7):
            # The price rises with eta (0.08 / (eps_t - eta)), so the sorted prices are the prices
            # at the sorted etas, and numpy's linear interpolation carries over exactly (float32).
            assert band[t] == pytest.approx(at_lo[t] + frac * (at_hi[t] - at_lo[t]), rel=1e-6)


def test_a_band_percentile_matches_the_path_at_scipys_ppf_within_sampling_error():
    base = request()
    n = 20_000
    body = bands(
        {**_with_eta(base, {"distribution": "uniform", "low": -0.9, "high": -0.3}), "draws": n, "seed": 2}
    )
    for q in (5, 50, 95):
        spread = 4.0 * np.sqrt(q / 100 * (1 - q / 100) / n)
        lo, hi = stats.uniform(-0.9, 0.6).ppf([q / 100 - spread, q / 100 + spread])
        # The rise 0.08 / (eps_t - eta) grows with eta (less elastic demand): the q-th price is
        # the price at the q-th eta.
        band = body["bands"][0]["series"]["consumer_price"][str(q)][3]
        p_mid = simulate(_with_eta(base, float(stats.uniform(-0.9, 0.6).ppf(q / 100))))["paths"][0][
            "consumer_price"
        ][3]
        p_a = simulate(_with_eta(base, float(lo)))["paths"][0]["consumer_price"][3]
        p_b = simulate(_with_eta(base, float(hi)))["paths"][0]["consumer_price"][3]
        assert min(p_a, p_b) <= band <= max(p_a, p_b)
        assert band == pytest.approx(p_mid, rel=2e-3)


def test_degenerate_distributions_collapse_onto_the_paths_answer():
    base = request(form="constant_elasticity")
    r = copy.deepcopy(base)
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.0}
    r["market"]["supply"]["long_run_elasticity"] = {"distribution": "uniform", "low": 1.2, "high": 1.2}
    r["market"]["demand"]["shifters"]["income"] = {
        "distribution": "triangular",
        "low": 1.0,
        "mode": 1.0,
        "high": 1.0,
    }
    body = bands({**r, "draws": 50, "seed": 1})
    paths = simulate(base)
    assert body["central"] == paths
    for band, path in zip(body["bands"], paths["paths"], strict=True):
        for name, by_q in band["series"].items():
            for values in by_q.values():
                assert values == pytest.approx(path[name], rel=1e-6, abs=1e-3)


def test_bands_are_reproducible_from_the_seed():
    r = {**_with_eta(request(), {"distribution": "normal", "mean": -0.5, "sd": 0.1}), "draws": 500}
    assert bands({**r, "seed": 4}) == bands({**r, "seed": 4})
    assert bands({**r, "seed": 4})["bands"] != bands({**r, "seed": 5})["bands"]


def test_threads_give_the_same_answer():
    r = {
        **_with_eta(request(), {"distribution": "normal", "mean": -0.5, "sd": 0.1}),
        "draws": 5000,
        "seed": 8,
    }
    assert bands(r, threads=1) == bands(r, threads=2)


def test_draws_that_make_a_policy_infeasible_are_counted_not_hidden():
    r = request()
    r["policies"] = [
        {"name": "free", "kind": "none"},
        {"name": "big levy", "kind": "unit_tax", "amount": 150.0},
    ]
    r["shocks"] = []
    # Linear form, eps = 1: Pc rises by tau eps / (eps + |eta|), so Q = Q0 (1 - 1.5 |eta| / (1 + |eta|))
    # and Pp = 100 + 150 / (1 + |eta|) - 150 reach zero at |eta| = 2: a quarter of U(-2.6, -1.0) and
    # more lies beyond.
    r["market"]["demand"]["price_elasticity"] = {"distribution": "uniform", "low": -2.6, "high": -1.0}
    r["market"]["supply"]["short_run_elasticity"] = r["market"]["supply"]["long_run_elasticity"] = 1.0
    r.pop("adjustment")
    body = bands({**r, "draws": 2000, "seed": 1})
    levy = body["bands"][1]
    share_out = (2.6 - 2.0) / 1.6
    assert levy["infeasible_draws"] == pytest.approx(2000 * share_out, rel=0.1)
    assert body["bands"][0]["infeasible_draws"] == 0
    assert any("infeasible" in c for c in body["cautions"])


def test_sensitivity_ranks_an_input_without_effect_last_with_zero_swing():
    r = request()
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.1}
    r["market"]["supply"]["long_run_elasticity"] = {"distribution": "uniform", "low": 0.8, "high": 2.0}
    r["market"]["supply"]["shifters"]["cost"] = {
        "distribution": "triangular",
        "low": -0.8,
        "mode": -0.4,
        "high": 0.0,
    }
    body = sensitivity(r)  # no shock moves "cost": its elasticity cannot matter
    pointers = [i["pointer"] for i in body["inputs"]]
    assert pointers[-1] == "/market/supply/shifters/cost"
    last = body["inputs"][-1]
    assert all(v == 0.0 for p in last["policies"] for v in p["swing"].values())
    first = body["inputs"][0]
    assert first["largest_swing"]["discounted_deadweight_loss"] > 0
    normal = next(i for i in body["inputs"] if i["distribution"] == "normal")
    low, high = stats.truncnorm(-99.5 / 0.1, 5.0, -0.5, 0.1).ppf([0.05, 0.95])
    assert (normal["low"], normal["high"]) == pytest.approx((low, high), rel=1e-12)
