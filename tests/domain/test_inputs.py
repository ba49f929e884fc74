"""Loading query texts through parameter definitions: forms, errors, and normalization."""

from __future__ import annotations

from fractions import Fraction

import pytest

from urnbound.core import limits
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.inputs import Inputs, load_inputs
from urnbound.domain.parameters import ALPHABET_CHOICE, COUNT, MAX_RISK, PARAMETERS, SPACE


def _load(**texts: str | list[str]) -> Inputs:
    raw = {name: value if isinstance(value, list) else [value] for name, value in texts.items()}
    return load_inputs((SPACE, COUNT), (), raw)


def _errors(**texts: str | list[str]) -> dict[str, list[str]]:
    with pytest.raises(InvalidQuery) as caught:
        _load(**texts)
    return caught.value.errors


@pytest.mark.parametrize(
    ("texts", "size"),
    [
        ({"bits": "64"}, 2**64),
        ({"alphabet": "base64url", "length": "22"}, 64**22),  # RFC 4648 table 2: 64 symbols
        ({"alphabet": "Base64URL", "length": "22"}, 64**22),  # names match without case
        ({"alphabet_size": "36", "length": "8"}, 36**8),
        ({"symbols": "0123456789abcdef", "length": "4"}, 16**4),
        ({"size": "1e9"}, 10**9),
    ],
)
def test_every_space_form_loads(texts: dict[str, str], size: int) -> None:
    inputs = _load(count="5", **texts)
    assert inputs["space"].size == size
    assert inputs["count"] == 5


def test_two_spellings_of_one_question_normalize_alike() -> None:
    plain = _load(bits="64", count="1000000").normalized()
    scientific = _load(size=str(2**64), count="1e6").normalized()
    assert plain["count"] == scientific["count"] == "1000000"
    assert plain != scientific  # the space's description differs, so does the answer text
    named = _load(alphabet="base16", length="4", count="1").normalized()
    assert named == _load(alphabet="BASE16", length="4", count="1").normalized()


def test_an_unknown_alphabet_is_reported_before_a_missing_length() -> None:
    errors = _errors(alphabet="base58", count="1")
    assert list(errors) == ["alphabet"]
    assert "base64url" in errors["alphabet"][0]


def test_a_missing_length_names_its_range() -> None:
    errors = _errors(alphabet="base64", count="1")
    assert errors == {"length": [f"length is required with alphabet: {PARAMETERS['length'].rule}"]}


def test_missing_everything_names_the_group_and_the_count() -> None:
    errors = _errors()
    assert set(errors) == {"space", "count"}
    assert "bits; alphabet + length; alphabet_size + length; symbols + length; size" in (
        errors["space"][0])
    assert errors["count"] == [f"missing: count, {COUNT.rule}"]


def test_two_forms_at_once_name_both() -> None:
    errors = _errors(bits="64", size="100", count="1")
    assert set(errors) == {"bits", "size"}
    assert "got bits and size" in errors["bits"][0]


def test_a_companion_without_its_form() -> None:
    assert _errors(bits="64", length="3", count="1") == {
        "length": ["length goes with alphabet, alphabet_size, symbols, not bits"]
    }


def test_repeated_and_unknown_parameters() -> None:
    errors = _errors(bits="64", count=["1", "2"], cnt="3")
    assert errors["count"] == ["give this parameter once"]
    assert errors["cnt"][0].startswith("unknown parameter; this question takes bits")


def test_the_alphabet_choice_takes_no_length() -> None:
    with pytest.raises(InvalidQuery) as caught:
        load_inputs((ALPHABET_CHOICE, COUNT, MAX_RISK), (),
                    {"alphabet": ["base32"], "length": ["3"], "count": ["1"], "max_risk": ["0.1"]})
    assert "unknown parameter" in caught.value.errors["length"][0]


def test_optional_parameters_load_as_none_or_their_value() -> None:
    absent = load_inputs((COUNT,), (MAX_RISK,), {"count": ["1"]})
    assert absent["max_risk"] is None
    given = load_inputs((COUNT,), (MAX_RISK,), {"count": ["1"], "max_risk": ["1e-6"]})
    assert given["max_risk"] == Fraction(1, 10**6)


def test_every_range_message_comes_from_the_limits_module() -> None:
    # The rules state the constants of core/limits.py, never a copy typed out elsewhere.
    assert f"{limits.MAX_BITS}" in PARAMETERS["bits"].rule
    assert "2^8192" in COUNT.rule and limits.MAX_COUNT == 2**8192
    assert f"{limits.MAX_ALPHABET_SIZE}" in PARAMETERS["alphabet_size"].rule
    assert "1e-300" in MAX_RISK.rule and limits.MIN_RISK == Fraction(1, 10**300)
    assert f"{limits.MAX_BIG_TEXT_CHARS}" in _errors(bits="1", count="1" * 2601)["count"][0]


def test_counts_up_to_the_space_and_no_further() -> None:
    assert _load(bits="8192", count=str(2**8192))["count"] == 2**8192
    assert "above 2^8192" in _errors(bits="8192", count=str(2**8192 + 1))["count"][0]
