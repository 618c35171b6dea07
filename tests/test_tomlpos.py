"""Tests for benchcheck.tomlpos.key_positions."""

from __future__ import annotations

import datetime
import math
import re
import tomllib
from pathlib import Path

import pytest

from benchcheck.tomlpos import key_positions


# -- helpers ---------------------------------------------------------------------


def all_paths(data, prefix=()):
    """Every path (containers and leaves) of a tomllib result, root excluded."""
    items = data.items() if isinstance(data, dict) else enumerate(data)
    for key, value in items:
        path = prefix + (key,)
        yield path
        if isinstance(value, (dict, list)):
            yield from all_paths(value, path)


def leaves(data, prefix=()):
    items = data.items() if isinstance(data, dict) else enumerate(data)
    for key, value in items:
        path = prefix + (key,)
        if isinstance(value, (dict, list)):
            yield from leaves(value, path)
        else:
            yield path, value


def text_at(doc: str, line: int, col: int) -> str:
    """The document from (line, col) on; *doc* must use \\n line endings."""
    lines = doc.split("\n")
    return "\n".join([lines[line - 1][col - 1 :]] + lines[line:])


def check(doc: str, expected: dict) -> dict:
    """Assert *expected* positions and that the map covers exactly the parsed paths."""
    data = tomllib.loads(doc)
    positions = key_positions(doc)
    assert set(positions) == set(all_paths(data))
    for path, pos in expected.items():
        assert positions[path] == pos, path
    return positions


# -- small documents, positions worked out by hand ---------------------------------


def test_top_level_and_quoted_keys():
    doc = "alpha = 1\n  beta=2\n\"x y\" = 3\n'lit' = 4\n"
    check(doc, {("alpha",): (1, 1), ("beta",): (2, 3), ("x y",): (3, 1), ("lit",): (4, 1)})


def test_quoted_keys_with_escapes_and_unicode():
    doc = (
        '"tab\\tkey" = 1\n'
        '"q\\"uote" = 2\n'
        '"" = 3\n'
        "'C:\\path' = 4\n"
        '"αβγ" = { "δ" = [1, 2] }\n'
        '"\\u00e9" = 5\n'
    )
    check(
        doc,
        {
            ("tab\tkey",): (1, 1),
            ('q"uote',): (2, 1),
            ("",): (3, 1),
            ("C:\\path",): (4, 1),
            ("αβγ",): (5, 1),
            ("αβγ", "δ"): (5, 11),
            ("αβγ", "δ", 0): (5, 18),
            ("αβγ", "δ", 1): (5, 21),
            ("é",): (6, 1),
        },
    )


def test_table():
    doc = "# comment\n[bench]\nsize = 10\n  name = \"b\"\n"
    check(doc, {("bench",): (2, 1), ("bench", "size"): (3, 1), ("bench", "name"): (4, 3)})


def test_array_of_tables():
    doc = '[[optic]]\nroc = 100.0\n[[optic]]\n  roc = -50\nname = "M2"\n'
    check(
        doc,
        {
            ("optic",): (1, 1),
            ("optic", 0): (1, 1),
            ("optic", 0, "roc"): (2, 1),
            ("optic", 1): (3, 1),
            ("optic", 1, "roc"): (4, 3),
            ("optic", 1, "name"): (5, 1),
        },
    )


def test_nested_headers():
    doc = """\
[a.b]
x = 1
[[c.d]]
y = 2
[[fruit]]
name = "apple"
[fruit.physical]
color = "red"
[[fruit.variety]]
name = "red delicious"
[[fruit.variety]]
name = "granny smith"
[[fruit]]
name = "banana"
[[fruit.variety]]
name = "plantain"
"""
    check(
        doc,
        {
            ("a",): (1, 1),
            ("a", "b"): (1, 1),
            ("a", "b", "x"): (2, 1),
            ("c",): (3, 1),
            ("c", "d"): (3, 1),
            ("c", "d", 0): (3, 1),
            ("c", "d", 0, "y"): (4, 1),
            ("fruit",): (5, 1),
            ("fruit", 0): (5, 1),
            ("fruit", 0, "name"): (6, 1),
            ("fruit", 0, "physical"): (7, 1),
            ("fruit", 0, "physical", "color"): (8, 1),
            ("fruit", 0, "variety"): (9, 1),
            ("fruit", 0, "variety", 0): (9, 1),
            ("fruit", 0, "variety", 0, "name"): (10, 1),
            ("fruit", 0, "variety", 1): (11, 1),
            ("fruit", 0, "variety", 1, "name"): (12, 1),
            ("fruit", 1): (13, 1),
            ("fruit", 1, "name"): (14, 1),
            ("fruit", 1, "variety"): (15, 1),
            ("fruit", 1, "variety", 0): (15, 1),
            ("fruit", 1, "variety", 0, "name"): (16, 1),
        },
    )


