"""Welfare of each policy against the free market of the same period.

With (P*, Q*) the period's free-market point and (Pc, Pp, Q) the policy's:

    dCS = P* Q* - Pc Q - int_Q^Q* Qd^-1(q) dq
    dPS = Pp Q - P* Q* + int_Q^Q* Qs^-1(q) dq
    G   = (Pc - Pp) Q                       (negative for a subsidy)
    DWL = int_Q^Q* (Qd^-1 - Qs^-1) dq = -(dCS + dPS + G) >= 0

Under random rationing of a binding ceiling (Glaeser & Luttmer 2003, AER 93(4)) buyers also
lose the misallocation M = int_0^Q Qd^-1 - (Q/Qd) int_0^Qd Qd^-1 = Q (Qd^-1(Q) - c) / m, with
m = 2 for linear demand and m = 1 + 1/eta for constant elasticity (finite only for |eta| > 1);
M is added to DWL and taken from dCS. Money flows are per price interval times k payments per
model period. Discounting: the factor of period s is prod_(u<=s) 1/(1 + r_u).

Sources: surplus changes and deadweight loss as in Alston, Norton & Pardey (1995), *Science Under
Scarcity*, ch. 4-5; for a small unit tax on linear curves DWL is Harberger's (1964) triangle
1/2 tau^2 (Q0/P0) eps|eta| / (eps + |eta|); misallocation, Glaeser & Luttmer (2003), "The
Misallocation of Housing Under Rent Control", *American Economic Review* 93(4).

The compiled period pass (kernel.py: `_welfare`, `_group_welfare`, `_vs_free_path`) computes these
per cell; this module holds their statement.
"""

__all__: list[str] = []
