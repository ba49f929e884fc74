"""Questions: reports built from the core, checked against published and independent values."""

from __future__ import annotations

import math
import os
import subprocess
import sys
from fractions import Fraction

import mpmath
import pytest
import sympy

from urnbound.core.errors import DomainError
from urnbound.domain.alphabets import alphabet_of_size, named_alphabet
from urnbound.domain.questions import (
    ASSUMPTION,
    CapacityReport,
    CollisionReport,
    LengthReport,
    capacity_report,
    collision_report,
    length_report,
)
from urnbound.domain.spaces import space_from_alphabet, space_from_bits, space_from_size


def _sympy_risk(size: int, count: int) -> Fraction:
    """P(some two of ``count`` uniform draws from ``size`` values coincide), exact by sympy."""
    if count > size:
        return Fraction(1)
    distinct = sympy.ff(sympy.Integer(size), count)  # N (N-1) ... (N-n+1)
    risk = 1 - sympy.Rational(distinct, sympy.Integer(size) ** count)
    return Fraction(int(risk.p), int(risk.q))


def _mpmath_risk(size: int, count: int) -> mpmath.mpf:
    """The same risk by log-gamma in mpmath at 4 log2 N + 200 bits (independent of the core)."""
    ctx = mpmath.MPContext()
    ctx.prec = 4 * size.bit_length() + 200
    n_big = ctx.mpf(size)
    log_none = ctx.loggamma(n_big + 1) - ctx.loggamma(n_big - count + 1) - count * ctx.log(n_big)
    return -ctx.expm1(log_none)


def test_assumption_states_the_premise_and_defers_to_policy() -> None:
    assert isinstance(ASSUMPTION, str)
    assert "uniformly at random" in ASSUMPTION
    assert "cryptographically secure" in ASSUMPTION
    assert "security policy" in ASSUMPTION and "standards" in ASSUMPTION


def test_birthday_problem_365_and_23() -> None:
    report = collision_report(space_from_size(365), 23)
    assert isinstance(report, CollisionReport)
    assert (report.space.size, report.count) == (365, 23)
    # Encyclopedia table, "Birthday problem" (Wikipedia): 0.5072972 to 7 decimals.
    assert round(report.risk.collision.value, 7) == 0.5072972
    # sympy exact rational arithmetic.
    exact = _sympy_risk(365, 23)
    assert report.risk.exact in (None, exact)
    assert math.isclose(report.risk.collision.value, float(exact), rel_tol=1e-15)
    assert math.isclose(report.risk.no_collision.value, float(1 - exact), rel_tol=1e-15)
    # Expected colliding pairs C(23, 2) / 365 = 253 / 365.
    pairs = report.figures.expected_colliding_pairs.value
    assert math.isclose(pairs, 253 / 365, rel_tol=1e-15)


def test_pigeonhole_gives_certainty() -> None:
    # 366 draws from 365 values must repeat one.
    report = collision_report(space_from_size(365), 366)
    assert report.risk.collision.value == 1.0
    assert report.risk.no_collision.log10 is None


def test_empty_draw_has_no_collision() -> None:
    report = collision_report(space_from_bits(64), 0)
    assert report.risk.collision.value == 0.0


def test_large_space_against_mpmath() -> None:
    # 10**9 identifiers of 122 random bits (RFC 9562 (2024), section 5.4: UUID version 4).
    report = collision_report(space_from_bits(122), 10**9)
    reference = _mpmath_risk(2**122, 10**9)
    assert math.isclose(report.risk.collision.value, float(reference), rel_tol=1e-14)


@pytest.mark.parametrize("count", [-1, 10**60 + 1, True])
def test_collision_count_out_of_range(count: int) -> None:
    with pytest.raises(DomainError) as caught:
        collision_report(space_from_size(365), count)
    assert caught.value.field == "count"


def _smallest_length_by_sympy(alphabet_size: int, count: int, max_risk: Fraction) -> int:
    length = 1
    while _sympy_risk(alphabet_size**length, count) > max_risk:
        length += 1
    return length


