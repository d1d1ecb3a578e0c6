"""Free text made safe for a terminal, a chart note and a clipboard.

A case file is hostile input: its free text (``label``, ``comedications``,
``target.indication``, a level's ``reason``, an unknown key's name) may hold
escape sequences that clear a screen, set a window title, paint over the app
or fill the clipboard (OSC 52), or bidirectional controls that show text in
another order than it is stored. Every text that leaves the program passes
:func:`neutralise` (one line) or :func:`neutralise_block` (keeps line breaks),
which replace each such character by a visible escape and keep everything
else as it was:

* C0 controls, DEL and C1 controls (ESC, CSI, OSC, BEL, NUL, CR...) -> ``\\x1b``
  (tab too, and the line break in one-line text);
* bidirectional embeddings, overrides, isolates and marks, the line and
  paragraph separators, and lone surrogates -> ``<U+202E>``.

The stored case is never changed: only what is shown, written or copied.
"""

from __future__ import annotations

import re

#: Bidirectional formatting characters (Unicode UAX #9): marks, embeddings,
#: overrides, isolates; plus the line/paragraph separators some terminals break on.
BIDI = "\u061c\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u2028\u2029"

_ONE_LINE = re.compile("[\x00-\x1f\x7f-\x9f" + BIDI + "\ud800-\udfff]")
_BLOCK = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f" + BIDI + "\ud800-\udfff]")


def _escape(match: re.Match[str]) -> str:
    code = ord(match.group(0))
    return f"\\x{code:02x}" if code < 0x100 else f"<U+{code:04X}>"


def neutralise(text: object) -> str:
    """One line of free text with every control shown as a visible escape (line breaks too)."""
    return _ONE_LINE.sub(_escape, str(text))


def neutralise_block(text: object) -> str:
    """Like :func:`neutralise` but line breaks (``\\n``) are kept: for a whole note or summary."""
    return _BLOCK.sub(_escape, str(text))


def is_clean(text: str, keep_newlines: bool = True) -> bool:
    """True when ``text`` holds no character :func:`neutralise` would replace."""
    return not (_BLOCK if keep_newlines else _ONE_LINE).search(text)


_JSON_UNSAFE = re.compile("[\x7f-\x9f" + BIDI + "\ud800-\udfff]")


def json_safe(text: str) -> str:
    """JSON text (as ``json.dumps`` wrote it) with C1, bidi and surrogate characters as ``\\uXXXX``.

    ``json.dumps(..., ensure_ascii=False)`` already escapes C0 controls; the
    result means the same to any JSON reader and shows nothing a terminal obeys.
    """
    return _JSON_UNSAFE.sub(lambda m: f"\\u{ord(m.group(0)):04x}", text)
