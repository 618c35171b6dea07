"""Line and column numbers for the keys and values of a TOML document.

``tomllib`` turns a TOML document into plain dicts and lists but keeps no
record of where anything was written, so a validation error could only name a
path such as ``optic[2].mount.size[1]``.  To point the user at the exact spot
in the file, :func:`key_positions` re-reads the text with a small hand-written
scanner and maps every path of the parsed document to its ``(line, column)``.

Paths have the shape of the data ``tomllib.loads`` returns: tuples of ``str``
keys and ``int`` list indices, e.g. ``("optic", 0, "mount", "size", 1)``.

* A key maps to the first character of the key (the opening quote of a quoted
  key).  A dotted key ``a.b.c = 1`` maps ``("a", "b", "c")`` and, unless they
  are already known, ``("a",)`` and ``("a", "b")`` to the start of ``a``.
* A table header ``[t]`` or ``[[t]]`` maps to its opening ``[``; the n-th
  ``[[t]]`` header is ``("t", n)`` and ``("t",)`` is the first such header.
  A table that is only implied (``[a.b]`` before or without ``[a]``) maps to
  the first header implying it until an explicit definition takes over.
* An array element maps to the first character of the element.

Lines and columns are 1-based; columns count characters (code points) and a
``\\r\\n`` line ending counts as a single line break.

The scanner assumes text that ``tomllib.loads`` has already accepted.  It never
raises: if it meets something it does not understand it stops and returns the
positions found so far.
"""

from __future__ import annotations

import re
import sys

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised only on Python 3.10
    import tomli as tomllib

__all__ = ["key_positions", "LazyPositions"]

# Runs of characters are matched with regular expressions (no per-character Python loop),
# so the scan stays linear and quick on the largest layout the loader reads.
_WS = re.compile(r"[ \t]*")
_BLANK = re.compile(r"(?:[ \t\n]+|#[^\n]*)*")
_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
_SCALAR = re.compile(r"[^,\]}#\n]+")  # a bare value runs up to a character it can never hold
# strings as "unrolled loops": runs of plain characters, no backtracking between them
_BASIC = re.compile(r'"[^"\\\n]*(?:\\.[^"\\\n]*)*"')
_ML_BASIC = re.compile(r'"""[^"\\]*(?:(?:\\[\s\S]|"(?!""))[^"\\]*)*""""{0,2}')
_ML_LITERAL = re.compile(r"'''[^']*(?:'(?!'')[^']*)*''''{0,2}")
#: a scalar (number, boolean, date) or a one-line string without escapes
_SIMPLE_VALUE = r'(?:"[^"\\\n]*"(?!")|[^,\]}#\n\[{"\' \t][^,\]}#\n]*)'
_SIMPLE_KV = r'([A-Za-z0-9_-]+)[ \t]*=[ \t]*' + _SIMPLE_VALUE
#: whitespace, newlines and comments, taken whole: the lookahead reads the longest run and
#: the backreference consumes exactly it, so a failed match never backtracks into a
#: comment (and never finds a key in one) nor splits a long run of blanks many ways
_BLANKS = r'(?=(?P<blanks>(?:[ \t\n]+|#[^\n]*)*))(?P=blanks)'
# The common cases, each read in one match (the step-by-step scan reads the rest):
#: ``key = 1.5`` or ``key = "text"``: a bare key and a simple value
_SIMPLE_KEY_VALUE = re.compile(_SIMPLE_KV)
#: the same after blank lines and comments, at the top level or in a table
_BLANK_KEY_VALUE = re.compile(_BLANKS + _SIMPLE_KV)
#: ``key = value`` and its comma in an inline table
_INLINE_KEY_VALUE = re.compile(r'[ \t\n]*' + _SIMPLE_KV + r'[ \t\n]*,?')
#: one simple element of an array and its comma
_ARRAY_ITEM = re.compile(_BLANKS + "(" + _SIMPLE_VALUE + r")[ \t\n]*(?:#[^\n]*\n[ \t\n]*)*,?")


