"""Richardson extrapolation of a quantity over nested meshes, with an error estimate.

Over the last three levels Q_k (k = 1, 2, 3, with N_k nodes) the model
Q = Q∞ + C·N^(−r) is fitted exactly (generalised Richardson extrapolation;
Richardson, Phil. Trans. R. Soc. A 210, 1911; Roache, J. Fluids Eng. 116,
1994, 405–413, for the grid-convergence index). The observed order is
reported per mesh size h ∝ N^(−1/2), i.e. p = 2r.

The error estimate of the extrapolated value is deliberately the one of the
finest computed level, enlarged by Roache's safety factor Fs = 1.25 for
three-grid studies (from memory): e = Fs·|Q3 − Q∞|. The extrapolated value
is normally closer to the truth than Q3, so e covers its error with margin;
the test suite checks that it does on models with known answers. Where the
differences change sign or the observed order is implausible, no
extrapolation is claimed: the finest value is reported with
e = 3·max|Q3 − Q2|, |Q2 − Q1| (Celik et al., J. Fluids Eng. 130, 2008,
078001, oscillatory convergence; from memory). Changes within round-off
count as a mesh-independent answer (a one-dimensional field is exact on
every mesh); the estimate is then at least that round-off.

Coupling coefficients between more than two environments are not monotone
in the mesh, but the energies they are made of are:
:func:`coupling_from_energies` combines the extrapolations of those.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: Roache's safety factor for three-grid estimates [-].
SAFETY_FACTOR = 1.25
#: Roache's factor when the observed order is not confirmed (from memory) [-].
UNCONFIRMED_FACTOR = 3.0
#: Factor on the largest recent change when no order can be fitted [-].
OSCILLATION_FACTOR = 3.0
#: Plausible range of the observed order per node count r (p = 2r per h).
ORDER_RANGE = (0.05, 3.0)
#: Relative changes below this are round-off: the answer is mesh-independent [-].
ROUND_OFF = 1e-10


@dataclass(frozen=True)
class Extrapolation:
    """Richardson extrapolation over the last three levels.

    Attributes
    ----------
    value : float
        Extrapolated quantity (finest value when ``fitted`` is False).
    error_estimate : float
        Estimated absolute error of ``value`` (same unit).
    order : float or None
        Observed order per mesh size h (p = 2r, with Q − Q∞ ∝ N^(−r)).
    fitted : bool
        Whether a regular (monotone, plausible-order) fit was possible.
    guaranteed : bool
        ``error_estimate`` is a guaranteed bound, from an interval that holds
        the exact value (:mod:`bridgecalc.study.bounds`), and ``value`` lies
        in that interval.
    """

    value: float
    error_estimate: float
    order: float | None
    fitted: bool
    guaranteed: bool = False


def _rate_equation(r, n1, n2, n3):
    a, b, c = n1 ** -r, n2 ** -r, n3 ** -r
    return (a - b) / (b - c)


def extrapolate(nodes, values, max_rate: float = ORDER_RANGE[1],
                noise: float = ROUND_OFF) -> Extrapolation:
    """Fit Q = Q∞ + C·N^(−r) exactly through the last three (N, Q) pairs.

    A fitted rate above ``max_rate`` (the element's asymptotic rate, e.g. 1
    for the P1 energy and L2D) marks a pre-asymptotic sequence; the
    extrapolation then uses ``max_rate``, which gives the larger, safer
    correction, and the error estimate takes Roache's factor 3 for an
    unconfirmed order instead of 1.25.

    When both changes over the last three levels are within ``noise`` the
    values are taken as mesh-independent: Q3 with an error estimate of three
    times the larger change, and at least ``noise`` itself.

    Parameters
    ----------
    nodes : sequence of int
        Node counts N_k, increasing.
    values : sequence of float
        Q_k [any unit].
    max_rate : float
        Largest rate r per node count to extrapolate with [-].
    noise : float
        Relative size of round-off in the values [-].

    Returns
    -------
    Extrapolation
    """
    n = [float(x) for x in nodes]
    q = [float(x) for x in values]
    if len(q) < 2:
        return Extrapolation(q[-1], math.inf, None, False)
    if len(q) < 3:
        return Extrapolation(q[-1], OSCILLATION_FACTOR * abs(q[-1] - q[-2]), None, False)
    (n1, n2, n3), (q1, q2, q3) = n[-3:], q[-3:]
    d12, d23 = q1 - q2, q2 - q3
    unfitted = Extrapolation(q3, OSCILLATION_FACTOR * max(abs(d12), abs(d23)), None, False)
    scale = max(abs(q1), abs(q2), abs(q3))
    if max(abs(d12), abs(d23)) <= max(noise, ROUND_OFF) * scale:
        # exact on every mesh (e.g. 1D) to round-off; the estimate is at least that
        floor = noise * scale if noise > ROUND_OFF else 0.0
        return Extrapolation(q3, max(OSCILLATION_FACTOR * max(abs(d12), abs(d23)), floor),
                             None, True)
    if d23 == 0.0 or d12 == 0.0 or (d12 > 0) != (d23 > 0):
        return unfitted
    ratio = d12 / d23
    lo, hi = ORDER_RANGE
    f_lo, f_hi = _rate_equation(lo, n1, n2, n3) - ratio, _rate_equation(hi, n1, n2, n3) - ratio
    if f_lo * f_hi > 0:
        return unfitted
    for _ in range(100):                                 # bisection: the ratio grows with r
        mid = 0.5 * (lo + hi)
        f_mid = _rate_equation(mid, n1, n2, n3) - ratio
        if (f_mid > 0) == (f_hi > 0):
            hi, f_hi = mid, f_mid
        else:
            lo, f_lo = mid, f_mid
    r = 0.5 * (lo + hi)
    order = 2.0 * r
    # an order above the asymptotic one is not yet confirmed: larger factor
    factor = SAFETY_FACTOR if r <= max_rate else UNCONFIRMED_FACTOR
    r = min(r, max_rate)
    b, c = n2 ** -r, n3 ** -r
    limit = q3 - d23 * c / (b - c)
    return Extrapolation(limit, factor * abs(q3 - limit), order, True)


def coupling_from_energies(single_i: Extrapolation, single_j: Extrapolation,
                           pair: Extrapolation) -> Extrapolation:
    """L_ij = (E_i + E_j − E_ij) / 2 from extrapolated energies [W/(m·K)].

    E_c is the heat flow out of the environments c into all others when
    those of c are at 1 °C and the others at 0 °C: the cut of c in the
    coupling network, Σ_{i∈c, j∉c} L_ij, which is twice a potential energy
    and so decreases monotonically under nested refinement (Galerkin
    orthogonality), where a single L_ij need not. The identity is the cut
    identity of a symmetric network. The error estimates add; the order is
    that of the least accurate energy; the result is fitted when all three are.
    """
    parts = (single_i, single_j, pair)
    value = 0.5 * (single_i.value + single_j.value - pair.value)
    error = 0.5 * sum(p.error_estimate for p in parts)
    worst = max(parts, key=lambda p: p.error_estimate)
    return Extrapolation(value, error, worst.order, all(p.fitted for p in parts))
