"""Engine errors: a small hierarchy, each with a stable snake_case code.

An error that can be traced to one input carries the RFC 6901 JSON Pointer of that input
(relative to the scenario document), so the HTTP layer can point the caller at the field.
"""

from __future__ import annotations

__all__ = [
    "EngineError",
    "InfeasiblePolicyError",
    "InputError",
    "LinearFormRangeError",
    "NonFiniteResultError",
]


class EngineError(Exception):
    """Base of every error the engine raises or returns for one scenario."""

    code = "engine_error"
    title = "The model could not compute this scenario"

    def __init__(self, message: str, pointer: str = "", period: int | None = None):
        super().__init__(message)
        self.message = message
        self.pointer = pointer
        self.period = period


class InputError(EngineError):
    """Inputs that are valid one by one but economically inconsistent together."""

    code = "invalid_market"
    title = "The market, shocks or policies are inconsistent"


class LinearFormRangeError(InputError):
    """The first-order (linear) equilibrium leaves zero or negative price or quantity."""

    code = "shock_too_large_for_linear_form"
    title = "The shock is too large for the linear form"


class InfeasiblePolicyError(InputError):
    """A policy leaves zero or negative quantity or price in some period."""

    code = "infeasible_policy"
    title = "A policy makes the market infeasible"


class NonFiniteResultError(EngineError):
    """A result overflowed; never returned as NaN or infinity."""

    code = "non_finite_result"
    title = "The scenario produces numbers outside the representable range"
