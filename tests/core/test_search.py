"""The certified search on its own, over families whose risks are known exactly.

The families here are not collision risks: "at least one success in i trials of chance p"
(1 - (1 - p)**i, rising in i) and "a k-in-2**L chance" (k / 2**L, falling in L). Their
reference answers are found by brute force over Python's exact fractions, a method
independent of the search; their interval evaluations come from mpmath at the asked
precision in a private context, with an honest (or, where a test says so, a useless)
error bound.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from mpmath import libmp

from urnbound.core.errors import NoConvergence
from urnbound.core.search import (
    MAX_INTERVAL_TRIES,
    RiskInterval,
    certified_at_most,
    certified_boundary,
    hazard,
    interval_verdict,
)

SETTINGS = settings(max_examples=80, deadline=None)


def _real(mp: mpmath.ctx_mp.MPContext, value: mpmath.mpf) -> object:
    return mp.mpf(value)._mpf_


@dataclass(frozen=True)
class Trials:
    """risk(i) = 1 - (1 - p)**i for i trials: rising in i."""

    chance: Fraction
    top: int
    guess: int
    #: "honest": a true 2**-(bits - 8) relative bound; "useless": a bound of 1 (never decides).
    bound: str = "honest"
    exact_ok: bool = True
    exact_cheap: bool = False

    @property
    def lowest(self) -> int:
        return 0

    @property
    def highest(self) -> int:
        return self.top

    @property
    def rising(self) -> bool:
        return True

    def first_guess(self, max_risk: Fraction) -> int:
        return self.guess

    def known(self, index: int) -> Fraction | None:
        return Fraction(0) if index == 0 else None

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        mp = mpmath.MPContext()
        mp.prec = bits + 64
        keep = mp.power(1 - mp.mpf(self.chance.numerator) / self.chance.denominator, index)
        error = libmp.from_man_exp(1, 8 - bits) if self.bound == "honest" else libmp.fone
        return RiskInterval(_real(mp, -mp.expm1(mp.log(keep))), error, _real(mp, keep), error,
                            bits)

    def exact_first(self, index: int) -> bool:
        return self.exact_cheap

    def exact_allowed(self, index: int) -> bool:
        return self.exact_ok

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        return exact_trials(self.chance, index) <= max_risk


def exact_trials(chance: Fraction, index: int) -> Fraction:
    return 1 - (1 - chance) ** index


@dataclass(frozen=True)
class Halvings:
    """risk(L) = min(1, k / 2**L): falling in L; exact comparisons only."""

    numerator: int
    top: int
    guess: int

    @property
    def lowest(self) -> int:
        return 1

    @property
    def highest(self) -> int:
        return self.top

    @property
    def rising(self) -> bool:
        return False

    def first_guess(self, max_risk: Fraction) -> int:
        return self.guess

    def known(self, index: int) -> Fraction | None:
        return None

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return None

    def exact_first(self, index: int) -> bool:
        return True

    def exact_allowed(self, index: int) -> bool:
        return True

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        return min(Fraction(1), Fraction(self.numerator, 2**index)) <= max_risk


def comparison_bound(lowest: int, highest: int) -> int:
    """The search's own bound (module docstring of core/search.py)."""
    return 2 * (highest - lowest + 2).bit_length() + 3


chances = st.integers(1, 10**6).flatmap(
    lambda q: st.integers(1, q).map(lambda p: Fraction(p, q + 1)))
targets = st.one_of(
    st.integers(1, 10**6).flatmap(lambda q: st.integers(1, q).map(lambda p: Fraction(p, q + 1))),
    st.integers(1, 200).map(lambda k: 1 - Fraction(1, 10**k)),
    st.integers(1, 300).map(lambda k: Fraction(1, 10**k)),
)


@SETTINGS
@given(chances, targets, st.integers(-10**6, 10**6), st.integers(0, 3000))
def test_rising_boundary_matches_brute_force(
    chance: Fraction, target: Fraction, guess: int, top: int
) -> None:
    # reference: a linear scan with exact fractions
    family = Trials(chance, top, guess)
    boundary = certified_boundary(family, target)
    assert boundary is not None  # index 0 has risk 0
    expected = max(i for i in range(top + 1) if exact_trials(chance, i) <= target)
    assert boundary.index == expected
    assert boundary.neighbour == (expected + 1 if expected < top else None)
    assert boundary.cost.comparisons <= comparison_bound(0, top)
    assert boundary.cost.intervals <= MAX_INTERVAL_TRIES * boundary.cost.comparisons


@SETTINGS
@given(st.integers(1, 2**80), targets, st.integers(-50, 300), st.integers(0, 200))
def test_falling_boundary_matches_brute_force(
    numerator: int, target: Fraction, guess: int, top: int
) -> None:
    # reference: a linear scan with exact fractions
    family = Halvings(numerator, top, guess)
    boundary = certified_boundary(family, target)
    passing = [L for L in range(1, top + 1) if Fraction(numerator, 2**L) <= target]
    if not passing:
        assert boundary is None
        return
    assert boundary is not None
    assert boundary.index == min(passing)
    assert boundary.neighbour == (min(passing) - 1 if min(passing) > 1 else None)
    assert boundary.cost.comparisons <= comparison_bound(1, top)
    assert boundary.cost.exact == boundary.cost.comparisons  # no intervals offered


