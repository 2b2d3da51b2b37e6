"""service/engine/results.py: scenarios the model cannot answer get an engine error with the
JSON Pointer of the input to change, the policy and the period."""

from __future__ import annotations

from service import simulate

from .builders import pointers, problem_of, validation_base


def test_a_shock_too_large_for_the_linear_form_suggests_constant_elasticity():
    request = validation_base()
    request["shocks"] = [{"shifter": "income", "profile": "step", "change": -0.9, "start": 2}]
    request["market"]["demand"]["shifters"]["income"] = 2.0
    problem = problem_of(request)
    assert pointers(problem) == ["/shocks"]
    assert "constant_elasticity" in problem["detail"] and problem["period"] == 2
    request["market"]["form"] = "constant_elasticity"
    assert simulate(request)["paths"][0]["quantity"][2] > 0


def test_a_unit_tax_at_the_choke_price_names_the_policy_and_period():
    request = validation_base()
    request["policies"].append({"name": "huge levy", "kind": "unit_tax", "amount": 400.0, "start": 3})
    problem = problem_of(request)
    assert pointers(problem) == ["/policies/1/amount"]
    assert "huge levy" in problem["detail"] and problem["period"] == 3


def test_random_rationing_with_unbounded_willingness_to_pay_is_refused():
    request = validation_base(form="constant_elasticity")
    request["policies"].append({"name": "freeze", "kind": "price_ceiling", "level": "base"})
    request["welfare"] = {"rationing": "random"}
    assert pointers(problem_of(request)) == ["/welfare/rationing"]
    request["market"]["demand"]["price_elasticity"] = -1.4
    assert simulate(request)["summary"][1]["total_deadweight_loss"] >= 0


def test_summed_shocks_at_minus_one_hundred_percent_point_at_the_first_shock():
    request = validation_base(form="constant_elasticity")
    request["shocks"] = [
        {"shifter": "cost", "profile": "step", "change": 0.1},
        {"shifter": "income", "profile": "step", "change": -0.6},
        {"shifter": "income", "profile": "step", "change": -0.5, "start": 4},
    ]
    assert pointers(problem_of(request)) == ["/shocks/1"]
