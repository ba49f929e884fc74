"""The answers at many counts of one space: batches where they decide, single answers else.

Budgets (``series_risk``) and curves (``series_pairs``) ask one space at up to 500
counts. Both sort the distinct counts into batches by a key (``None``: no batch takes the
count), let each batch answer what it decides, and answer every other count alone with
``pairwise.collision_risk``; a count given twice is answered once. This module is that
shape, once; what a batch is, and what it proves, stays with its module.
"""

from __future__ import annotations

from collections.abc import Callable, Hashable, Mapping, Sequence
from typing import TypeVar

from urnbound.core.pairwise import check_question

#: The two kinds of batch: the power series of ``series_risk``, the logarithms of
#: ``series_wide``.
HORNER, WIDE = "horner", "wide"

A = TypeVar("A")
K = TypeVar("K", bound=Hashable)


def batched_answers(
    size: int,
    counts: Sequence[int],
    key_of: Callable[[int], K | None],
    batch: Callable[[K, list[int]], Mapping[int, A]],
    single: Callable[[int], A],
) -> tuple[A, ...]:
    """The answer at each of ``counts`` (in their order, repeats included).

    :param key_of: the batch a count belongs to, or ``None`` for a single answer.
    :param batch: (key, its counts, rising) -> the answers it decides, by count.
    :param single: the answer at a count no batch decided.
    :raises DomainError: for a size outside the service's range (before any batch runs).

    >>> batched_answers(100, [3, 1, 3, 2], lambda n: n % 2 or None,
    ...                 lambda key, group: {n: f"odd {n}" for n in group if n > 1},
    ...                 lambda n: f"alone {n}")
    ('odd 3', 'alone 1', 'odd 3', 'alone 2')
    """
    check_question(size, 0)
    groups: dict[K, list[int]] = {}
    for count in sorted(set(counts)):
        key = key_of(count)
        if key is not None:
            groups.setdefault(key, []).append(count)
    found: dict[int, A] = {}
    for key, members in groups.items():
        found.update(batch(key, members))
    answers = []
    for count in counts:
        if count not in found:
            found[count] = single(count)
        answers.append(found[count])
    return tuple(answers)
