"""Excel's wildcards (``*`` any run, ``?`` one character, ``~`` escapes the next) matched in
linear time, without regular-expression backtracking.

A pattern is split at its stars into pieces of fixed length; the first piece must match at the
start, the last at the end, and each piece between is placed at its leftmost match after the
previous one. Leftmost placement is always right for stars (a later match leaves less text for
the pieces after it, never more), so one left-to-right pass decides the match: the cost is the
text's length times the longest piece, not the exponential blow-up a backtracking matcher meets
on ``*a*a*a*a*a*b`` against 32,767 characters.

Matching ignores case (COUNTIF, MATCH, VLOOKUP, SEARCH: Microsoft's help pages; from memory).

>>> w = Wildcard("*a*a*a*a*a*b")
>>> w.matches("a" * 32767)
False
>>> Wildcard("b?cket*").matches("Bucket wheel"), Wildcard("~*").matches("*")
(True, True)
"""

from __future__ import annotations

import re

__all__ = ["Wildcard", "has_wildcards", "unescape"]


def has_wildcards(pattern: str) -> bool:
    return "*" in pattern or "?" in pattern or "~" in pattern


def unescape(pattern: str) -> str:
    """The literal text of a pattern with no wildcards: ``~*``, ``~?``, ``~~`` as themselves."""
    return re.sub(r"~([*?~])", r"\1", pattern)


class Wildcard:
    """A compiled wildcard pattern; :meth:`matches` tests a whole text, :meth:`search` finds
    the first place it matches (SEARCH)."""

    __slots__ = ("pieces", "starts", "ends")

    def __init__(self, pattern: str):
        pieces, cur = [], []
        k, n = 0, len(pattern)
        while k < n:
            ch = pattern[k]
            if ch == "~" and k + 1 < n and pattern[k + 1] in "*?~":
                cur.append(pattern[k + 1].lower())
                k += 2
                continue
            if ch == "*":
                pieces.append(cur)
                cur = []
            else:
                cur.append(None if ch == "?" else ch.lower())
            k += 1
        pieces.append(cur)
        self.pieces = [_Piece(p) for p in pieces]

    def matches(self, text: str) -> bool:
        s = text.lower()
        pieces = self.pieces
        if len(pieces) == 1:
            return len(s) == pieces[0].n and pieces[0].at(s, 0)
        first, last = pieces[0], pieces[-1]
        if first.n + last.n > len(s) or not first.at(s, 0) or \
                not last.at(s, len(s) - last.n):
            return False
        pos, end = first.n, len(s) - last.n
        for piece in pieces[1:-1]:
            i = piece.find(s, pos, end)
            if i < 0:
                return False
            pos = i + piece.n
        return True

    def search(self, text: str, start: int = 0) -> int:
        """Index of the first match at or after ``start`` (the match may end anywhere), -1."""
        s = text.lower()
        pieces = [p for p in self.pieces]
        if all(p.n == 0 for p in pieces):
            return start if start <= len(s) else -1
        # leading stars do not move the start of a match: SEARCH("*b","abc") is 1
        lead = 0
        while lead < len(pieces) and pieces[lead].n == 0:
            lead += 1
        if lead:
            return start if self._rest(s, start, pieces[lead:]) else -1
        first = pieces[0]
        pos = start
        while True:
            i = first.find(s, pos, len(s))
            if i < 0:
                return -1
            if self._rest(s, i + first.n, pieces[1:]):
                return i
            pos = i + 1

    @staticmethod
    def _rest(s, pos, pieces):
        for piece in pieces:
            i = piece.find(s, pos, len(s))
            if i < 0:
                return False
            pos = i + piece.n
        return True


class _Piece:
    """A piece of fixed length: literal characters and ``?`` (None)."""

    __slots__ = ("chars", "n", "literal", "rx")

    def __init__(self, chars):
        self.chars = chars
        self.n = len(chars)
        self.literal = None if None in chars else "".join(chars)
        self.rx = None if self.literal is not None else re.compile(
            "".join("." if ch is None else re.escape(ch) for ch in chars), re.S)

    def at(self, s: str, i: int) -> bool:
        if self.literal is not None:
            return s.startswith(self.literal, i)
        return self.rx.match(s, i) is not None

    def find(self, s: str, lo: int, hi: int) -> int:
        """Leftmost i with lo <= i and i + n <= hi where the piece matches, or -1."""
        if self.literal is not None:
            return s.find(self.literal, lo, hi)
        m = self.rx.search(s, lo, hi)
        return -1 if m is None else m.start()
