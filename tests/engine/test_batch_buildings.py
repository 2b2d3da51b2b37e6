"""Packing the fields of MODEL.md sections 16-20 (INTERFACE of the kernel): build limit,
conversion, exempt new homes, vacancy decontrol and the impact elasticity, also per draw of
bands and sensitivity; and the reduced form's short-run rows at the impact elasticity."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from service.engine import kernel
from service.engine.batch import impact_elasticity, pack
from service.engine.reduced_form import reduced_form, short_and_long_run
from service.engine.scenario import Adjustment, Market, Policy, Scenario
from service.engine.uncertainty import (
    CONVERSION_SUMMARY,
    STOCK_SUMMARY,
    VACANCY_DECONTROL,
    VS_FREE_PATH_SUMMARY,
    Distribution,
    UncertainInput,
    band_layout,
    default_rate_coupled,
    rows_for,
    scenario_batch_with,
)

MARKET = Market(
    price=1000.0,
    quantity=10_000.0,
    demand_elasticity=-0.5,
    short_run_elasticity=0.2,
    long_run_elasticity=1.5,
    demand_shifters={"income": 1.0},
    supply_shifters={"cost": -0.5},
)
FREE = Policy("free", "none")
CAP = Policy("cap", "price_ceiling", growth=0.02)


def _scenario(adjustment: Adjustment, policies=(FREE, CAP), market=MARKET) -> Scenario:
    return Scenario(market=market, horizon=5, policies=tuple(policies), adjustment=adjustment)


# --- the impact elasticity (MODEL.md 20) -------------------------------------------------------


@pytest.mark.parametrize(
    ("adjustment", "expected"),
    [
        # Nerlove (1958): short-run elasticity = lambda x long-run elasticity.
        (Adjustment("stock", rate=0.3), 0.3 * 1.5),
        (Adjustment("stock", half_life=2.0), (1.0 - 0.5**0.5) * 1.5),
        # The default lambda = eps_SR / eps_LR gives lambda eps_LR = eps_SR (derived).
        (Adjustment("stock"), 0.2),
        (Adjustment("stock", depreciation=0.01), 0.2),
        # Outside `stock` the impact period is short-run whatever the rate (MODEL.md 2).
        (Adjustment("geometric", rate=0.3), 0.2),
        (Adjustment("geometric", half_life=2.0), 0.2),
        (Adjustment("linear", periods=3), 0.2),
    ],
)
def test_the_impact_elasticity_is_lambda_times_the_long_run_only_under_stock_with_a_rate(
    adjustment, expected
):
    batch, _ = pack([_scenario(adjustment)])
    assert batch.impact_elasticity[0] == pytest.approx(expected, rel=1e-15)
    assert batch.short_run_elasticity[0] == 0.2  # the given value stays as it was


def test_packing_a_mixed_batch_gives_each_scenario_its_own_impact_elasticity():
    adjustments = [Adjustment("stock", rate=0.3), Adjustment("geometric", rate=0.3), Adjustment("stock")]
    batch, _ = pack([_scenario(a) for a in adjustments])
    assert batch.impact_elasticity.tolist() == pytest.approx([0.45, 0.2, 0.2], rel=1e-15)


@given(
    rate=st.floats(0.0, 1.0),
    short_run=st.floats(0.0, 5.0),
    long_run=st.floats(0.0, 5.0),
    stock=st.booleans(),
)
def test_impact_elasticity_elementwise(rate, short_run, long_run, stock):
    """Property: the vectorised rule equals its scalar statement (MODEL.md 20)."""
    out = impact_elasticity(np.array([stock]), np.array([rate]), np.array([short_run]), np.array([long_run]))
    expected = rate * long_run if stock and rate > 0.0 else short_run
    assert out[0] == expected


# --- the new fields, packed ----------------------------------------------------------------------


def test_build_limit_and_conversion_are_packed_with_zero_meaning_none():
    limited = _scenario(Adjustment("stock", rate=0.3, build_limit=0.02, conversion=0.03))
    plain = _scenario(Adjustment("stock", rate=0.3))
    batch, _ = pack([limited, plain])
    assert batch.build_limit.tolist() == [0.02, 0.0]
    assert batch.conversion.tolist() == [0.03, 0.0]
    assert batch.build_limit.dtype == batch.conversion.dtype == np.float64


def test_exempt_new_homes_and_vacancy_decontrol_are_packed_per_policy_row():
    exempt = Policy("exempt", "price_ceiling", level=900.0, new_homes="exempt", coverage=0.6)
    decontrolled = Policy("decontrol", "price_ceiling", growth=0.02, vacancy_decontrol=0.15)
    first = _scenario(Adjustment("stock", rate=0.3), (FREE, exempt, decontrolled))
    second = _scenario(Adjustment("stock", rate=0.3), (CAP,))
    _, rows = pack([first, second])
    assert rows.scenario.tolist() == [0, 0, 0, 1]
    assert rows.exempt_new.tolist() == [False, True, False, False]
    assert rows.decontrol.tolist() == [0.0, 0.0, 0.15, 0.0]
    assert rows.exempt_new.dtype == np.bool_ and rows.decontrol.dtype == np.float64


# --- per draw: bands and sensitivity -------------------------------------------------------------


def _uniform(low, high, lower=0.0, upper=1.0, lower_open=False) -> Distribution:
    return Distribution("uniform", low=low, high=high, lower=lower, upper=upper, lower_open=lower_open)


def test_drawn_inputs_move_the_impact_elasticity_and_conversion_of_each_draw():
    scenario = _scenario(Adjustment("stock", rate=0.3, conversion=0.03))
    base, _ = pack([scenario])
    inputs = [
        UncertainInput(
            "long_run_elasticity", "/market/supply/long_run_elasticity", _uniform(1.0, 2.0, upper=100)
        ),
        UncertainInput("schedule_rate", "/adjustment/rate", _uniform(0.2, 0.4, lower_open=True)),
        UncertainInput("conversion", "/adjustment/conversion", _uniform(0.0, 0.06, upper=100)),
    ]
    values = np.array([[1.0, 0.2, 0.0], [2.0, 0.4, 0.06]])
    batch = scenario_batch_with(base, scenario, inputs, values)
    assert batch.impact_elasticity.tolist() == pytest.approx([0.2 * 1.0, 0.4 * 2.0], rel=1e-15)
    assert batch.conversion.tolist() == [0.0, 0.06]
    assert batch.build_limit.tolist() == [0.0, 0.0]


def test_a_drawn_long_run_elasticity_under_the_default_rate_keeps_the_short_run_impact():
    scenario = _scenario(Adjustment("stock"))
    base, _ = pack([scenario])
    item = UncertainInput(
        "long_run_elasticity", "/market/supply/long_run_elasticity", _uniform(1.0, 2.0, upper=100)
    )
    batch = scenario_batch_with(base, scenario, [item], np.array([[1.0], [2.0]]))
    assert batch.impact_elasticity.tolist() == [0.2, 0.2]
    assert default_rate_coupled(scenario, [item])
    assert not default_rate_coupled(_scenario(Adjustment("stock", rate=0.3)), [item])
    assert not default_rate_coupled(_scenario(Adjustment("linear", periods=2)), [item])
    assert not default_rate_coupled(scenario, [])


def test_a_drawn_vacancy_decontrol_replaces_only_its_policys_rows():
    other = Policy("other cap", "price_ceiling", growth=0.01, vacancy_decontrol=0.5)
    scenario = _scenario(
        Adjustment("stock", rate=0.3), (FREE, Policy("cap", "price_ceiling", growth=0.02), other)
    )
    _, base_rows = pack([scenario])
    item = UncertainInput(
        (VACANCY_DECONTROL, 1), "/policies/1/vacancy_decontrol", _uniform(0.1, 0.3, lower_open=True)
    )
    values = np.array([[0.1], [0.2], [0.3]])
    rows = rows_for(base_rows, 3, [item], values)
    # policy-major: rows 0-2 the free market, 3-5 the drawn cap, 6-8 the other cap
    assert rows.decontrol.tolist() == [0.0] * 3 + [0.1, 0.2, 0.3] + [0.5] * 3
    assert rows.exempt_new.tolist() == [False] * 9
    assert rows_for(base_rows, 3).decontrol.tolist() == [0.0] * 6 + [0.5] * 3


# --- the reduced form's short-run rows (MODEL.md 7 and 20) -------------------------------------------


def test_the_reduced_forms_short_run_rows_use_lambda_times_the_long_run_under_stock_with_a_rate():
    """Muth (1964) / Gardner (1987) displacement: a demand shifter eta_i moves the price by
    eta_i / (eps - eta) and the quantity by eps eta_i / (eps - eta); a supply shifter eps_j by
    -eps_j / (eps - eta) and -eta eps_j / (eps - eta), here at eps = lambda eps_LR = 0.45."""
    batch, _ = pack([_scenario(Adjustment("stock", rate=0.3))])
    (sr_price, sr_quantity), (lr_price, lr_quantity) = short_and_long_run(batch)
    eps, eta = 0.3 * 1.5, -0.5
    # Columns in the order of the shifters' names: cost (supply, -0.5), income (demand, 1.0).
    assert MARKET.shifter_names == ("cost", "income")
    assert sr_price[0].tolist() == pytest.approx([0.5 / (eps - eta), 1.0 / (eps - eta)], rel=1e-14)
    assert sr_quantity[0].tolist() == pytest.approx([eta * 0.5 / (eps - eta), eps / (eps - eta)], rel=1e-14)
    assert lr_price[0].tolist() == pytest.approx([0.5 / 2.0, 1.0 / 2.0], rel=1e-14)
    assert lr_quantity[0].tolist() == pytest.approx([-0.25 / 2.0, 1.5 / 2.0], rel=1e-14)


def test_without_an_explicit_rate_the_short_run_rows_are_at_the_short_run_elasticity():
    batch, _ = pack([_scenario(Adjustment("stock")), _scenario(Adjustment("geometric", rate=0.3))])
    (sr_price, sr_quantity), _ = short_and_long_run(batch)
    price, quantity = reduced_form(
        batch.demand_elasticity,
        batch.short_run_elasticity,
        batch.demand_shifter_elasticity,
        batch.supply_shifter_elasticity,
    )
    assert np.array_equal(sr_price, price) and np.array_equal(sr_quantity, quantity)
    assert math.isclose(sr_price[0, MARKET.shifter_names.index("income")], 1.0 / 0.7, rel_tol=1e-15)


# --- what bands report (names from the kernel's summary) ---------------------------------------------


def test_every_banded_summary_figure_is_a_kernel_summary_figure():
    """After the kernel of MODEL.md 16-20: each name is read from kernel.SUMMARY_INDEX."""
    converting = _scenario(Adjustment("stock", rate=0.3, conversion=0.03))
    layout = band_layout(converting, [])
    for name in layout.summary:
        assert name in kernel.SUMMARY_INDEX, name
    assert set(STOCK_SUMMARY + VS_FREE_PATH_SUMMARY + CONVERSION_SUMMARY) <= set(layout.summary)
    assert "total_households_drawn_in" in layout.summary


def test_bands_carry_the_stock_figures_only_under_stock_and_conversion_only_where_homes_may_convert():
    plain = band_layout(_scenario(Adjustment("stock", rate=0.3)), [])
    assert "vs_free_path_renters_discounted" in plain.summary and "final_vacant_homes" in plain.summary
    assert "total_converted_homes" not in plain.summary
    drawn = UncertainInput("conversion", "/adjustment/conversion", _uniform(0.0, 0.06, upper=100))
    assert "total_converted_homes" in band_layout(_scenario(Adjustment("stock", rate=0.3)), [drawn]).summary
    geometric = band_layout(_scenario(Adjustment("geometric", rate=0.3)), [])
    assert not set(STOCK_SUMMARY + VS_FREE_PATH_SUMMARY + CONVERSION_SUMMARY) & set(geometric.summary)


def test_exempt_or_decontrolled_ceilings_band_their_controlled_and_market_rents():
    policies = (
        FREE,
        Policy("exempt", "price_ceiling", level=900.0, new_homes="exempt"),
        Policy("decontrol", "price_ceiling", growth=0.02, vacancy_decontrol=0.2),
        CAP,
    )
    layout = band_layout(_scenario(Adjustment("stock", rate=0.3), policies), [])
    has = ["covered_price" in names for names in layout.series]
    assert has == [False, True, True, False]