def test_implicit_table_is_replaced_by_its_explicit_header():
    doc = "[x.y]\nz = 1\n  [x]\nw = 2\n"
    check(doc, {("x",): (3, 3), ("x", "y"): (1, 1), ("x", "y", "z"): (2, 1), ("x", "w"): (4, 1)})


def test_headers_with_whitespace_and_quotes():
    doc = "[ a . \"b c\" ]\nk = 1\n[[ 'q.r' ]]\n"
    check(
        doc,
        {
            ("a",): (1, 1),
            ("a", "b c"): (1, 1),
            ("a", "b c", "k"): (2, 1),
            ("q.r",): (3, 1),
            ("q.r", 0): (3, 1),
        },
    )


def test_dotted_keys():
    doc = 'a.b.c = 1\na.b.d = 2\n  a . "b.c" = 3\n[t]\np.q = true\n'
    check(
        doc,
        {
            ("a",): (1, 1),
            ("a", "b"): (1, 1),
            ("a", "b", "c"): (1, 1),
            ("a", "b", "d"): (2, 1),
            ("a", "b.c"): (3, 3),
            ("t",): (4, 1),
            ("t", "p"): (5, 1),
            ("t", "p", "q"): (5, 1),
        },
    )


def test_inline_table_with_array():
    doc = "[[optic]]\nmount = { size = [25.0, 12.0] }\n"
    check(
        doc,
        {
            ("optic", 0, "mount"): (2, 1),
            ("optic", 0, "mount", "size"): (2, 11),
            ("optic", 0, "mount", "size", 0): (2, 19),
            ("optic", 0, "mount", "size", 1): (2, 25),
        },
    )


def test_array_of_mixed_strings_and_inline_tables():
    doc = '[[cavity]]\npath = ["M1", { id = "M2", distance = 120.0, fold = -20.0 }, "M3"]\n'
    check(
        doc,
        {
            ("cavity", 0, "path"): (2, 1),
            ("cavity", 0, "path", 0): (2, 9),
            ("cavity", 0, "path", 1): (2, 15),
            ("cavity", 0, "path", 1, "id"): (2, 17),
            ("cavity", 0, "path", 1, "distance"): (2, 28),
            ("cavity", 0, "path", 1, "fold"): (2, 46),
            ("cavity", 0, "path", 2): (2, 62),
        },
    )


def test_nested_inline_containers_and_empty_ones():
    doc = "a = { b = { c = [ {d = 1}, [ 2, [3] ] ] } }\ne = {}\nf = [ ]\n"
    check(
        doc,
        {
            ("a",): (1, 1),
            ("a", "b"): (1, 7),
            ("a", "b", "c"): (1, 13),
            ("a", "b", "c", 0): (1, 19),
            ("a", "b", "c", 0, "d"): (1, 20),
            ("a", "b", "c", 1): (1, 28),
            ("a", "b", "c", 1, 0): (1, 30),
            ("a", "b", "c", 1, 1): (1, 33),
            ("a", "b", "c", 1, 1, 0): (1, 34),
            ("e",): (2, 1),
            ("f",): (3, 1),
        },
    )


def test_multiline_array_with_comments_and_trailing_commas():
    doc = """\
path = [ # the beam path [fake] x = 1
  "M1",
  # a comment, with "quotes" and ]
  { id = "M2", distance = 120.0 },
  [1, 2,],
  'M3', # trailing
]
after = 1
"""
    check(
        doc,
        {
            ("path", 0): (2, 3),
            ("path", 1): (4, 3),
            ("path", 1, "id"): (4, 5),
            ("path", 1, "distance"): (4, 16),
            ("path", 2): (5, 3),
            ("path", 2, 0): (5, 4),
            ("path", 2, 1): (5, 7),
            ("path", 3): (6, 3),
            ("after",): (8, 1),
        },
    )


