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


def test_a_tax_that_fails_near_the_base_point_names_the_tax_not_the_linear_form():
    request = validation_base()
    request["policies"].append({"name": "huge levy", "kind": "unit_tax", "amount": 400.0, "start": 3})
    detail = problem_of(request)["detail"]
    assert "leaves zero or negative quantity or price in period 3" in detail
    assert "choke price" in detail and "constant_elasticity" not in detail


def test_a_ceiling_that_fails_as_cost_shocks_compound_blames_the_linear_form_and_suggests_the_other():
    """Construction costs growing 4 % a period compound to +177 % by period 26: at the frozen base
    rent the linear supply curve has passed zero although the free market is still positive."""
    request = validation_base()
    request["market"]["supply"]["shifters"] = {"cost": -0.6}
    request["shocks"] = [{"shifter": "cost", "profile": "growth", "rate": 0.04}]
    request["horizon"] = 40
    request["policies"].append({"name": "rent freeze", "kind": "price_ceiling", "base_level": True})
    problem = problem_of(request)
    assert problem["type"] == "urn:shockpath:problem:infeasible-policy"
    assert pointers(problem) == ["/policies/1"]  # a freeze has no number to point at
    request["policies"][1] = {"name": "rent freeze", "kind": "price_ceiling", "level": "base"}
    assert problem_of(request) == problem  # the older spelling: the same request
    detail = problem["detail"]
    assert f"in period {problem['period']}" in detail and "'rent freeze'" in detail
    assert "compounded beyond the range of the linear (first-order) form" in detail
    assert '"form": "constant_elasticity"' in detail and "choke price" not in detail
    request["market"]["form"] = "constant_elasticity"
    assert simulate(request)["summary"][1]["final_quantity"] > 0
