"""Related names (feeler.world.names): the naming conventions of JSON APIs are common practice, not a standard."""

from __future__ import annotations

from feeler.world.names import identifier_like, nouns, related, singular, words


def test_words_split_case_styles() -> None:
    assert words("bookingRef") == words("booking_ref") == words("booking-ref") == ("booking", "ref")
    assert words("URLPath") == ("urlpath",)  # common practice: an all-capitals run stays one word


def test_singular_forms() -> None:
    assert [singular(w) for w in ("roots", "entries", "boxes", "status", "address", "id")] == [
        "root", "entry", "box", "status", "address", "id",
    ]  # fmt: skip


def test_related_names() -> None:
    assert related("root", "roots")  # singular/plural
    assert related("path", "roots") and related("directory", "root_path")  # path family
    assert related("record_id", "id", nouns("create_record"))  # x_id <- id about a record
    assert related("id", "record_id", (), nouns("read_record"))  # id <- x_id for a tool about records
    assert related("berth_code", "code", nouns("list_berths"))
    assert not related("record_id", "id", nouns("create_invoice"))
    assert not related("title", "id") and not related("count", "root")


def test_identifier_like() -> None:
    assert all(identifier_like(n) for n in ("id", "record_id", "bookingRef", "path", "root"))
    assert not any(identifier_like(n) for n in ("title", "nights", "email"))
