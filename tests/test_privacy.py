"""Scrubbing personal data from query text; every example below is invented."""

from __future__ import annotations

import pytest

from trawl.privacy import describe_counts, scrub, scrub_texts


@pytest.mark.parametrize("text, expected, kind", [
    ("refund to mara.quillen@example.org please", "refund to [email] please", "email"),
    ("send the receipt to j_o+fares@rider-mail.example.net", "send the receipt to [email]",
     "email"),
    ("call me on +44 7700 900123", "call me on [phone]", "phone"),
    ("my number is (555) 014-2233 thanks", "my number is [phone] thanks", "phone"),
    ("ring 020 7946 0958 about my bag", "ring [phone] about my bag", "phone"),
    ("tel 555-0142", "tel [phone]", "phone"),
    ("card 4000123412341234 charged twice", "card [number] charged twice", "number"),
    ("card 4000 1234 1234 1234 charged twice", "card [number] charged twice", "number"),
    ("account 00123456 locked", "account [number] locked", "number"),
    ("lost wallet near QF1 2AB", "lost wallet near [postcode]", "postcode"),
    ("stop near qf12 9zz", "stop near [postcode]", "postcode"),
    ("pass posted to k1a 0b1", "pass posted to [postcode]", "postcode"),
    ("zip 90210-1234 office", "zip [postcode] office", "postcode"),
])
def test_each_kind_is_replaced_and_counted(text, expected, kind):
    out, counts = scrub(text)
    assert out == expected
    assert counts == {k: int(k == kind) for k in ("email", "phone", "postcode", "number")}


@pytest.mark.parametrize("text", [
    "route 42 at 10:15",
    "bus 5 every 10 15 20 minutes",
    "fares for 2024",
    "timetable 2023-2024",
    "zone 3 day pass",
    "mp3 player left on the 7 bus",
    "quiet carriage",
])
def test_ordinary_transit_queries_are_left_alone(text):
    out, counts = scrub(text)
    assert out == text
    assert sum(counts.values()) == 0


def test_several_kinds_in_one_text_are_counted_separately():
    out, counts = scrub("a@b.example or +1 555 014 2233, card 123456789, QF1 2AB; x@y.example")
    assert out == "[email] or [phone], card [number], [postcode]; [email]"
    assert counts == {"email": 2, "phone": 1, "postcode": 1, "number": 1}


def test_many_texts_keep_their_keys_and_add_up_their_counts():
    out, counts = scrub_texts({"q1": "refund to a@b.example", "q2": "fare zones",
                               "q3": "ring +44 7700 900123 or c@d.example"})
    assert out == {"q1": "refund to [email]", "q2": "fare zones", "q3": "ring [phone] or [email]"}
    assert counts == {"email": 2, "phone": 1, "postcode": 0, "number": 0}
    assert describe_counts(counts) == "2 email, 1 phone"
    assert describe_counts(scrub_texts({})[1]) == "nothing found"
