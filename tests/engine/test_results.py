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
    # Two shifters out of range: the first shock in the request's order is blamed, whatever the
    # order of the shifters' names (the engine works in name order).
    request["market"]["demand"]["shifters"]["zeta"] = 1.0
    request["shocks"] = [
        {"shifter": "zeta", "profile": "step", "change": -0.6},
        {"shifter": "zeta", "profile": "step", "change": -0.5, "start": 4},
        *request["shocks"],
    ]
    problem = problem_of(request)
    assert pointers(problem) == ["/shocks/0"] and "'zeta'" in problem["detail"]


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


def test_a_long_list_solved_in_a_pipeline_of_chunks_gives_the_bytes_of_one_pass(monkeypatch):
    """solve_scenarios solves a list longer than PIPELINE_CHUNK in chunks, one chunk's period
    pass on a second thread while this one slices the last: every answer and every error (in
    its place) is what one pass over the whole list gives, across chunks of other horizons,
    forms, schedules and failures."""
    import copy

    import orjson

    from service import engine
    from service.engine import results
    from service.examples import example_request, examples
    from service.simulation import load_scenario, render

    requests = [
        example_request(n)
        for n, e in sorted(examples().items())
        if e.get("endpoint", "/v1/paths") == "/v1/paths"
    ]
    failing = validation_base()
    failing["policies"].append({"name": "huge levy", "kind": "unit_tax", "amount": 400.0, "start": 3})
    short = copy.deepcopy(failing)
    short["horizon"] = 2  # the levy starts after the horizon: an answer, over three periods
    scenarios = [load_scenario(r) for r in [*requests, failing, short, *requests[::-1], failing, short]]

    def answers(solved):
        return [
            repr(s)
            if isinstance(s, engine.EngineError)
            else orjson.dumps(render(sc, s, ""), option=orjson.OPT_SERIALIZE_NUMPY)
            for sc, s in zip(scenarios, solved, strict=True)
        ]

    one_pass = answers(results._solve_chunk(scenarios, as_lists=False))
    monkeypatch.setattr(results, "PIPELINE_CHUNK", 3)
    assert answers(engine.solve_scenarios(scenarios)) == one_pass
    assert answers(engine.solve_scenarios(scenarios, as_lists=True)) == one_pass
    assert sum(a.startswith("InfeasiblePolicyError") for a in one_pass if isinstance(a, str)) == 2


def test_assemble_reads_the_arrays_of_any_solve():
    """solve keeps every series by default (SERIES_NAMES), in another order than the answer's
    own pass (reported_series): assemble finds each series by name, so both give one answer."""
    import orjson

    from service import engine
    from service.engine import pack, solve
    from service.examples import example_request
    from service.simulation import load_scenario, render

    for name in (
        "tollbrae-decontrol-and-exempt-building",
        "ostrand-vale-vouchers",
        "corrowdale-older-buildings",
    ):
        scenario = load_scenario(example_request(name))
        batch, rows = pack([scenario])
        (every,) = engine.assemble([scenario], batch, rows, solve(batch, rows))
        (answer,) = engine.solve_scenarios([scenario])
        bodies = [render(scenario, result, "") for result in (every, answer)]
        one, other = (orjson.dumps(body, option=orjson.OPT_SERIALIZE_NUMPY) for body in bodies)
        assert one == other, name
