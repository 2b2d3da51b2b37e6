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


def test_each_groups_discounted_total_is_banded_over_the_draws_own_totals():
    """The who-gains table discounts, so its spread is the percentiles of each draw's own
    discounted group totals (the simulate answer of that draw), not of the summed ones: a sum's
    percentiles are not its parts'. Checked draw by draw against numpy's percentile."""
    base = request()
    base["welfare"] = {"discount_rate": 0.05}
    dist = {"distribution": "uniform", "low": -0.9, "high": -0.3}
    n = 25
    body = bands({**_with_eta(base, dist), "draws": n, "seed": 4, "percentiles": [10, 50, 90]})
    d = Distribution("uniform", low=-0.9, high=-0.3)
    etas = draw([UncertainInput("demand_elasticity", "/x", d)], n, 4)[:, 0]
    answers = [simulate(_with_eta(base, float(eta)))["summary"] for eta in etas]
    for p, band in enumerate(body["bands"]):
        for group in ("tenants_in_controlled_homes", "owners_of_controlled_homes", "government"):
            discounted = [a[p]["distribution_totals_discounted"][group] for a in answers]
            summed = [a[p]["distribution_totals"][group] for a in answers]
            for q in (10, 50, 90):
                got = band["summary"]["discounted_" + group][str(q)]
                assert got == pytest.approx(np.percentile(discounted, q), rel=1e-12, abs=1e-9)
                assert band["summary"]["total_" + group][str(q)] == pytest.approx(
                    np.percentile(summed, q), rel=1e-12, abs=1e-9
                )
    freeze = body["bands"][1]["summary"]
    assert (
        freeze["discounted_owners_of_controlled_homes"]["50"]
        != freeze["total_owners_of_controlled_homes"]["50"]
    )


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
    # the central answer is the /v1/paths answer; its request is the bands answer's own
    assert body["central"] == {k: v for k, v in paths.items() if k != "request"}
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


# --- what MODEL.md 12-15 add: inflation, the stock, partial coverage, who gains and loses -------


def additions_request(**kw):
    """The market above under the stock schedule (Nerlove default rate eps_SR / eps_LR), with
    inflation, a nominal freeze lifted after period 3, a growth cap on 60 % of the homes and a
    nominal levy."""
    r = request(**kw)
    r["market"]["inflation"] = 0.03
    r["adjustment"] = {"schedule": "stock", "depreciation": 0.01}
    r["policies"] = [
        {"name": "free", "kind": "none"},
        {"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 3},
        {"name": "part cap", "kind": "price_ceiling", "growth": 0.0, "coverage": 0.6},
        {"name": "levy", "kind": "unit_tax", "amount": 5.0},
    ]
    return r


def _point(value):
    return {"distribution": "normal", "mean": value, "sd": 0.0}


def _banded(band):
    return set(band["series"])


def test_the_free_market_is_never_below_or_above_its_own_path_in_any_draw():
    r = additions_request()
    r["market"]["demand"]["price_elasticity"] = {"distribution": "uniform", "low": -0.9, "high": -0.3}
    r["market"]["supply"]["long_run_elasticity"] = {"distribution": "uniform", "low": 0.8, "high": 2.0}
    body = bands({**r, "draws": 300, "seed": 2})
    free = body["bands"][0]
    for name in ("homes_below_free_path", "rent_above_free_path"):
        for values in free["series"][name].values():
            assert values == [0.0] * 7
    for name in ("final_homes_below_free_path", "peak_homes_below_free_path"):
        assert set(free["summary"][name].values()) == {0.0}
    # The freeze keeps homes missing after it is lifted in period 3 (a durable stock, MODEL.md 13).
    freeze = body["bands"][1]["series"]["homes_below_free_path"]
    assert min(freeze["5"][4:]) > 0.0


def test_only_the_series_that_apply_to_a_scenario_are_banded():
    plain = bands({**_with_eta(request(), {"distribution": "normal", "mean": -0.5, "sd": 0.1}), "draws": 50})
    every = {
        "consumer_price",
        "quantity",
        "shortage",
        "deadweight_loss",
        "cumulative_deadweight_loss",
        "discounted_deadweight_loss",
    }
    assert all(_banded(b) == every for b in plain["bands"])
    assert all("peak_homes_below_free_path" not in b["summary"] for b in plain["bands"])
    assert all("total_households_priced_out" in b["summary"] for b in plain["bands"])

    r = additions_request()
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.1}
    body = bands({**r, "draws": 50})
    stock = {"homes_below_free_path", "rent_above_free_path", "nominal_consumer_price"}
    assert [_banded(b) for b in body["bands"]] == [
        every | stock,
        every | stock,
        every | stock | {"covered_price", "uncovered_price"},  # only the ceiling on part of the homes
        every | stock,
    ]
    for band in body["bands"]:
        assert {"final_homes_below_free_path", "peak_homes_below_free_path"} <= set(band["summary"])


