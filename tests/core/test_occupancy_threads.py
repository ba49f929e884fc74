"""Occupancy answers computed in concurrent threads agree with the same answers computed alone.

flint's working precision is process-wide; the engine sets and restores it around each
computation and reads every figure's accuracy off its ball (core/balls.py), so threads
that interleave (as gunicorn's gthread workers do) may change how tight a ball is but
never what it encloses.
"""

from __future__ import annotations

import sys
import threading
from fractions import Fraction

import pytest

from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_results import AT_LEAST, BELOW, Rule
from urnbound.core.results import Magnitude

CASES = [
    (10**4, 10**5, Rule(BELOW, 30)),  # saddle point
    (10**7, 15 * 10**6, Rule(BELOW, 3)),  # saddle point, complement near 1e-1772337
    (10**6, 53_815_511, Rule(AT_LEAST, 1)),  # inclusion-exclusion, near 4e-18
    (10**4, 644, Rule(BELOW, 6)),  # second-order inclusion-exclusion, near 9e-7
    (10**7, 19_999_990, Rule(BELOW, 3)),  # recurrence
    (365, 88, Rule(BELOW, 3)),  # exact
]


def _agree(x: Magnitude, y: Magnitude) -> bool:
    if x.decimal == "0" or y.decimal == "0":
        return x.decimal == y.decimal
    (xm, xe), (ym, ye) = x.decimal.split("e"), y.decimal.split("e")
    allowed = (Fraction(x.relative_error_bound) + Fraction(y.relative_error_bound)
               + Fraction(1, 10**19))
    return xe == ye and abs(Fraction(xm) - Fraction(ym)) <= allowed * Fraction(ym)


@pytest.fixture
def switch_often() -> object:
    previous = sys.getswitchinterval()
    sys.setswitchinterval(1e-5)  # interleave the threads as often as possible
    yield None
    sys.setswitchinterval(previous)


def test_threads_agree_with_serial_answers(switch_often: object) -> None:
    alone = {case: occupancy_risk(*case) for case in CASES}
    disagreements: list[tuple[object, ...]] = []

    def work(offset: int) -> None:
        for step in range(8):
            case = CASES[(offset + step) % len(CASES)]
            answer, reference = occupancy_risk(*case), alone[case]
            for ours, theirs in ((answer.fails, reference.fails),
                                 (answer.holds, reference.holds)):
                if not _agree(ours, theirs):
                    disagreements.append((case, ours.decimal, theirs.decimal))

    threads = [threading.Thread(target=work, args=(offset,)) for offset in range(4)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    assert not any(thread.is_alive() for thread in threads)
    assert disagreements == []
