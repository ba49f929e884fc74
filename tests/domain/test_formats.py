"""Identifier formats: random-bit counts from RFC 9562, the registry, and format as a space."""

from __future__ import annotations

from types import MappingProxyType

import pytest

from urnbound.core.errors import DomainError
from urnbound.domain.formats import FORMATS, NAMED_FORMATS, named_format, space_of_format
from urnbound.domain.registry import default_registry


def test_uuid_version_4_has_122_random_bits() -> None:
    # RFC 9562, section 5.4: 128 bits less 4 version bits and 2 variant bits are random
    # (random_a 48 + random_b 12 + random_c 62)
    assert 48 + 12 + 62 == 128 - 4 - 2 == 122
    entry = named_format("uuid-v4")
    assert entry.random_bits == 122 and entry.source == "RFC 9562, section 5.4"
    assert not entry.time_ordered
    assert space_of_format(entry).size == 2**122


def test_uuid_version_7_has_74_random_bits_and_a_millisecond_tick() -> None:
    # RFC 9562, section 5.7: 48-bit unix_ts_ms, 4 version bits, 12 bits rand_a, 2 variant
    # bits, 62 bits rand_b; not 80 (that count wrongly includes version and variant)
    assert 12 + 62 == 128 - 48 - 4 - 2 == 74
    entry = named_format("uuid-v7")
    assert entry.random_bits == 74 and entry.time_ordered and entry.tick == "PT0.001S"
    assert "48-bit Unix timestamp in milliseconds" in entry.layout
    assert space_of_format(entry).size == 2**74


def test_registry_is_read_only_and_lists_the_families() -> None:
    assert isinstance(FORMATS, MappingProxyType)
    with pytest.raises(TypeError):
        FORMATS["x"] = FORMATS["uuid-v4"]  # type: ignore[index]
    assert NAMED_FORMATS == ("uuid-v4", "uuid-v7")
    assert FORMATS["random-string"].random_bits is None
    assert FORMATS["random-integer"].request == "bits"


@pytest.mark.parametrize("name", ["uuid-v1", "random-string", "", "uuid"])
def test_unknown_or_family_names_are_refused(name: str) -> None:
    with pytest.raises(DomainError) as caught:
        named_format(name)
    assert caught.value.field == "format" and "uuid-v4, uuid-v7" in caught.value.detail


def test_format_is_accepted_wherever_a_space_is() -> None:
    for question in default_registry():
        takes_space = any(getattr(entry, "name", "") == "space" for entry in question.inputs)
        names = {p.name for e in question.inputs for p in getattr(e, "parameters", (e,))}
        assert takes_space == ("format" in names), question.name