def test_strings_of_all_kinds_are_skipped():
    lines = [
        r'a = "x # [y] = \"z\" \\" # c',
        r"b = 'C:\dir\'",
        r'c = """',
        r'line [[optic]] "quoted" ""two"" \"""',
        r"key = 1 # not a key",
        "cont \\",
        r'   inued"""""',
        r"d = '''",
        r"[fake]",
        r"x = 1 '' '''''",
        r'e = """\""""',
        r"f = 1",
        r'g = "" # empty',
        r"h = ''",
        r'i = """"""',
        'j = [ "]", \'[\', """,""", \'\'\']\'\'\' ]',
    ]
    doc = "\n".join(lines) + "\n"
    data = tomllib.loads(doc)
    assert data["c"].endswith('inued""') and data["e"] == '"'
    check(
        doc,
        {
            ("a",): (1, 1),
            ("b",): (2, 1),
            ("c",): (3, 1),
            ("d",): (8, 1),
            ("e",): (11, 1),
            ("f",): (12, 1),
            ("g",): (13, 1),
            ("h",): (14, 1),
            ("i",): (15, 1),
            ("j",): (16, 1),
            ("j", 0): (16, 7),
            ("j", 1): (16, 12),
            ("j", 2): (16, 17),
            ("j", 3): (16, 26),
        },
    )


def test_numbers_dates_and_booleans_are_skipped():
    doc = """\
dt1 = 1979-05-27T07:32:00Z
dt2 = 1979-05-27 07:32:00.999999-07:00
ld = 1979-05-27
lt = 07:32:00
n = [inf, -inf, +nan, nan]
big = 1_000_000
hx = [0xDEAD_BEEF, 0o755, 0b1101]
fl = [6.626e-34, -1_0.5e+3, 1e6]
b = [true,false]
arr = [1979-05-27 07:32:00, 07:32:00 , 1]
dt3 = 1979-05-27 07:32:00 # comment [x] y = 2
last = "ok"
"""
    check(
        doc,
        {
            ("dt1",): (1, 1),
            ("dt2",): (2, 1),
            ("ld",): (3, 1),
            ("lt",): (4, 1),
            ("n", 0): (5, 6),
            ("n", 1): (5, 11),
            ("n", 2): (5, 17),
            ("n", 3): (5, 23),
            ("big",): (6, 1),
            ("hx", 0): (7, 7),
            ("hx", 1): (7, 20),
            ("hx", 2): (7, 27),
            ("fl", 0): (8, 7),
            ("fl", 1): (8, 18),
            ("fl", 2): (8, 29),
            ("b", 0): (9, 6),
            ("b", 1): (9, 11),
            ("arr", 0): (10, 8),
            ("arr", 1): (10, 29),
            ("arr", 2): (10, 40),
            ("dt3",): (11, 1),
            ("last",): (12, 1),
        },
    )


def test_crlf_line_endings():
    doc = 'a = 1\r\n[t]\r\n  b = """x\r\ny"""\r\nc = [\r\n 1,\r\n]\r\n'
    check(doc, {("a",): (1, 1), ("t",): (2, 1), ("t", "b"): (3, 3), ("t", "c"): (5, 1), ("t", "c", 0): (6, 2)})


@pytest.mark.parametrize(
    "text", ["", "a = \"unterminated", "[a", "= 1", "a = ", "\x00", "}", "a = [1, ", "[[", "a.=1", "'''"]
)
def test_never_raises_on_odd_input(text):
    assert isinstance(key_positions(text), dict)


# -- a realistic document ------------------------------------------------------------

