"""The registered questions, loaded from query texts and answered, against published values."""

from __future__ import annotations

import math
import os
import subprocess
import sys
from fractions import Fraction
from typing import Any

import mpmath
import pytest
import sympy

from urnbound.domain.errors import DomainError
from urnbound.domain.question import ASSUMPTION, Context
from urnbound.domain.registry import default_registry

REGISTRY = default_registry()
CONTEXT = Context()


def ask(name: str, **texts: str) -> dict[str, Any]:
    """The answer members of question ``name`` for the given query texts."""
    question = REGISTRY[name]
    inputs = question.load({key: [value] for key, value in texts.items()})
    return dict(question.answer_to(inputs, CONTEXT).values)


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


def test_registry_holds_the_five_questions_in_path_order() -> None:
    assert [q.path for q in REGISTRY] == [
        "/v1/alphabets", "/v1/bits", "/v1/budgets", "/v1/capacity", "/v1/collisions",
        "/v1/coverage", "/v1/curves", "/v1/formats",
        "/v1/guessing", "/v1/lengths", "/v1/loads", "/v1/prefixes", "/v1/rates",
        "/v1/reviews",
    ]
    for question in REGISTRY:
        assert question.description.strip(), question.name
        assert question.path.startswith("/v1/")
        question.load({key: [value] for key, value in question.example.items()})


def test_assumption_states_the_premise_and_defers_to_policy() -> None:
    assert "uniformly at random" in ASSUMPTION
    assert "cryptographically secure" in ASSUMPTION
    assert "security policy" in ASSUMPTION and "standards" in ASSUMPTION
    # Listings have no premise; guessing carries its own caution, prefixes its own premise
    # (tests/domain/test_security_questions.py).
    # Loads and coverage rest on uniform placement (tests/api/test_loads.py, test_coverage.py).
    own = ("alphabets", "formats", "guessing", "prefixes", "reviews", "loads", "coverage")
    assert all(q.premise == ASSUMPTION for q in REGISTRY if q.name not in own)


def test_answer_members_come_in_declared_order() -> None:
    answer = ask("collisions", size="365", count="23")
    assert list(answer) == [f.name for f in REGISTRY["collisions"].answer]
    assert list(answer)[:2] == ["collision", "no_collision"]


def test_birthday_problem_365_and_23() -> None:
    answer = ask("collisions", size="365", count="23")
    # Encyclopedia table, "Birthday problem" (Wikipedia): 0.5072972 to 7 decimals.
    assert round(answer["collision"].value, 7) == 0.5072972
    exact = _sympy_risk(365, 23)  # sympy exact rational arithmetic
    assert answer["exact"] == exact
    assert answer["collision"].value == float(exact)  # correctly rounded
    assert answer["no_collision"].value == float(1 - exact)
    # Expected colliding pairs C(23, 2) / 365 = 253 / 365.
    assert answer["expected_colliding_pairs"].value == 253 / 365
    assert answer["method"] == "exact"


def test_pigeonhole_gives_certainty() -> None:
    answer = ask("collisions", size="365", count="366")  # 366 draws from 365 values
    assert answer["collision"].value == 1.0
    assert answer["no_collision"].log10 is None


def test_uuid_v4_space_against_mpmath() -> None:
    # 10**9 identifiers of 122 random bits (RFC 9562 (2024), section 5.4: UUID version 4).
    answer = ask("collisions", bits="122", count="1e9")
    reference = _mpmath_risk(2**122, 10**9)
    assert answer["collision"].value == pytest.approx(float(reference), rel=1e-15, abs=0)


@pytest.mark.parametrize(
    ("alphabet_size", "count", "max_risk"),
    [(10, 23, Fraction(1, 2)), (16, 100, Fraction(1, 100)), (2, 50, Fraction(1, 1000))],
)
def test_length_against_sympy_search(alphabet_size: int, count: int, max_risk: Fraction) -> None:
    answer = ask("lengths", alphabet_size=str(alphabet_size), count=str(count),
                 max_risk=f"{max_risk.numerator / max_risk.denominator}")
    length = 1
    while _sympy_risk(alphabet_size**length, count) > max_risk:
        length += 1
    assert answer["length"] == length
    assert answer["space"].size == alphabet_size**length


def test_length_for_a_million_base16_identifiers() -> None:
    # RFC 4648 (2006), table 5: base16 has 16 symbols. Boundary checked with mpmath log-gamma.
    answer = ask("lengths", alphabet="BASE16", count="1e6", max_risk="1e-9")
    length = answer["length"]
    assert _mpmath_risk(16**length, 10**6) <= mpmath.mpf(1) / 10**9
    assert _mpmath_risk(16 ** (length - 1), 10**6) > mpmath.mpf(1) / 10**9
    assert answer["space"].description == f"base16 alphabet (16 symbols), length {length}"


