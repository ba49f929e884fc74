"""Hit chances of guessing a live token, against sympy rationals and mpmath at high precision."""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
import sympy
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.core.guessing import HitChance, distinct_hit, hit_at_most, independent_hit
from urnbound.core.results import Magnitude

PROPERTY_SETTINGS = settings(max_examples=60, deadline=None,
                             suppress_health_check=[HealthCheck.too_slow])


def _sympy_distinct(size: int, live: int, guesses: int) -> Fraction:
    """1 - C(N - L, G) / C(N, G), exact by sympy."""
    miss = sympy.Rational(sympy.binomial(size - live, guesses), sympy.binomial(size, guesses))
    hit = 1 - miss
    return Fraction(int(hit.p), int(hit.q))


def _sympy_independent(size: int, live: int, guesses: int) -> Fraction:
    """1 - (1 - L/N)^G, exact by sympy."""
    hit = 1 - (1 - sympy.Rational(live, size)) ** guesses
    return Fraction(int(hit.p), int(hit.q))


def _mpmath_log_miss(kind: str, size: int, live: int, guesses: int) -> mpmath.mpf:
    """ln P(miss) at high precision in a private context, by another route than the core.

    Distinct: the log-gamma form ln C(N - L, G) - ln C(N, G), at a precision covering the
    cancellation of the log-gamma values (about log2 N bits each). Independent:
    G log1p(-L/N).
    """
    ctx = mpmath.MPContext()
    ctx.prec = 2 * size.bit_length() + 2 * guesses.bit_length() + 300
    if kind == "independent":
        return guesses * ctx.log1p(-ctx.mpf(live) / size)
    return (ctx.loggamma(size - live + 1) - ctx.loggamma(size - live - guesses + 1)
            - ctx.loggamma(size + 1) + ctx.loggamma(size - guesses + 1))


def _relative(text: str, true: mpmath.mpf) -> mpmath.mpf:
    ctx = mpmath.MPContext()
    ctx.prec = 200
    return abs(ctx.mpf(text) - true) / true


def _mp_fraction(value: Fraction) -> mpmath.mpf:
    ctx = mpmath.MPContext()
    ctx.prec = 200
    return ctx.mpf(value.numerator) / value.denominator


def _check_against_log(chance: HitChance, log_miss: mpmath.mpf) -> None:
    ctx = mpmath.MPContext()
    ctx.prec = 400
    hit, miss = -ctx.expm1(log_miss), ctx.exp(log_miss)
    assert _relative(chance.hit.decimal, hit) <= chance.hit.relative_error_bound
    assert _relative(chance.miss.decimal, miss) <= chance.miss.relative_error_bound
    # log10 of the miss, even far below the float range, to float accuracy
    assert chance.miss.log10 == pytest.approx(float(log_miss / ctx.ln(10)), rel=1e-12, abs=0)


# --- exact cross-checks, small N ---------------------------------------------------------


@pytest.mark.parametrize(("size", "live", "guesses"), [
    (10, 2, 3), (100, 1, 50), (365, 23, 40), (1000, 999, 1), (64, 10, 54), (64, 10, 55),
    (2**20, 7, 1000), (997, 500, 300),
])
def test_distinct_hit_is_the_hypergeometric_rational(size: int, live: int, guesses: int) -> None:
    chance = distinct_hit(size, live, guesses)
    expected = _sympy_distinct(size, live, guesses)  # sympy binomials, exact
    assert chance.method == "exact"
    assert chance.exact == expected
    assert chance.hit.value == float(expected) and chance.relative_error_bound == 0.0
    if expected < 1:
        assert chance.miss.value == float(1 - expected)


@pytest.mark.parametrize(("size", "live", "guesses"), [
    (6, 1, 2), (2**16, 3, 900), (365, 1, 253), (10**6, 10**5, 30),
])
def test_independent_hit_is_the_binomial_rational(size: int, live: int, guesses: int) -> None:
    chance = independent_hit(size, live, guesses)
    expected = _sympy_independent(size, live, guesses)  # sympy rationals, exact
    assert chance.method == "exact"
    # the fraction itself is returned only while its terms have at most 1,000 digits
    assert chance.exact == (expected if expected.denominator < 10**1000 else None)
    assert chance.hit.value == float(expected)
    assert _relative(chance.hit.decimal, _mp_fraction(expected)) <= 5e-20


def test_distinct_guesses_past_the_dead_values_always_hit() -> None:
    # pigeonhole: G + L > N distinct guesses cannot all miss
    assert distinct_hit(100, 10, 91).exact == 1
    assert distinct_hit(100, 10, 90).exact == 1 - Fraction(1, sympy.binomial(100, 10))


# --- large N, the bounded path against mpmath ----------------------------------------------