def test_a_guess_on_the_boundary_costs_two_comparisons() -> None:
    # 1 - (1/2)**i <= 0.9 holds up to i = 3 (0.875) and fails at 4 (0.9375)
    boundary = certified_boundary(Trials(Fraction(1, 2), 100, 3), Fraction(9, 10))
    assert boundary is not None
    assert (boundary.index, boundary.neighbour) == (3, 4)
    assert boundary.cost.comparisons == 2
    assert boundary.cost.exact == 0  # the intervals decided


def test_a_useless_interval_falls_back_to_the_exact_comparison() -> None:
    family = Trials(Fraction(1, 2), 100, 3, bound="useless")
    boundary = certified_boundary(family, Fraction(9, 10))
    assert boundary is not None and boundary.index == 3
    assert boundary.cost.exact == boundary.cost.comparisons
    assert boundary.cost.intervals == MAX_INTERVAL_TRIES * boundary.cost.comparisons


def test_no_answer_from_an_undecided_interval() -> None:
    family = Trials(Fraction(1, 2), 100, 3, bound="useless", exact_ok=False)
    with pytest.raises(NoConvergence):
        certified_boundary(family, Fraction(9, 10))


def test_a_target_equal_to_a_risk_is_met_exactly() -> None:
    # risk(3) = 7/8 exactly: no interval can decide "<=" at equality; exact arithmetic does
    boundary = certified_boundary(Trials(Fraction(1, 2), 100, 10), Fraction(7, 8))
    assert boundary is not None and boundary.index == 3
    assert boundary.cost.exact >= 1
    with pytest.raises(NoConvergence):
        certified_boundary(Trials(Fraction(1, 2), 100, 10, exact_ok=False), Fraction(7, 8))


def test_cheap_exact_comparisons_skip_the_interval() -> None:
    family = Trials(Fraction(1, 3), 100, 0, exact_cheap=True)
    boundary = certified_boundary(family, Fraction(1, 2))
    # 1 - (2/3)**1 = 1/3 <= 1/2 < 5/9 = 1 - (2/3)**2
    assert boundary is not None and boundary.index == 1
    assert boundary.cost.intervals == 0


def test_targets_outside_the_open_interval_are_refused() -> None:
    for target in (Fraction(0), Fraction(1), Fraction(3, 2)):
        with pytest.raises(ValueError):
            certified_boundary(Trials(Fraction(1, 2), 10, 0), target)


def test_an_empty_range_has_no_boundary() -> None:
    assert certified_boundary(Halvings(1, 0, 0), Fraction(1, 2)) is None


@SETTINGS
@given(targets)
def test_hazard_against_mpmath(target: Fraction) -> None:
    # reference: mpmath at 2,000 bits in a private context, -log1p(-r) from the exact fraction
    mp = mpmath.MPContext()
    mp.prec = 2000
    reference = -mp.log1p(-mp.mpf(target.numerator) / target.denominator)
    ours = mp.mpf(hazard(target, 200))
    assert float(abs(ours / reference - 1)) <= 2.0**-196


def test_hazard_near_one_keeps_every_digit() -> None:
    # 1 - r = 10**-198 exactly, so t = 198 ln 10 (reference: mpmath at 1,000 bits)
    mp = mpmath.MPContext()
    mp.prec = 1000
    ours = mp.mpf(hazard(1 - Fraction(1, 10**198), 900))
    assert float(abs(ours / (198 * mp.ln10) - 1)) <= 2.0**-896


@pytest.mark.parametrize(
    ("risk", "error_bits", "target", "verdict"),
    [
        (Fraction(1, 3), -60, Fraction(1, 3) + Fraction(1, 10**12), True),
        (Fraction(1, 3), -60, Fraction(1, 3) - Fraction(1, 10**12), False),
        (Fraction(1, 3), -30, Fraction(1, 3) + Fraction(1, 10**12), None),
        # above 1/2 the complement decides: 1 - r = 1e-150 against a complement of 2e-150
        (1 - Fraction(2, 10**150), -60, 1 - Fraction(1, 10**150), True),
        (1 - Fraction(2, 10**150), -60, 1 - Fraction(3, 10**150), False),
        (1 - Fraction(2, 10**150), -1, 1 - Fraction(5, 2 * 10**150), None),
    ],
)
def test_interval_verdict(risk: Fraction, error_bits: int, target: Fraction,
                          verdict: bool | None) -> None:
    # the values are exact fractions rounded to 600 bits; the expected verdicts follow from
    # plain fraction arithmetic (gaps of 3e-12 and 1/4 or more relative against the bounds)
    prec = 600
    rel = libmp.from_man_exp(1, error_bits)
    complement = 1 - risk
    interval = RiskInterval(
        libmp.from_rational(risk.numerator, risk.denominator, prec, libmp.round_nearest), rel,
        libmp.from_rational(complement.numerator, complement.denominator, prec,
                            libmp.round_nearest), rel, prec)
    assert interval_verdict(interval, target) is verdict


def test_certified_at_most_uses_known_risks_without_arithmetic() -> None:
    family = Trials(Fraction(1, 2), 10, 0, bound="useless", exact_ok=False)
    assert certified_at_most(family, 0, Fraction(1, 10**300))  # risk 0 is known