def test_capacity_of_365_values_at_even_odds() -> None:
    # OEIS A033810: a(365) = 23 is the smallest count with risk >= 1/2; the risk at 23
    # is 0.507 > 1/2 (Wikipedia "Birthday problem"), so 22 is the most that stays within 1/2.
    answer = ask("capacity", size="365", max_risk="0.5")
    assert answer["count"] == 22
    assert _sympy_risk(365, 22) <= Fraction(1, 2) < _sympy_risk(365, 23)


@pytest.mark.parametrize(
    ("bits", "max_risk", "published", "digits"),
    [
        # "Birthday attack" table (Wikipedia), 64-bit row; cells rounded to 2 significant digits.
        (64, "1e-6", 6.1e6, 2),
        (64, "0.5", 5.1e9, 2),
        # Same table, 128-bit row.
        (128, "1e-12", 2.6e13, 2),
        # Encyclopedia article "Universally unique identifier": 2.71e18 UUIDs of 122 bits
        # give an even chance of a collision.
        (122, "0.5", 2.71e18, 3),
    ],
)
def test_capacity_against_published_tables(
    bits: int, max_risk: str, published: float, digits: int
) -> None:
    answer = ask("capacity", bits=str(bits), max_risk=max_risk)
    assert float(f"{answer['count']:.{digits - 1}e}") == published


@pytest.mark.parametrize(
    ("count", "max_risk", "bits"),
    [
        # "Birthday attack" table (Wikipedia): 6.1e6 hashes of 64 bits give p = 1e-6 and
        # 2.6e13 hashes of 128 bits give p = 1e-12 (cells rounded to 2 significant digits).
        # A count 2% under the cell keeps the risk under p at that width and not one bit
        # fewer (one bit fewer doubles the risk).
        ("5.98e6", "1e-6", 64),
        ("2.55e13", "1e-12", 128),
    ],
)
def test_fewest_bits_against_the_published_table(count: str, max_risk: str, bits: int) -> None:
    answer = ask("bits", count=count, max_risk=max_risk)
    assert answer["bits"] == bits
    assert answer["space"].size == 2**bits
    n, target = int(float(count)), mpmath.mpf(max_risk)  # margins of 2% and more: 53 bits do
    assert _mpmath_risk(2**bits, n) <= target < _mpmath_risk(2 ** (bits - 1), n)


def test_fewest_bits_brackets_the_target_exactly() -> None:
    answer = ask("bits", count="23", max_risk="0.01")
    bits = answer["bits"]
    assert _sympy_risk(2**bits, 23) <= Fraction(1, 100) < _sympy_risk(2 ** (bits - 1), 23)
    assert answer["collision"].value == float(_sympy_risk(2**bits, 23))
    assert answer["collision_one_fewer"].value == float(_sympy_risk(2 ** (bits - 1), 23))


def test_no_length_fits_is_out_of_range() -> None:
    with pytest.raises(DomainError) as caught:
        ask("lengths", alphabet="decimal", count=str(2**8192), max_risk="1e-300")
    assert caught.value.field == "count"


def test_alphabets_lists_every_named_alphabet() -> None:
    names = [alphabet.name for alphabet in ask("alphabets")["alphabets"]]
    assert names[:5] == ["base16", "base32", "base32hex", "base64", "base64url"]  # RFC 4648


def test_counts_up_to_the_space_are_answered() -> None:
    # A 2^1024-value space asked about 2^512 identifiers, n = sqrt(N): the risk tends to
    # 1 - e^(-1/2) (the limit of the birthday bound at n = sqrt(N)); mpmath for all digits.
    answer = ask("collisions", bits="1024", count=str(2**512))
    reference = _mpmath_risk(2**1024, 2**512)
    assert answer["collision"].value == pytest.approx(float(reference), rel=1e-15, abs=0)
    assert math.isclose(answer["collision"].value, -math.expm1(-0.5), rel_tol=1e-9)


def test_domain_imports_no_web_stack() -> None:
    # The domain layer must stay usable without Flask; check in a fresh interpreter.
    code = (
        "import sys\n"
        "import urnbound.domain.registry\n"
        "urnbound.domain.registry.default_registry()\n"
        "print(sorted(m for m in ('flask', 'werkzeug', 'marshmallow') if m in sys.modules))\n"
    )
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(p for p in sys.path if p)}
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True,
        timeout=120,
    )
    assert done.stdout.strip() == "[]"
