"""Shortest length resisting guessing: tight against sympy binomials and mpmath log-gamma."""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from urnbound.core.errors import NoConvergence
from urnbound.core.guess_lengths import shortest_unguessable_length
from urnbound.core.inverse import longest_length


def _hit_sympy(size: int, live: int, guesses: int) -> Fraction:
    """1 - C(N - L, G) / C(N, G), exact by sympy (1 when the guesses must reach one)."""
    if guesses + live > size:
        return Fraction(1)
    hit = 1 - sympy.Rational(sympy.binomial(size - live, guesses), sympy.binomial(size, guesses))
    return Fraction(int(hit.p), int(hit.q))


def _hit_mpmath(size: int, live: int, guesses: int) -> mpmath.mpf:
    """The same by mpmath's log-gamma at a precision past the cancellation."""
    if guesses + live > size:
        return mpmath.mpf(1)
    ctx = mpmath.MPContext()
    ctx.prec = 2 * size.bit_length() + 400
    log_miss = (ctx.loggamma(size - live + 1) - ctx.loggamma(size - live - guesses + 1)
                - ctx.loggamma(size + 1) + ctx.loggamma(size - guesses + 1))
    return -ctx.expm1(log_miss)


@pytest.mark.parametrize(("symbols", "live", "guesses", "target"), [
    (10, 3, 50, Fraction(1, 100)), (2, 1, 1, Fraction(1, 2)), (16, 100, 1000, Fraction(1, 10**6)),
    (36, 7, 10**4, Fraction(1, 3)),
])
def test_small_spaces_against_sympy(symbols: int, live: int, guesses: int,
                                    target: Fraction) -> None:
    length = shortest_unguessable_length(symbols, live, guesses, target, 40)
    assert length is not None
    assert _hit_sympy(symbols**length, live, guesses) <= target
    if length > 1:
        assert _hit_sympy(symbols ** (length - 1), live, guesses) > target


@pytest.mark.parametrize(("symbols", "live", "guesses", "target"), [
    (64, 10**5, 315_360_000_000, Fraction(1, 10**9)),  # 1e4 guesses a second for a year
    (62, 10**6, 10**15, Fraction(1, 2**128)),  # RFC 6749, section 10.10's ceiling
    (2, 1, 1, Fraction(1, 2**160)),  # one guess at 2^-160: 160 bits
])
def test_large_spaces_against_mpmath(symbols: int, live: int, guesses: int,
                                     target: Fraction) -> None:
    length = shortest_unguessable_length(symbols, live, guesses, target,
                                         longest_length(symbols))
    assert length is not None
    ctx = mpmath.MPContext()
    ctx.prec = 600
    limit = ctx.mpf(target.numerator) / target.denominator
    assert _hit_mpmath(symbols**length, live, guesses) <= limit
    assert _hit_mpmath(symbols ** (length - 1), live, guesses) > limit


def test_one_guess_at_the_oauth_ceiling_needs_128_bits() -> None:
    # RFC 6749, section 10.10: at most 2^-128 for one guess at one live token is 128 bits
    assert shortest_unguessable_length(2, 1, 1, Fraction(1, 2**128), 8192) == 128


def _hit_reference(size: int, live: int, guesses: int) -> Fraction | mpmath.mpf:
    """The exact chance where it is cheap (a tie with the target needs it), else mpmath.

    One live token: 1 - C(N - 1, G) / C(N, G) = G / N exactly; few guesses: sympy.
    """
    if guesses == 0:
        return Fraction(0)
    if guesses + live > size:
        return Fraction(1)
    if live == 1:
        return Fraction(guesses, size)
    if guesses <= 2_000:
        return _hit_sympy(size, live, guesses)
    return _hit_mpmath(size, live, guesses)


def _at_most(chance: Fraction | mpmath.mpf, target: Fraction) -> bool:
    if isinstance(chance, Fraction):
        return chance <= target
    ctx = mpmath.MPContext()
    ctx.prec = 600
    return bool(chance <= ctx.mpf(target.numerator) / target.denominator)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(symbols=st.integers(2, 100), live=st.integers(1, 10**6), guesses=st.integers(0, 10**12),
       exponent=st.integers(1, 40))
def test_boundary_agrees_with_the_forward_chance(symbols: int, live: int, guesses: int,
                                                 exponent: int) -> None:
    # reference: G / N exactly for one live token, sympy binomials for few guesses, else
    # mpmath log-gamma; an exact tie with the target (G / N = 10^-k) is decided exactly
    target = Fraction(1, 10**exponent)
    length = shortest_unguessable_length(symbols, live, guesses, target, 400)
    assert length is not None
    assert _at_most(_hit_reference(symbols**length, live, guesses), target)
    if length > 1:
        assert not _at_most(_hit_reference(symbols ** (length - 1), live, guesses), target)


def test_a_tie_with_the_exact_comparison_switched_off_is_refused_not_guessed() -> None:
    # 100 guesses at one token among 100^2: exactly 1/100 (G / N), a tie with the target;
    # with no exact comparison allowed the search must say so rather than pick a side
    assert shortest_unguessable_length(100, 1, 100, Fraction(1, 100), 400) == 2
    with pytest.raises(NoConvergence):
        shortest_unguessable_length(100, 1, 100, Fraction(1, 100), 400, exact_digit_limit=0)
