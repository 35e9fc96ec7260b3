"""The life cycle of docs/model.md, 'Life cycle' written out again in mpmath (no code shared with
infer.core.balance), for the balance tests to solve and probe at 50 digits.

Autosomal: zygotes AA p²(1-F)+pF, Aa 2pq(1-F), aa q²(1-F)+qF; fitnesses 1, 1-hs, 1-s;
q_sel = (Aa(1-hs)/2 + aa(1-s)) / w̄; q' = q_sel(1-nu) + (1-q_sel) mu.

X-linked (egg frequency x, sperm frequency y): mu_f = 3mu/(2+alpha), mu_m = alpha mu_f.
Daughters get one X of each: aa = (1-F)xy + F(x+y)/2, Aa = (1-F)(x(1-y) + y(1-x)),
fitnesses 1, 1-hs, 1-s; sons carry the egg's X (fitness 1, 1-s). Mothers after selection
give x' = mu_f + (1-mu_f-nu) q_f*; fathers after selection give y' = mu_m + (1-mu_m-nu) q_m*.
"""

from __future__ import annotations

__all__ = ["autosomal_step", "x_linked_step"]


def autosomal_step(q, mu, s, h, F, nu):
    """One generation of the autosomal life cycle: q -> q' (arguments as mpmath numbers)."""
    p = 1 - q
    AA, Aa, aa = p * p * (1 - F) + p * F, 2 * p * q * (1 - F), q * q * (1 - F) + q * F
    w = AA + Aa * (1 - h * s) + aa * (1 - s)
    selected = (Aa * (1 - h * s) / 2 + aa * (1 - s)) / w
    return selected * (1 - nu) + (1 - selected) * mu


def x_linked_step(x, y, mu, s, h, F, nu, alpha):
    """One generation of the X-linked life cycle: (x, y) -> (x', y').

    y' depends on x alone (sons carry their mother's X), so at a fixed point
    y = x_linked_step(x, ·)[1].
    """
    mu_f = 3 * mu / (2 + alpha)
    mu_m = alpha * mu_f
    mean = (x + y) / 2
    aa = (1 - F) * x * y + F * mean
    Aa = (1 - F) * (x * (1 - y) + y * (1 - x))
    AA = 1 - aa - Aa
    w = AA + Aa * (1 - h * s) + aa * (1 - s)
    daughters = (Aa * (1 - h * s) / 2 + aa * (1 - s)) / w
    sons = x * (1 - s) / (1 - s * x)
    return (mu_f + daughters * (1 - mu_f - nu), mu_m + sons * (1 - mu_m - nu))