REALISTIC = '''\
# Bench description for the ring cavity  [fake] x = 1
title = "Ring cavity [[optic]] # not a comment"
notes = """
Multi-line notes.
[[optic]]
roc = 999   # this is inside a string
"""
version = 2

[bench]  # the table [fake]
size = [1_200.0, 600.0]   # mm
units = 'mm'
created = 2024-03-01T10:00:00Z

[[optic]]
id = "M1"
kind = "mirror"
roc = inf
mount = { size = [25.0, 12.0], tilt = { x = 0.1, y = -0.2 } }
coating = \'\'\'
HR @ 1064 nm
[fake] x = 1 \'\'\'

[[optic]]
id = "M2"
"focal length" = 150.0
mount = { size = [ 25.4, 6.35 ], "holder type" = "KM100" }

  [[optic]]   # indented on purpose
  id = 'M3'
  kind = "plane"
  tags = ["output", "wedge"]   # x = 1

[[cavity]]
name = "ring"
path = [
  "M1",                                   # start
  { id = "M2", distance = 120.0, fold = -20.0 },
  # { id = "fake", distance = 1 },
  [ "M3", { id = "M1", distance = 80.5 } ],
  "M1",
]
[cavity.options]
round_trip = true
losses = [ 1e-3, 2.5e-4, ]
'''


def _value_starts_right(value, text: str) -> bool:
    if isinstance(value, dict):
        return text.startswith("{")
    if isinstance(value, list):
        return text.startswith("[")
    if isinstance(value, bool):
        return text.startswith(str(value).lower())
    if isinstance(value, str):
        return text[:1] in ("'", '"')
    if isinstance(value, (int, float)):
        # the whole scalar token must read back as the same value
        token = re.match(r"[^,\]}#\n]*", text).group().strip()
        return tomllib.loads(f"v = {token}")["v"] == value
    return text[:1].isdigit()  # dates and times


def test_realistic_document():
    data = tomllib.loads(REALISTIC)
    positions = key_positions(REALISTIC)
    assert set(positions) == set(all_paths(data))
    for path in all_paths(data):
        text = text_at(REALISTIC, *positions[path])
        last = path[-1]
        value = _lookup(data, path)
        if text.startswith("[") and isinstance(value, (dict, list)):
            pass  # a [table] / [[array]] header, or an inline array element
        elif isinstance(last, int):
            assert _value_starts_right(value, text), (path, text[:20])
        else:
            assert text.startswith((last, f'"{last}"', f"'{last}'")), (path, text[:20])
    assert len(list(leaves(data))) > 30
    assert positions[("optic", 2)] == (29, 3)
    assert positions[("optic", 2, "tags", 1)] == (32, 21)
    assert positions[("cavity", 0, "path", 1)] == (38, 3)
    assert positions[("cavity", 0, "path", 2, 1, "distance")] == (40, 24)
    assert positions[("cavity", 0, "options")] == (43, 1)
    assert positions[("cavity", 0, "options", "losses", 1)] == (45, 18)
    assert key_positions(REALISTIC.replace("\n", "\r\n")) == positions


def _lookup(data, path):
    for key in path:
        data = data[key]
    return data


# -- property test: random data through a tiny serializer ----------------------------------

try:
    import hypothesis
    from hypothesis import strategies as st
except ImportError:  # only the property test needs it
    hypothesis = None

BARE = re.compile(r"[A-Za-z0-9_-]+\Z")
COMMENTS = ["# c", "# [fake] x = 1", '# "q" = [[x]]', "#", "# ' { ,"]


def _escape(s: str, keep: str = "\t") -> str:
    out = []
    for ch in s:
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif ch in keep:
            out.append(ch)
        elif ch == "\n":
            out.append("\\n")
        elif ord(ch) < 0x20 or ch == "\x7f":
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return "".join(out)


def _literal_ok(s: str, multiline: bool = False) -> bool:
    allowed = "\t\n" if multiline else "\t"
    return "'" not in s and all(ch in allowed or (ord(ch) >= 0x20 and ch != "\x7f") for ch in s)


def _key(k: str, rng) -> str:
    if BARE.match(k) and rng.random() < 0.7:
        return k
    if _literal_ok(k) and rng.random() < 0.5:
        return f"'{k}'"
    return f'"{_escape(k)}"'


def _string(s: str, rng) -> str:
    kind = rng.choice(["basic", "literal", "ml_basic", "ml_literal"])
    if kind == "literal" and _literal_ok(s):
        return f"'{s}'"
    if kind == "ml_literal" and _literal_ok(s, multiline=True):
        return f"'''\n{s}'''"
    if kind == "ml_basic":
        parts = []
        for ch in s:
            if ch not in " \t\n" and rng.random() < 0.2:
                parts.append("\\\n   ")  # line continuation, eats the indent
            parts.append(_escape(ch, keep="\t\n"))
        return '"""\n' + "".join(parts) + '"""'
    return f'"{_escape(s)}"'


