"""A probability and its complement from its logarithm, each with a proven relative bound.

Given l = ln q < 0 computed with relative error at most e (so absolutely |l| e), the
probability q = exp(l) and the complement p = 1 - q = -expm1(l) are formed at
``out`` = target + GUARD_BITS bits (u = 2**-out, libmp rounding to nearest; its exp and
expm1 carry the extra bits that the magnitude of l asks for internally):

* q = exp(l) is off by expm1(|l| e) + u relatively;
* for l < -1, p = 1 - q is formed from q (no cancellation: q < 1/e, so q/p < 0.6), off
  by the error of q plus u; this spares a second exponential of a possibly huge l;
* else p = -expm1(l), off by e + 2u (expm1 at l < 0 has condition at most 1).
"""

from __future__ import annotations

from dataclasses import dataclass

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.precision import Real

#: Guard bits of the reported values on top of the target.
GUARD_BITS = 16


@dataclass(frozen=True, slots=True)
class LogProbability:
    """q = exp(l) and p = 1 - q with their relative bounds, and l itself."""

    complement: Real
    complement_error: Real
    probability: Real
    probability_error: Real
    log_probability: Real
    prec: int


def from_log(log_value: Real, log_error: Real, target: int) -> LogProbability:
    """q = exp(l) and p = 1 - q for l = ``log_value`` < 0 within ``log_error`` relatively.

    >>> half = from_log(mp.neg(mp.log(mp.real(2, 80), 80)), libmp.from_man_exp(1, -80), 64)
    >>> mp.to_float(half.probability), mp.to_float(half.complement)
    (0.5, 0.5)
    """
    out = target + GUARD_BITS
    up = libmp.round_ceiling
    unit = libmp.from_man_exp(1, -out)
    absolute = libmp.mpf_mul(mp.absolute(log_value), log_error, 64, up)
    probability = mp.exp(log_value, out)
    probability_error = mp.add_up(_expm1_bound(absolute), unit)
    if mp.less(log_value, libmp.mpf_neg(mp.ONE)):
        complement = mp.sub(mp.ONE, probability, out)
        complement_error = mp.add_up(probability_error, unit)
    else:
        complement = mp.neg(mp.expm1(log_value, out))
        complement_error = mp.add_up(log_error, libmp.mpf_shift(unit, 1))
    return LogProbability(complement, complement_error, probability, probability_error,
                          log_value, out)


def _expm1_bound(error: Real) -> Real:
    """An upper bound on expm1(e) for e >= 0: 2e below 1/2, exp(e) rounded up above."""
    if mp.less(error, libmp.from_man_exp(1, -1)):
        return libmp.mpf_shift(error, 1)
    return libmp.mpf_exp(error, 64, libmp.round_ceiling)