@pytest.mark.parametrize(
    ("alphabet_size", "count", "max_risk"),
    [(10, 23, Fraction(1, 2)), (16, 100, Fraction(1, 100)), (2, 50, Fraction(1, 1000))],
)
def test_length_against_sympy_search(alphabet_size: int, count: int, max_risk: Fraction) -> None:
    alphabet = alphabet_of_size(alphabet_size)
    report = length_report(alphabet, count, max_risk)
    assert isinstance(report, LengthReport)
    expected = _smallest_length_by_sympy(alphabet_size, count, max_risk)
    assert report.answer.length == expected
    assert report.space == space_from_alphabet(alphabet, expected)
    assert (report.alphabet, report.count, report.max_risk) == (alphabet, count, max_risk)


def test_length_for_a_million_base16_identifiers() -> None:
    # RFC 4648 (2006), table 5: base16 has 16 symbols. Boundary checked with mpmath log-gamma.
    max_risk = Fraction(1, 10**9)
    report = length_report(named_alphabet("base16"), 10**6, max_risk)
    length = report.answer.length
    assert _mpmath_risk(16**length, 10**6) <= mpmath.mpf(1) / 10**9
    assert _mpmath_risk(16 ** (length - 1), 10**6) > mpmath.mpf(1) / 10**9
    assert report.space.description == f"base16 alphabet (16 symbols), length {length}"


def test_length_risk_out_of_range() -> None:
    with pytest.raises(DomainError) as caught:
        length_report(named_alphabet("base16"), 10, Fraction(1))
    assert caught.value.field == "max_risk"


def test_capacity_of_365_values_at_even_odds() -> None:
    # OEIS A033810: a(365) = 23 is the smallest count with risk >= 1/2; the risk at 23
    # is 0.507 > 1/2 (Wikipedia "Birthday problem"), so 22 is the most that stays within 1/2.
    report = capacity_report(space_from_size(365), Fraction(1, 2))
    assert isinstance(report, CapacityReport)
    assert report.answer.count == 22
    assert _sympy_risk(365, 22) <= Fraction(1, 2) < _sympy_risk(365, 23)


@pytest.mark.parametrize(
    ("bits", "max_risk", "published", "digits"),
    [
        # "Birthday attack" table (Wikipedia), 64-bit row; cells rounded to 2 significant digits.
        (64, Fraction(1, 10**6), 6.1e6, 2),
        (64, Fraction(1, 2), 5.1e9, 2),
        # Same table, 128-bit row.
        (128, Fraction(1, 10**12), 2.6e13, 2),
        # Encyclopedia article "Universally unique identifier": 2.71e18 UUIDs of 122 bits
        # give an even chance of a collision.
        (122, Fraction(1, 2), 2.71e18, 3),
    ],
)
def test_capacity_against_published_tables(
    bits: int, max_risk: Fraction, published: float, digits: int
) -> None:
    report = capacity_report(space_from_bits(bits), max_risk)
    assert float(f"{report.answer.count:.{digits - 1}e}") == published
    assert (report.space.size, report.max_risk) == (2**bits, max_risk)


def test_capacity_risk_out_of_range() -> None:
    with pytest.raises(DomainError) as caught:
        capacity_report(space_from_bits(64), Fraction(0))
    assert caught.value.field == "max_risk"


def test_domain_imports_no_web_stack() -> None:
    # The domain layer must stay usable without Flask; check in a fresh interpreter.
    code = (
        "import sys\n"
        "import urnbound.domain.alphabets, urnbound.domain.numbers\n"
        "import urnbound.domain.spaces, urnbound.domain.questions\n"
        "print(sorted(m for m in ('flask', 'werkzeug', 'marshmallow') if m in sys.modules))\n"
    )
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(p for p in sys.path if p)}
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True
    )
    assert done.stdout.strip() == "[]"