def test_under_random_rationing_the_band_summaries_have_no_groups_and_say_so():
    r = request()
    r["welfare"] = {"rationing": "random"}
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.1}
    body = bands({**r, "draws": 50})
    assert all(
        not any(k.startswith("total_") and k != "total_deadweight_loss" for k in b["summary"])
        for b in body["bands"]
    )
    assert any("random rationing" in c and "who gains" in c for c in body["cautions"])
    assert body["central"]["paths"][0]["distribution"] is None


def test_degenerate_inputs_collapse_every_band_onto_the_paths_answer():
    """Every input a point: each draw is the central scenario, so every percentile of every
    banded series is its path (float32) and every summary percentile the central figure."""
    r = additions_request(form="constant_elasticity")
    r["market"]["demand"]["price_elasticity"] = _point(-0.5)
    r["market"]["inflation"] = {"distribution": "uniform", "low": 0.03, "high": 0.03}
    r["adjustment"] = {
        "schedule": "stock",
        "rate": {"distribution": "triangular", "low": 0.25, "mode": 0.25, "high": 0.25},
        "depreciation": _point(0.01),
    }
    body = bands({**r, "draws": 40, "seed": 5, "percentiles": [5, 50, 95]})
    plain = copy.deepcopy(additions_request(form="constant_elasticity"))
    plain["adjustment"] = {"schedule": "stock", "rate": 0.25, "depreciation": 0.01}
    paths = simulate(plain)
    # the central answer is the /v1/paths answer; its request is the bands answer's own
    assert body["central"] == {k: v for k, v in paths.items() if k != "request"}
    for band, path, summary in zip(body["bands"], paths["paths"], paths["summary"], strict=True):
        for name, by_q in band["series"].items():
            for values in by_q.values():
                assert values == pytest.approx(path[name], rel=1e-6, abs=1e-3), (band["name"], name)
        for name, by_q in band["summary"].items():
            if name.startswith("total_") and name not in ("total_deadweight_loss", "total_converted_homes"):
                expected = summary["distribution_totals"][name.removeprefix("total_")]
            elif name.startswith("discounted_") and name != "discounted_deadweight_loss":
                expected = summary["distribution_totals_discounted"][name.removeprefix("discounted_")]
            elif name.startswith("vs_free_path_"):
                expected = summary["vs_free_path_totals"][name.removeprefix("vs_free_path_")]
            else:
                expected = summary[name]
            for value in by_q.values():
                assert value == pytest.approx(expected, rel=1e-12, abs=1e-9), (band["name"], name)


def test_a_drawn_inflation_rate_at_a_point_reproduces_the_paths_of_that_inflation():
    r = additions_request()
    r["market"]["inflation"] = _point(0.04)
    body = bands({**r, "draws": 7, "seed": 1})
    plain = additions_request()
    plain["market"]["inflation"] = 0.04
    paths = simulate(plain)
    # the central answer is the /v1/paths answer; its request is the bands answer's own
    assert body["central"] == {k: v for k, v in paths.items() if k != "request"}
    for band, path in zip(body["bands"], paths["paths"], strict=True):
        # The nominal rent here is written per draw by the kernel (pc x I_t of the draw).
        for name in ("consumer_price", "nominal_consumer_price", "quantity", "homes_below_free_path"):
            for values in band["series"][name].values():
                assert values == pytest.approx(path[name], rel=1e-6), (band["name"], name)