def _scalar(v, rng) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        style = rng.randrange(5)
        if v >= 0 and style == 1:
            return f"0x{v:X}"
        if v >= 0 and style == 2:
            return f"0o{v:o}"
        if v >= 0 and style == 3:
            return f"0b{v:b}"
        return f"{v:_}" if style == 4 else str(v)
    if isinstance(v, float):
        if math.isinf(v):
            return "-inf" if v < 0 else rng.choice(["inf", "+inf"])
        return repr(v)
    if isinstance(v, datetime.datetime):
        return v.isoformat(sep=rng.choice("T "))
    if isinstance(v, (datetime.date, datetime.time)):
        return v.isoformat()
    return _string(v, rng)


class _Dumper:
    """Serialise a dict to TOML in randomly chosen styles, noting what text each path starts with."""

    def __init__(self, rng):
        self.rng = rng
        self.lines: list[str] = []
        self.expected: dict[tuple, str] = {}  # path -> text expected at its position

    def value(self, v, path) -> str:
        rng = self.rng
        if isinstance(v, dict):
            items = [self.key_value(k, x, path, ", ") for k, x in v.items()]
            return "{" + " " * rng.randrange(2) + ", ".join(items) + " }"
        if isinstance(v, list):
            out = "[" + rng.choice(["", " ", "\n  ", f"  {rng.choice(COMMENTS)}\n  "])
            for i, x in enumerate(v):
                text = self.value(x, path + (i,))
                self.expected[path + (i,)] = text[0] if isinstance(x, (dict, list)) else text
                sep = rng.choice([", ", ",", ",\n  ", f", {rng.choice(COMMENTS)}\n  ", " ,"])
                out += text + (sep if i < len(v) - 1 or rng.random() < 0.3 else "")
            return out + rng.choice(["", " ", "\n"]) + "]"
        return _scalar(v, self.rng)

    def key_value(self, k, v, table, joiner, keys=()) -> str:
        """``k = v``, or ``k.sub = ...`` entries joined by *joiner* for a dict *v*."""
        rng = self.rng
        keys = keys + (_key(k, rng),)
        path = table + (k,)
        if isinstance(v, dict) and v and rng.random() < 0.3:
            return joiner.join(self.key_value(sk, sv, path, joiner, keys) for sk, sv in v.items())
        sep = rng.choice([".", " . ", ". "])
        start = len(path) - len(keys)
        for n in range(1, len(keys)):  # implied tables: first mention wins
            self.expected.setdefault(path[: start + n], sep.join(keys[:n]))
        self.expected[path] = sep.join(keys)
        return f"{sep.join(keys)}{' ' * rng.randrange(2)}={' ' * rng.randrange(1, 3)}{self.value(v, path)}"

    def table(self, d: dict, path: tuple, header: list, all_tables=False) -> None:
        rng = self.rng
        deferred = []
        for k, v in d.items():
            if isinstance(v, dict) and (all_tables or rng.random() < 0.4):
                deferred.append((k, v, False))
            elif isinstance(v, list) and v and all(isinstance(e, dict) for e in v) and rng.random() < 0.5:
                deferred.append((k, v, True))
            else:
                line = self.key_value(k, v, path, "\n")
                self.lines.append(line + rng.choice(["", "", f"  {rng.choice(COMMENTS)}"]))
                if rng.random() < 0.1:
                    self.lines.append(rng.choice(COMMENTS + [""]))
        for k, v, is_array in deferred:
            sub = path + (k,)
            names = header + [_key(k, rng)]
            dotted = rng.choice([".", " . "]).join(names)
            if is_array:
                self.expected[sub] = "[["
                for i, element in enumerate(v):
                    self.expected[sub + (i,)] = "[["
                    self.lines.append(f"{rng.choice(['', '  '])}[[{rng.choice(['', ' '])}{dotted}]]")
                    self.table(element, sub + (i,), names)
            else:
                self.expected[sub] = "["
                implicit = v and all(isinstance(x, dict) for x in v.values()) and rng.random() < 0.5
                if not implicit:
                    self.lines.append(f"[{rng.choice(['', ' '])}{dotted}]")
                self.table(v, sub, names, all_tables=implicit)


