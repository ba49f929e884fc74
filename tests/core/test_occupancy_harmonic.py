"""N H_N, the expected draws until every bucket is used, against sympy's exact harmonic numbers."""

from __future__ import annotations

import pytest
import sympy

from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.occupancy_figures import EXACT_HARMONIC, HARMONIC_RUN, expected_draws_to_cover


@pytest.mark.parametrize("buckets", [1, 2, HARMONIC_RUN, HARMONIC_RUN + 1, 365, 1_000,
                                     EXACT_HARMONIC])
def test_expected_draws_equal_exact_harmonic_numbers(buckets: int) -> None:
    # sympy.harmonic(N) is the exact rational 1 + 1/2 + ... + 1/N.
    exact = buckets * sympy.harmonic(buckets)
    expected = magnitude_of_fraction(int(exact.p), int(exact.q))
    assert expected_draws_to_cover(buckets) == expected
