"""Keep what a user or a plugin wrote from steering the terminal.

Bench names, ids, waiver fields, file names and plugin messages are echoed in text output
and error messages.  A newline in one would split a finding over two lines (and fake a
second one); an escape sequence could recolour, hide or rewrite what the terminal shows.
``one_line`` writes every such character as a visible escape, so one record stays on one
line.  JSON and SARIF need nothing of this: their encoders escape control characters.
"""

from __future__ import annotations

import re

#: C0 and C1 control characters, DEL, the Unicode line and paragraph separators, and the
#: bidirectional overrides and isolates that reorder what a terminal shows.
_UNSAFE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t", "\x1b": "\\e"}


def _escape(match: re.Match) -> str:
    ch = match.group()
    return _NAMED.get(ch) or (f"\\x{ord(ch):02x}" if ord(ch) < 0x100 else f"\\u{ord(ch):04x}")


def one_line(text: str) -> str:
    """``text`` with every control character written as a visible escape (\\n, \\e, \\x07)."""
    return _UNSAFE.sub(_escape, str(text))
