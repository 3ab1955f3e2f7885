"""The decisions file (storage/decisions_file.py): TOML that tomllib reads back to the same
decisions, in a stable order, with one-line errors that name the table at fault."""

from __future__ import annotations

import tomllib

import pytest
from hypothesis import given
from hypothesis import strategies as st

from bodycensus.errors import BadInput
from bodycensus.storage.decisions import Decision
from bodycensus.storage.decisions_file import dumps, loads, toml_string

DECISIONS = (
    Decision("finding", "denser-than-iron", "B0000042", "confirmed", "real: radius typo", "Ben"),
    Decision("label", "inside-fluid-roche", "icy moon", "accepted", 'say "rigid"\nline 2', "Ana",
             "2026-12-02T10:00:00+00:00"),
    Decision("system", "hill-spacing", "Umwynen 100", "wontfix"),
)


def test_round_trip_keeps_every_decision() -> None:
    text = dumps("universe", DECISIONS)
    read = loads(text)
    assert read.catalogue == "universe"
    assert sorted(read.decisions, key=lambda d: d.key) == sorted(DECISIONS, key=lambda d: d.key)


def test_the_file_is_broadest_first_and_the_same_bytes_for_the_same_set() -> None:
    text = dumps("universe", DECISIONS)
    assert text == dumps("universe", reversed(DECISIONS))
    tables = [line for line in text.splitlines() if line.startswith("[[")]
    assert tables == ["[[label]]", "[[system]]", "[[finding]]"]
    assert 'body = "B0000042"' in text and 'system = "Umwynen 100"' in text
    assert text.startswith("# bodycensus decisions (format 1)")


@given(st.text(max_size=60))
def test_any_text_survives_as_a_toml_string(text: str) -> None:
    assert tomllib.loads(f"x = {toml_string(text)}")["x"] == text


@pytest.mark.parametrize(("text", "words"), [
    ("format = 1\n[[label]]\nrule = 'r'\nstatus = 'accepted'\n", "[[label]] number 1: 'label'"),
    ("format = 1\n[[finding]]\nrule='r'\nbody='b'\nstatus='fine'\n", "[[finding]] number 1"),
    ("format = 1\n[[label]]\nrule='r'\nlabel='l'\nstatus='accepted'\ncolour='red'\n", "colour"),
    ("format = 2\n", "format = 1"),
    ("format = 1\n[[planet]]\n", "unknown key 'planet'"),
    ("format = 1\n[label]\nrule='r'\n", "array of tables"),
    ("format = 1\n[[label]]\nrule='r'\nlabel='l'\nstatus='accepted'\n"
     "[[label]]\nrule='r'\nlabel='l'\nstatus='wontfix'\n", "decided twice"),
    ("format = 1\nnot toml at all", "is not TOML"),
])
def test_a_bad_file_is_refused_in_one_line_naming_where(text: str, words: str) -> None:
    with pytest.raises(BadInput) as caught:
        loads(text, "team.toml")
    message = str(caught.value)
    assert words in message and message.startswith("team.toml") and "\n" not in message