def test_with_a_fixed_price_index_the_nominal_band_is_the_real_band_times_the_index():
    r = additions_request()
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.15}
    body = bands({**r, "draws": 1000, "seed": 3})
    index = np.array(body["central"]["price_index"])
    assert index[-1] == pytest.approx(1.03**6, rel=1e-14)
    for band in body["bands"]:
        for q, real in band["series"]["consumer_price"].items():
            nominal = band["series"]["nominal_consumer_price"][q]
            np.testing.assert_allclose(nominal, np.array(real) * index, rtol=1e-15)


def test_each_draw_takes_the_nerlove_rate_of_its_own_elasticities():
    """Stock schedule without a rate: lambda = eps_SR / eps_LR of each draw (MODEL.md 13), so
    one draw's band is the /v1/paths answer at that draw's elasticities."""
    from service.schemas.uncertainty import BandsRequestSchema

    r = additions_request()
    r["market"]["supply"]["short_run_elasticity"] = {"distribution": "uniform", "low": 0.1, "high": 0.5}
    r["market"]["supply"]["long_run_elasticity"] = {"distribution": "uniform", "low": 0.8, "high": 2.5}
    req = {**r, "draws": 1, "seed": 12}
    loaded = BandsRequestSchema().load(req)
    ((sr, lr),) = draw(loaded.inputs, 1, 12)
    body = bands(req)
    plain = additions_request()
    plain["market"]["supply"]["short_run_elasticity"] = float(sr)
    plain["market"]["supply"]["long_run_elasticity"] = float(lr)
    paths = simulate(plain)
    central = body["central"]
    # The central rate 0.3 / 1.65 differs from this draw's: the paths differ visibly.
    assert abs(central["paths"][1]["quantity"][6] - paths["paths"][1]["quantity"][6]) > 1.0
    for band, path, summary in zip(body["bands"], paths["paths"], paths["summary"], strict=True):
        for name, by_q in band["series"].items():
            for values in by_q.values():
                assert values == pytest.approx(path[name], rel=1e-6, abs=1e-3), (band["name"], name)
        for name in (
            "final_homes_below_free_path",
            "peak_homes_below_free_path",
            "discounted_deadweight_loss",
        ):
            assert band["summary"][name]["50"] == pytest.approx(summary[name], rel=1e-12, abs=1e-9)


def test_every_draw_gets_its_own_inflation_rate_and_depreciation_and_keeps_the_rest():
    from service.engine.batch import pack
    from service.engine.uncertainty import scenario_batch_with
    from service.schemas.uncertainty import BandsRequestSchema

    r = additions_request()
    r["market"]["inflation"] = {"distribution": "uniform", "low": 0.0, "high": 0.1}
    r["adjustment"] = {
        "schedule": "stock",
        "rate": {"distribution": "uniform", "low": 0.1, "high": 0.9},
        "depreciation": {"distribution": "uniform", "low": 0.0, "high": 0.2},
    }
    loaded = BandsRequestSchema().load({**r, "draws": 5})
    assert [i.target for i in loaded.inputs] == ["inflation", "schedule_rate", "depreciation"]
    values = np.array([[0.02, 0.3, 0.05], [0.0, 1.0, 0.0], [0.1, 0.5, 1.0]])
    base, _ = pack([loaded.scenario])
    batch = scenario_batch_with(base, loaded.scenario, loaded.inputs, values)
    assert batch.inflation.shape == (3, 7)
    assert np.array_equal(batch.inflation[:, 0], np.zeros(3))
    assert np.array_equal(batch.inflation[:, 1:], np.repeat(values[:, :1], 6, axis=1))
    assert batch.has_inflation.tolist() == [True, True, True]
    assert batch.schedule_rate.tolist() == [0.3, 1.0, 0.5]
    assert batch.floor_share.tolist() == [0.95, 1.0, 0.0]  # delta = 1: no floor, as in pack
    assert batch.stock.tolist() == [True, True, True]
    assert np.array_equal(batch.demand_elasticity, np.full(3, -0.5))


