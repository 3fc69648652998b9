"""app.services.memo.VersionMemo: bounded, oldest out first (the behaviour of an LRU cache of size n,
as in functools.lru_cache's documentation), and made once per key."""

from __future__ import annotations

import pytest

from app.services.memo import VersionMemo


def test_bounded_oldest_out_and_made_once() -> None:
    m: VersionMemo[int] = VersionMemo(2)
    calls: list[str] = []
    make = lambda k: (lambda: calls.append(k) or len(calls))  # noqa: E731
    assert m.get_or_make("a", make("a")) == 1
    assert m.get_or_make("a", make("a")) == 1 and calls == ["a"]
    m.get_or_make("b", make("b"))
    m.get_or_make("a", make("a"))  # a used again: b is now the oldest
    m.get_or_make("c", make("c"))
    assert m.get("b") is None and m.get("a") == 1 and len(m) == 2


def test_size_must_be_positive() -> None:
    with pytest.raises(ValueError, match="size"):
        VersionMemo(0)
