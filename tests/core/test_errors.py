"""Failures of the core's bounded iterations surface as the documented NoConvergence."""

from __future__ import annotations

import pytest
from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.errors import NoConvergence, ServiceError


def test_a_series_that_does_not_fall_raises_no_convergence() -> None:
    # x = 1 - 2**-20 is outside the series' domain (|x| < 2**-16): its terms never fall,
    # so the bounded loop must give up with the documented error, not a bare ArithmeticError
    x = mp.sub(mp.ONE, libmp.from_man_exp(1, -20), 80)
    with pytest.raises(NoConvergence) as caught:
        mp.power_series(x, 1, lambda k: mp.ONE, 40)
    assert isinstance(caught.value, ServiceError)
    assert "did not converge" in caught.value.detail