#: ``[[name]]`` at the start of a line: a header of an array of tables with a bare key
#: (the key starts with a letter and nothing but a comment follows: ``[[1]]`` on a line of
#: a multi-line array is a value)
_AOT_HEADER = re.compile(r"^([ \t]*)\[\[[ \t]*([A-Za-z_][A-Za-z0-9_-]*)[ \t]*\]\][ \t]*(?=#|\r?\n|\Z)", re.M)
#: a line that may be a header with a quoted key (or an array of strings): headers then
#: are not all of the bare form above
_QUOTED_HEADER = re.compile(r"""^[ \t]*\[\[?[ \t]*["']""", re.M)


def aot_headers(text: str) -> dict[str, list[tuple[int, int]]] | None:
    """(line, column) of each ``[[name]]`` header, by name in file order: where ``key_positions``
    maps ``(name, n)``, read with one regular expression.  None where that reading could be
    wrong: a multi-line string (which may hold a line that looks like a header) or a header
    with a quoted key.  In text ``tomllib`` accepted, a line that starts with ``[[name]]``
    is a header: a bare word is no value, so it is not an element of a multi-line array,
    and inline tables and other strings stay on one line."""
    if '"""' in text or "'''" in text or _QUOTED_HEADER.search(text) is not None:
        return None
    out: dict[str, list[tuple[int, int]]] = {}
    line, counted = 1, 0
    for m in _AOT_HEADER.finditer(text):
        line += text.count("\n", counted, m.start())
        counted = m.start()
        out.setdefault(m.group(2), []).append((line, len(m.group(1)) + 1))
    return out


def key_positions(text: str, until: tuple | None = None) -> dict[tuple, tuple[int, int]]:
    """Map each path in the parsed document to the (line, column) where it is written, both 1-based.

    With *until*, the scan stops where that path is written: the map then holds it and the
    paths before it (all of them where it is not written explicitly)."""
    scanner = _Scanner(text, until)
    try:
        scanner.document()
    except (_Stop, ValueError, IndexError):
        pass  # keep the partial map; callers then just lack some positions
    return _Positions(scanner.line_columns(), scanner.implicit)


class _Positions(dict):
    """The map of ``key_positions``, which also knows the paths in it that are only implied
    so far (a later explicit definition would move them): every other position is final,
    even in a map of a scan that stopped early."""

    def __init__(self, positions: dict, implied: set) -> None:
        super().__init__(positions)
        self.implied = implied

    def final(self) -> dict:
        return {p: at for p, at in self.items() if p not in self.implied}


class LazyPositions:
    """``key_positions(text)``, worked out the first time a position is asked for.

    A layout that loads without an error and gets no finding never needs a line number, so
    the second pass over its text is put off until something is reported (and skipped
    when nothing is)."""

    def __init__(self, text: str) -> None:
        self._text = text
        self._map: dict | None = None
        self._asked = False
        #: what the first, partial scan found that no later text can move
        self._final: dict = {}
        #: ``aot_headers`` of the text (False: not read yet)
        self._headers: dict | None | bool = False

    @property
    def map(self) -> dict[tuple, tuple[int, int]]:
        if self._map is None:
            try:
                self._map = key_positions(self._text)
            except Exception:  # noqa: BLE001 - a missing position must never turn a good file into a crash
                self._map = {}
            self._text = ""
            self._final = {}
            self._headers = None
        return self._map

    def nearest(self, path: tuple) -> tuple[int, int]:
        """(line, column) of *path*, else of the nearest table or array holding it, else (1, 1).

        The first question (often the only one: an error) scans only up to *path*; a later
        one about a path written before it (a layout's findings mostly point at its tables,
        optics before cavities) is answered from that scan; any other scans the whole text,
        once.  The header of a table of an array (``("optic", 2)``: where most findings
        point) needs no scan at all where ``aot_headers`` can read it."""
        if self._map is None:
            if len(path) == 2 and type(path[1]) is int and path[1] >= 0:
                if self._headers is False:
                    try:
                        self._headers = aot_headers(self._text)
                    except Exception:  # noqa: BLE001 - the scan below answers instead
                        self._headers = None
                found = self._headers.get(path[0]) if self._headers else None
                if found is not None and path[1] < len(found):
                    return found[path[1]]
            if not self._asked:
                self._asked = True
                try:
                    first = key_positions(self._text, until=path)
                except Exception:  # noqa: BLE001 - the whole scan below tries again
                    first = {}
                if path in first:
                    if isinstance(first, _Positions):
                        self._final = first.final()
                    return first[path]
                if first:        # not written explicitly: the scan went through the whole text
                    self._map, self._text = first, ""
            else:
                found = self._final.get(path)
                if found is not None:
                    return found
        positions = self.map
        while path:
            found = positions.get(path)
            if found is not None:
                return found
            path = path[:-1]
        return 1, 1


