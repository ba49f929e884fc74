"""Hard limits on inputs, so that every question has a bounded cost.

This is the one place a limit is written down: parsers check against these constants and
every message that states an allowed range is formed from them.
"""

from __future__ import annotations

from fractions import Fraction

#: Largest identifier space answered, as a power of two (N <= 2**MAX_SIZE_BITS).
MAX_SIZE_BITS = 8192
#: Largest identifier space, as an integer.
MAX_SIZE = 2**MAX_SIZE_BITS
#: Smallest identifier space a caller may give by its size.
MIN_SPACE_SIZE = 2
#: Largest number of identifiers a caller may ask about (counts past the space give risk 1).
MAX_COUNT = 2**MAX_SIZE_BITS
#: Smallest risk target a caller may set (targets are below 1).
MIN_RISK = Fraction(1, 10**300)
#: Fewest and most random bits a space may be given by.
MIN_BITS = 1
MAX_BITS = MAX_SIZE_BITS
#: Fewest and most symbols an alphabet may have.
MIN_ALPHABET_SIZE = 2
MAX_ALPHABET_SIZE = 2**16
#: Shortest identifier length; the longest depends on the alphabet (space <= MAX_SIZE).
MIN_LENGTH = 1
#: Longest text accepted for a risk target or a small whole number.
MAX_TEXT_CHARS = 200
#: Longest text accepted for a size or a count: 2**8192 written out has 2,467 digits.
MAX_BIG_TEXT_CHARS = 2_600
#: Default cost limit of the exact path, in decimal digits of N**n.
DEFAULT_EXACT_DIGIT_LIMIT = 50_000
#: Numerator and denominator of a returned exact fraction have at most this many digits.
MAX_FRACTION_DIGITS = 1_000
#: Shortest and longest ISO 8601 duration accepted (a window, a duration, a tick), in seconds.
MIN_DURATION_SECONDS = Fraction(1, 10**9)
MAX_DURATION_SECONDS = 10**12
#: Most digits after the decimal point of a duration's seconds (nanoseconds).
MAX_DURATION_FRACTION_DIGITS = 9
#: Most digits of one number in a duration (bounds the cost of parsing it).
MAX_DURATION_NUMBER_DIGITS = 15
#: Lowest and highest rate accepted (guesses or identifiers per second).
MIN_RATE = Fraction(1, 10**9)
MAX_RATE = 10**30
#: Largest burst factor (peak over mean rate) of the tick model.
MAX_BURST = 10**6
#: Longest horizon a risk budget is projected over: 1,000 years of 365 days, in seconds.
MAX_HORIZON_SECONDS = 1_000 * 365 * 86_400
#: Largest yearly growth factor of an issue rate (the smallest is any value above 0).
MAX_GROWTH = 10
#: Moments of a budget's series and counts of a curve: fewest, default and most.
MIN_POINTS = 2
DEFAULT_POINTS = 50
MAX_POINTS = 500
#: Exact-path cost limit (digits of N**n) of each point of a series or a curve: above it a
#: point takes the expansion with its bound, so that 500 points cost what a few answers do.
SERIES_EXACT_DIGIT_LIMIT = 2_000
#: Occupancy questions (loads, coverage, multiplicity): most buckets, most items or draws,
#: highest load and floor, and the multiplicity range of /v1/collisions. The caps keep
#: every special function the engine evaluates within a few milliseconds; one bucket
#: (every item in it) is not a question the endpoints take.
MIN_BUCKETS = 2
MAX_BUCKETS = 10**12
MAX_ITEMS = 10**15
MIN_LOAD = 1
MAX_LOAD = 10**15
MIN_AT_LEAST = 1
MAX_AT_LEAST = 1_000
MIN_MULTIPLICITY = 2
MAX_MULTIPLICITY = 256
#: Most items per bucket on average in /v1/loads: past it the Poisson and binomial laws of
#: one bucket need special functions of that size at every step (about 1 ms each).
MAX_MEAN_LOAD = 10**5
#: Most counts of a loads or coverage curve (an occupancy chance costs up to some 10 ms).
MAX_OCCUPANCY_POINTS = 100
#: Largest exact cost (digits of N**n) of the collision risk inside /v1/reviews: a review
#: gathers several certified figures, and at the service's exact limit its collision part
#: alone cost up to 10 ms; past this the expansion answers with its bound (under 0.1 ms).
REVIEW_EXACT_DIGIT_LIMIT = 5_000