LARGE = [
    (2**64, 10**5, 315_360_000_000),  # 64 bits, 1e5 live, 1e4 guesses/s for 365 days
    (2**64, 1, 2**32),
    (2**128, 1, 10**12),  # tail near 3e-27
    (2**122, 1, 1),  # one guess at UUID version 4: 2^-122
    (2**256, 2**20, 2**40),  # tail near 1e-59
    (2**40, 2**20, 2**21),  # a hit chance near 0.86
    (2**40, 2**39 + 7, 2**30),  # miss below 1e-300000000
    (2**100, 3, 2**99),
    (2**200, 2**100, 2**99),  # about 1 - e^(-1/2)
    (2**64, 2**10, 2**60),  # miss far below the float range
    (2**4096, 2**2000, 2**2100),
    (2**8192, 2**8192 - 2000, 1000),
]


@pytest.mark.parametrize(("size", "live", "guesses"), LARGE)
@pytest.mark.parametrize("kind", ["distinct", "independent"])
def test_bounded_path_against_mpmath(kind: str, size: int, live: int, guesses: int) -> None:
    compute = distinct_hit if kind == "distinct" else independent_hit
    chance = compute(size, live, guesses, exact_digit_limit=0)
    assert chance.method == "asymptotic"
    assert 0 < chance.relative_error_bound < 1e-19
    _check_against_log(chance, _mpmath_log_miss(kind, size, live, guesses))


@pytest.mark.parametrize(("size", "live", "guesses"), [(2**128, 1, 10**12), (2**256, 2**20, 2**40)])
def test_tails_below_1e_minus_30_keep_full_relative_accuracy(size: int, live: int,
                                                               guesses: int) -> None:
    ctx = mpmath.MPContext()
    ctx.prec = 600
    for compute in (distinct_hit, independent_hit):
        chance = compute(size, live, guesses, exact_digit_limit=0)
        kind = "distinct" if compute is distinct_hit else "independent"
        true = -ctx.expm1(_mpmath_log_miss(kind, size, live, guesses))
        assert true < 1e-26
        assert float(_relative(chance.hit.decimal, true)) < 1e-12  # 1e-12 or better
        assert chance.hit.value == pytest.approx(float(true), rel=1e-15, abs=0)


def test_exact_and_bounded_paths_agree() -> None:
    for compute, reference in ((distinct_hit, _sympy_distinct),
                               (independent_hit, _sympy_independent)):
        exact = compute(2**20, 10, 30)
        bounded = compute(2**20, 10, 30, exact_digit_limit=0)
        expected = reference(2**20, 10, 30)  # sympy, exact
        assert exact.method == "exact" and bounded.method == "asymptotic"
        assert exact.exact == expected
        assert bounded.hit.value == float(expected)  # correctly rounded on both paths
        assert _relative(bounded.hit.decimal, _mp_fraction(expected)) <= (
            bounded.relative_error_bound)


# --- the worked example and policies ---------------------------------------------------------


def test_64_bit_sessions_at_10000_guesses_a_second_take_about_585_years() -> None:
    # common practice: a 64-bit session identifier, 100,000 live sessions and 10,000
    # guesses a second give an expected time to a hit of about 585 years. Computed here:
    # N / live guesses at 1e4 a second, in Julian years.
    expected_guesses = Fraction(2**64, 10**5)
    years = expected_guesses / 10**4 / (365.25 * 86400)
    assert round(float(years)) == 585
    # and a year of guessing at that rate hits with about 1 - e^(-1/584.5) (the same model)
    chance = independent_hit(2**64, 10**5, 10**4 * 86400 * 365)
    assert chance.hit.value == pytest.approx(-float(mpmath.expm1(-365 / 365.25 / years)),
                                             rel=1e-12, abs=0)


def test_uuid_v4_does_not_meet_the_oauth_guessing_bound() -> None:
    # RFC 6749, section 10.10: a generated token's guessing probability must be at most
    # 2^-128; 122 random bits (RFC 9562, section 5.4) give 2^-122 for one guess.
    chance = independent_hit(2**122, 1, 1)
    assert chance.exact == Fraction(1, 2**122)
    assert not hit_at_most(chance, Fraction(1, 2**128), distinct=False)
    assert hit_at_most(independent_hit(2**160, 1, 1), Fraction(1, 2**128), distinct=False)


@pytest.mark.parametrize("kind", ["distinct", "independent"])
def test_certified_comparison_at_the_boundary(kind: str) -> None:
    distinct = kind == "distinct"
    compute = distinct_hit if distinct else independent_hit
    chance = compute(2**64, 1, 2**40, exact_digit_limit=0)
    ctx = mpmath.MPContext()
    ctx.prec = 400
    true = -ctx.expm1(_mpmath_log_miss(kind, 2**64, 1, 2**40))
    # thresholds just above and just below the true value, 1e-25 apart relatively
    above = Fraction(ctx.nstr(true * (1 + ctx.mpf(10) ** -25), 40))
    below = Fraction(ctx.nstr(true * (1 - ctx.mpf(10) ** -25), 40))
    assert hit_at_most(chance, above, distinct=distinct, exact_digit_limit=0)
    assert not hit_at_most(chance, below, distinct=distinct, exact_digit_limit=0)
    if distinct:  # one live token: G / N = 2^40 / 2^64 exactly; a threshold equal to it passes
        assert hit_at_most(chance, Fraction(2**40, 2**64), distinct=True)
        assert not hit_at_most(chance, Fraction(2**40 - 1, 2**64), distinct=True)


