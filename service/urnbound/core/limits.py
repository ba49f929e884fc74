"""Hard limits on inputs, so that every question has a bounded cost."""

from __future__ import annotations

from fractions import Fraction

#: Largest identifier space answered, as a power of two (N <= 2**MAX_SIZE_BITS).
MAX_SIZE_BITS = 8192
#: Largest number of identifiers a caller may ask about.
MAX_COUNT = 10**60
#: Smallest risk target a caller may set.
MIN_RISK = Fraction(1, 10**300)
#: Default cost limit of the exact path, in decimal digits of N**n.
DEFAULT_EXACT_DIGIT_LIMIT = 50_000
#: Numerator and denominator of a returned exact fraction have at most this many digits.
MAX_FRACTION_DIGITS = 1_000