def dump(data: dict, rng) -> tuple[str, dict]:
    dumper = _Dumper(rng)
    dumper.table(data, (), [])
    return "\n".join(dumper.lines) + "\n", dumper.expected


if hypothesis is None:

    def test_random_documents():
        pytest.importorskip("hypothesis")

else:
    keys = st.one_of(st.from_regex(r"[A-Za-z0-9_-]{1,6}", fullmatch=True), st.text(max_size=5))
    scalars = st.one_of(
        st.text(max_size=8),
        st.text(alphabet=" \t\n\"'\\#[]{}=,.", max_size=8),
        st.integers(min_value=-(2**63), max_value=2**63 - 1),
        st.floats(allow_nan=False),
        st.booleans(),
        st.datetimes(),
        st.dates(),
        st.times(),
    )
    values = st.recursive(
        scalars,
        lambda children: st.lists(children, max_size=4) | st.dictionaries(keys, children, max_size=4),
        max_leaves=20,
    )

    @hypothesis.settings(max_examples=300, deadline=None)
    @hypothesis.given(data=st.dictionaries(keys, values, max_size=6), rng=st.randoms(use_true_random=False))
    def test_random_documents(data, rng):
        doc, expected = dump(data, rng)
        assert tomllib.loads(doc) == data  # the serializer itself is right
        positions = key_positions(doc)
        assert set(positions) == set(all_paths(data)) == set(expected)
        for path, token in expected.items():
            assert text_at(doc, *positions[path]).startswith(token), (path, token)
        assert key_positions(doc.replace("\n", "\r\n")) == positions


# -- the one-match fast paths agree with the step-by-step scan -----------------------

FAST_PATHS = ("_SIMPLE_KEY_VALUE", "_BLANK_KEY_VALUE", "_INLINE_KEY_VALUE", "_ARRAY_ITEM")


def test_a_comment_that_looks_like_a_key_or_a_value_is_never_read_as_one():
    # a failed one-match try must not backtrack into the comment and find "a = 1" or "5" there
    doc = "# a = 1\n[t]\nx = [  # 5 items\n  { y = 2 },  # 6\n  'lit',\n]\nz = [ # 7\n]\n"
    check(doc, {("t",): (2, 1), ("t", "x"): (3, 1), ("t", "x", 0): (4, 3), ("t", "x", 0, "y"): (4, 5),
                ("t", "x", 1): (5, 3), ("t", "z"): (7, 1)})


def test_long_runs_of_blanks_before_what_the_fast_paths_do_not_read():
    # blanks before a header, a quoted key and a nested array: each must be read in one
    # pass (a regular expression that split the run many ways would not finish)
    pad = " \n" * 20000 + "# c\n" * 3 + "\t" * 20000
    doc = f"a = 1\n{pad}[t]\n{pad}'q' = [{pad}[1, {pad}2]{pad}]\n"
    positions = check(doc, {("a",): (1, 1)})
    assert positions[("t", "q", 0, 1)][0] == positions[("t", "q", 0, 0)][0] + pad.count("\n")


@pytest.mark.parametrize("name", sorted(p.name for p in (Path(__file__).resolve().parents[1] / "layouts").rglob("*.toml"))
                         + ["hostile"])
def test_the_fast_paths_agree_with_the_step_by_step_scan(name, monkeypatch):
    import benchcheck.tomlpos as tomlpos
    root = Path(__file__).resolve().parents[1] / "layouts"
    if name == "hostile":
        text = ("x = [" + "[1.5, 2], " * 50 + "]\n" + "y = " + "{ a = " * 10 + '"s"' + " }" * 10 + "\n"
                + 'p = [{ id = "M1", distance = 5.0 }, "M2", # c\n  { id = "M3" },\n]\n'
                + "[[o]]\nk = 1 # c\nl = [ 1 , # two\n 2 ]\n")
    else:
        text = next(root.rglob(name)).read_text(encoding="utf-8")
    fast = key_positions(text)
    for pattern in FAST_PATHS:
        monkeypatch.setattr(tomlpos, pattern, re.compile(r"(?!)"))   # never matches
    slow = key_positions(text)
    assert fast == slow
    assert set(fast) == set(all_paths(tomllib.loads(text)))