def test_bad_arguments_name_the_field() -> None:
    with pytest.raises(DomainError) as caught:
        distinct_hit(10, 11, 1)
    assert caught.value.field == "live"
    with pytest.raises(DomainError) as caught:
        independent_hit(10, 1, -1)
    assert caught.value.field == "guesses"


# --- properties ----------------------------------------------------------------------------


FINE = mpmath.MPContext()
FINE.prec = 200  # 60 digits: enough to hold a 20-digit text and its bound apart


def _interval(magnitude: Magnitude) -> tuple[mpmath.mpf, mpmath.mpf]:
    value = FINE.mpf(magnitude.decimal)
    spread = FINE.mpf(magnitude.relative_error_bound)
    return value * (1 - spread), value * (1 + spread)


def _at_most(first: Magnitude, second: Magnitude) -> bool:
    """first <= second, allowing for both error bounds."""
    return _interval(first)[0] <= _interval(second)[1]


spaces = st.one_of(st.integers(2, 5000), st.integers(11, 600).map(lambda b: 2**b))


@PROPERTY_SETTINGS
@given(size=spaces, data=st.data(), limit=st.sampled_from([0, 50_000]))
@example(size=2**64, data=None, limit=0)
def test_hit_chance_grows_with_guesses_and_live_tokens(size: int, data: st.DataObject | None,
                                                      limit: int) -> None:
    if data is None:
        live, guesses, more = 3, 2**30, 2**31
    else:
        live = data.draw(st.integers(1, max(1, min(size - 1, 10**30))))
        guesses = data.draw(st.integers(0, min(size, 10**40)))
        more = data.draw(st.integers(guesses, min(size, 10**40)))
    for compute in (distinct_hit, independent_hit):
        low = compute(size, live, guesses, exact_digit_limit=limit)
        high = compute(size, live, more, exact_digit_limit=limit)
        assert _at_most(low.hit, high.hit)
        assert _at_most(high.miss, low.miss)
        if live < size:
            assert _at_most(low.hit, compute(size, live + 1, guesses,
                                             exact_digit_limit=limit).hit)
    # distinct guesses never do worse than independent ones
    assert _at_most(independent_hit(size, live, guesses, exact_digit_limit=limit).hit,
                    distinct_hit(size, live, guesses, exact_digit_limit=limit).hit)


@PROPERTY_SETTINGS
@given(bits=st.integers(11, 1000), live=st.integers(1, 2**10), guesses=st.integers(1, 2**40),
       limit=st.sampled_from([0, 50_000]))
def test_hit_chance_falls_with_bits(bits: int, live: int, guesses: int, limit: int) -> None:
    for compute in (distinct_hit, independent_hit):
        wider = compute(2 ** (bits + 1), live, guesses, exact_digit_limit=limit)
        narrower = compute(2**bits, live, guesses, exact_digit_limit=limit)
        assert _at_most(wider.hit, narrower.hit)


@pytest.mark.parametrize(("size", "live", "guesses"),
                         [(2, 1, 2**8192), (5, 3, 10**6), (1000, 7, 2**40)])
def test_small_spaces_with_countless_independent_guesses(size: int, live: int,
                                                         guesses: int) -> None:
    # the exact fraction would have G log10 N digits: the bounded path answers instead
    chance = independent_hit(size, live, guesses)
    assert chance.method == "asymptotic" and chance.hit.decimal == "1.0000000000000000000e0"
    _check_against_log(chance, _mpmath_log_miss("independent", size, live, guesses))
    assert hit_at_most(chance, Fraction(1, 2), distinct=False) is False


def test_a_float_midpoint_is_rounded_from_the_exact_value() -> None:
    # 1 - (1 - 2^-26)^3 = 3 2^-26 - 3 2^-52 + 2^-78 has 54 significant bits: halfway between
    # two floats, so no interval decides its float; the exact fraction does (half to even)
    chance = independent_hit(2**26, 1, 3, exact_digit_limit=0)
    exact = Fraction(2**78 - (2**26 - 1) ** 3 * 2**0, 2**78)
    assert chance.exact == exact and chance.hit.value == float(exact)


def test_a_hit_chance_next_to_a_float_midpoint_is_rounded_down() -> None:
    # A case hypothesis found: N = 2**576, L = 94,906,267 live, G = 94,906,265 guesses.
    # L G is an odd integer just above 2**53, so L G / N lies on a midpoint between two
    # floats, and the chance is below it by about (L + G) / (2N) of it (Bonferroni:
    # L G / N - C(G, 2) (L / N)**2 <= hit <= L G / N for independent guesses, and the same
    # order for distinct ones): the true float is the lower neighbour, (L G - 1) / N.
    size, live, guesses = 2**576, 94_906_267, 94_906_265
    product = live * guesses
    assert product > 2**53 and product % 2 == 1
    expected = float(Fraction(product - 1, size))  # exact: an even integer over 2**576
    for compute in (distinct_hit, independent_hit):
        assert compute(size, live, guesses, exact_digit_limit=0).hit.value == expected