def test_sensitivity_to_depreciation_swings_the_homes_below_the_free_path():
    """A ceiling 10 % below the base rent: the desired stock falls, and where it would fall
    faster than the depreciation allows the stock shrinks by exactly that share each period
    (K_t = (1 - delta) K_(t-1), MODEL.md 13, derived)."""
    r = request()
    r["adjustment"] = {
        "schedule": "stock",
        "depreciation": {"distribution": "uniform", "low": 0.005, "high": 0.05},
    }
    r["policies"] = [
        {"name": "free", "kind": "none"},
        {"name": "cut", "kind": "price_ceiling", "level": 90.0},
    ]
    r["market"]["demand"]["price_elasticity"] = {"distribution": "uniform", "low": -0.6, "high": -0.4}
    body = sensitivity(r)
    entry = next(i for i in body["inputs"] if i["pointer"] == "/adjustment/depreciation")
    cut = entry["policies"][1]
    assert cut["swing"]["final_homes_below_free_path"] > 0.0
    assert cut["swing"]["peak_homes_below_free_path"] > 0.0
    assert entry["policies"][0]["swing"]["peak_homes_below_free_path"] == 0.0
    low = copy.deepcopy(r)
    low["market"]["demand"]["price_elasticity"] = -0.5
    low["adjustment"]["depreciation"] = 0.005
    paths = simulate(low)
    quantity = paths["paths"][1]["quantity"]
    assert quantity == pytest.approx([1000.0 * 0.995**t for t in range(7)], rel=1e-12)
    free = paths["paths"][0]["quantity"]
    assert cut["low"]["final_homes_below_free_path"] == pytest.approx(free[6] - quantity[6], rel=1e-12)
    assert set(body["headlines"]) >= {"final_homes_below_free_path", "total_households_priced_out"}


def test_sensitivity_headlines_follow_the_scenario():
    r = request()
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.1}
    plain = sensitivity(r)["headlines"]
    assert plain == [
        "discounted_deadweight_loss",
        "peak_shortage",
        "final_consumer_price",
        "total_tenants_in_controlled_homes",
        "total_tenants_in_uncontrolled_homes",
        "total_households_priced_out",
        "total_owners_of_controlled_homes",
        "total_owners_of_uncontrolled_homes",
        "total_government",
        "total_households_drawn_in",
    ]
    r["welfare"] = {"rationing": "random"}
    assert sensitivity(r)["headlines"] == plain[:3]


@pytest.mark.parametrize(
    ("distribution", "low", "high"),
    [
        (Distribution("normal", mean=-0.98, sd=0.05, lower=-1.0, upper=10.0, lower_open=True), -1.0, 10.0),
        (Distribution("normal", mean=0.02, sd=0.3, lower=0.0, upper=1.0, lower_open=True), 0.0, 1.0),
        (Distribution("normal", mean=0.99, sd=0.2, lower=0.0, upper=1.0), 0.0, 1.0),
    ],
    ids=["inflation", "rate", "depreciation"],
)
def test_truncated_normals_of_rates_stay_inside_their_ranges(distribution, low, high):
    x = draw([UncertainInput("inflation", "/x", distribution)], 50_000, seed=4)[:, 0]
    assert x.min() > low if distribution.lower_open else x.min() >= low
    assert x.max() <= high
    reference = stats.truncnorm(
        (low - distribution.mean) / distribution.sd,
        (high - distribution.mean) / distribution.sd,
        loc=distribution.mean,
        scale=distribution.sd,
    )
    assert x.mean() == pytest.approx(reference.mean(), abs=4 * reference.std() / np.sqrt(x.size))
