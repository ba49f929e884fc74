"""Optional parameters of which a request gives exactly one group: checked after loading.

Some questions take a thing in one of several forms whose values cannot be merged into
one loaded value (``guesses``, or ``guess_rate`` with ``window``). Those parameters are
declared optional, and :func:`chosen_group` names the group given, or raises
``InvalidQuery`` naming every parameter at fault, worded as the loader words its own.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from urnbound.domain.errors import InvalidQuery


def chosen_group(inputs: Mapping[str, Any], groups: Sequence[Sequence[str]]) -> int:
    """The index of the one group of ``groups`` whose parameters were all given.

    A group is given when its first parameter is; its other parameters must come with
    it, and no parameter of another group may.

    :raises InvalidQuery: for no group, two groups, or a group with a member missing.

    >>> chosen_group({"guesses": 5, "guess_rate": None, "window": None},
    ...              [("guesses",), ("guess_rate", "window")])
    0
    >>> chosen_group({"guesses": None, "guess_rate": 5, "window": None},
    ...              [("guesses",), ("guess_rate", "window")])
    Traceback (most recent call last):
    ...
    urnbound.domain.errors.InvalidQuery: window: window is required with guess_rate
    """
    texts = "; ".join(" + ".join(group) for group in groups)
    given = [i for i, group in enumerate(groups) if inputs.get(group[0]) is not None]
    strays = {name: group[0] for i, group in enumerate(groups) if i not in given
              for name in group[1:] if inputs.get(name) is not None}
    if len(given) != 1:
        if not given:
            names = sorted(strays) or [groups[0][0]]
            raise InvalidQuery({name: [f"missing: give exactly one of {texts}"]
                                for name in names})
        leads = [groups[i][0] for i in given]
        message = f"give exactly one of {texts}; got {' and '.join(leads)}"
        raise InvalidQuery({name: [message] for name in leads})
    (index,) = given
    errors = {name: [f"{name} is required with {groups[index][0]}"]
              for name in groups[index][1:] if inputs.get(name) is None}
    errors.update({name: [f"{name} goes with {owner}, not {groups[index][0]}"]
                   for name, owner in strays.items()})
    if errors:
        raise InvalidQuery(errors)
    return index