class _Stop(Exception):
    """The scanner met text it cannot make sense of, or found the path it was asked for."""


class _Scanner:
    """A cursor over the text plus the bookkeeping needed to build paths."""

    def __init__(self, text: str, target: tuple | None = None) -> None:
        self.text = text.replace("\r\n", "\n")
        self.target = target  # stop once this path is written explicitly
        self.i = 0
        self.line_starts = [0] + [m.end() for m in re.finditer("\n", self.text)]
        self.positions: dict[tuple, int] = {}  # path -> offset; lines and columns at the end
        self.implicit: set[tuple] = set()  # paths only implied so far
        self.aot_counts: dict[tuple, int] = {}  # [[header]] path -> elements seen

    # -- cursor helpers -------------------------------------------------------

    def peek(self, n: int = 1) -> str:
        return self.text[self.i : self.i + n]

    def expect(self, s: str) -> None:
        if not self.text.startswith(s, self.i):
            raise _Stop(f"expected {s!r} at offset {self.i}")
        self.i += len(s)

    def skip_ws(self) -> None:
        """Skip spaces and tabs on the current line."""
        self.i = _WS.match(self.text, self.i).end()

    def skip_blank(self) -> None:
        """Skip whitespace, newlines and comments."""
        self.i = _BLANK.match(self.text, self.i).end()

    def skip(self, pattern: re.Pattern, what: str) -> None:
        found = pattern.match(self.text, self.i)
        if found is None:
            raise _Stop(f"{what} at offset {self.i}")
        self.i = found.end()

    # -- recording --------------------------------------------------------------

    def line_columns(self) -> dict[tuple, tuple[int, int]]:
        """The recorded offsets as (line, column), all at once."""
        import numpy as np

        offsets = np.fromiter(self.positions.values(), dtype=np.int64, count=len(self.positions))
        starts = np.asarray(self.line_starts, dtype=np.int64)
        lines = np.searchsorted(starts, offsets, side="right")
        cols = offsets - starts[lines - 1] + 1
        return dict(zip(self.positions, zip(lines.tolist(), cols.tolist())))

    def record(self, path: tuple, offset: int, implicit: bool = False) -> None:
        """Remember where *path* is written; the first explicit mention wins."""
        if path in self.positions and (implicit or path not in self.implicit):
            return
        self.positions[path] = offset
        if implicit:
            self.implicit.add(path)
        else:
            self.implicit.discard(path)
            if path == self.target:
                raise _Stop("found")

    # -- document structure -------------------------------------------------

    def document(self) -> None:
        table: tuple = ()
        text = self.text
        while True:
            simple = _BLANK_KEY_VALUE.match(text, self.i)
            if simple is not None:
                self.record(table + (simple.group(2),), simple.start(2))
                self.i = simple.end()
                continue
            self.skip_blank()
            if self.i >= len(self.text):
                return
            if self.peek() == "[":
                table = self.header()
            else:
                self.key_value(table)

    def header(self) -> tuple:
        """Read ``[a.b]`` or ``[[a.b]]`` and return the path of the table it opens."""
        start = self.i
        is_array = self.peek(2) == "[["
        self.i += 2 if is_array else 1
        names = [name for name, _ in self.key()]
        self.skip_ws()
        self.expect("]]" if is_array else "]")

        path: tuple = ()
        for name in names[:-1]:
            path += (name,)
            self.record(path, start, implicit=True)
            if path in self.aot_counts:  # [[fruit]] then [fruit.x]: the last fruit
                path += (self.aot_counts[path] - 1,)
        path += (names[-1],)
        if is_array:
            n = self.aot_counts.get(path, 0)
            self.aot_counts[path] = n + 1
            self.record(path, start)
            path += (n,)
        self.record(path, start)
        return path

    def key_value(self, table: tuple) -> None:
        """Read ``key = value`` belonging to the table at path *table*."""
        start = self.i
        simple = _SIMPLE_KEY_VALUE.match(self.text, start)
        if simple is not None:   # the common case in one match: bare key = scalar or plain string
            self.record(table + (simple.group(1),), start)
            self.i = simple.end()
            return
        names = [name for name, _ in self.key()]
        self.skip_ws()
        self.expect("=")
        self.skip_ws()
        for k in range(1, len(names)):
            self.record(table + tuple(names[:k]), start, implicit=True)
        path = table + tuple(names)
        self.record(path, start)
        self.value(path)

    def key(self) -> list[tuple[str, int]]:
        """Read a possibly dotted key; return its parts with their offsets."""
        parts = []
        while True:
            self.skip_ws()
            start = self.i
            parts.append((self.simple_key(), start))
            self.skip_ws()
            if self.peek() != ".":
                return parts
            self.i += 1

    def simple_key(self) -> str:
        start = self.i
        quote = self.peek()
        if quote == '"':
            self.skip_basic_string()
            raw = self.text[start : self.i]
            if "\\" in raw:  # let tomllib decode the escapes exactly as it did
                return tomllib.loads(f"k = {raw}")["k"]
            return raw[1:-1]
        if quote == "'":
            self.skip_literal_string()
            return self.text[start + 1 : self.i - 1]
        self.skip(_BARE_KEY, "no key")
        return self.text[start : self.i]

    # -- values -------------------------------------------------------------------

    def value(self, path: tuple) -> None:
        ch = self.peek()
        if ch == "[":
            self.array(path)
        elif ch == "{":
            self.inline_table(path)
        elif ch in ('"', "'"):
            self.string()
        else:  # number, boolean, inf/nan, date/time: up to a delimiter
            self.skip(_SCALAR, "no value")

    def array(self, path: tuple) -> None:
        self.expect("[")
        index = 0
        text, positions = self.text, self.positions
        while True:
            simple = _ARRAY_ITEM.match(text, self.i)
            if simple is not None:   # an element path is new: never implied, never seen before
                element = path + (index,)
                positions.setdefault(element, simple.start(2))
                if element == self.target:
                    raise _Stop("found")
                self.i = simple.end()
                index += 1
                continue
            self.skip_blank()
            if self.peek() == "]":
                self.i += 1
                return
            self.record(path + (index,), self.i)
            self.value(path + (index,))
            self.skip_blank()
            if self.peek() == ",":
                self.i += 1
            index += 1

    def inline_table(self, path: tuple) -> None:
        self.expect("{")
        text = self.text
        while True:
            simple = _INLINE_KEY_VALUE.match(text, self.i)
            if simple is not None:
                self.record(path + (simple.group(1),), simple.start(1))
                self.i = simple.end()
                continue
            self.skip_blank()
            if self.peek() == "}":
                self.i += 1
                return
            self.key_value(path)
            self.skip_blank()
            if self.peek() == ",":
                self.i += 1

    # -- strings ----------------------------------------------------------------

    def string(self) -> None:
        if self.peek(3) == '"""':
            # up to two quotes right before the closing delimiter belong to the content
            self.skip(_ML_BASIC, "unterminated multi-line string")
        elif self.peek(3) == "'''":
            self.skip(_ML_LITERAL, "unterminated multi-line string")
        elif self.peek() == '"':
            self.skip_basic_string()
        else:
            self.skip_literal_string()

    def skip_basic_string(self) -> None:
        self.skip(_BASIC, "unterminated string")

    def skip_literal_string(self) -> None:
        self.expect("'")
        end = self.text.find("'", self.i)
        if end < 0 or "\n" in self.text[self.i : end]:
            raise _Stop("unterminated literal string")
        self.i = end + 1
