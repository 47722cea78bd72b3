"""Source files as the reader sees them: read safely (regular files of bounded size only), and
cut into lines at `\\n` only, exactly where the grammar cuts them.

`str.splitlines()` also breaks at a lone `\\r`, `\\x0b`, `\\x0c`, `\\x1c`-`\\x1e`, `\\x85`, U+2028 and
U+2029, which the grammar does not: a comment holding U+2028 once moved every later line by one,
so messages named the wrong line and a `record` read the text of another. Here lines end at
`\\n` (a `\\r` just before it belongs to the line end); those other characters may stand in a
comment, where they are shown as a space, and anywhere else they are refused where they are.
"""
from __future__ import annotations

import errno
import os
import re
import stat

from netgen.model.design import Loc
from netgen.model.errors import NetgenError

MAX_FILE_BYTES = 64 * 2**20  # one .etn file; a 270,000-line mesh is about 7 MB

# What str.splitlines() breaks at besides "\n" and "\r\n".
ODD_BREAKS = "\r\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029"
_ODD = re.compile(r"\r(?!\n)|[\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029]")
_ODD_CHAR = re.compile(f"[{ODD_BREAKS}]")
_ODD_OR_COMMENT = re.compile(f'"[^"\\n]*"|#|[{ODD_BREAKS}]')


def _has_odd(text: str) -> bool:
    """`_ODD.search(text) is not None`, quickly in the common case: a substring test per
    character is a fast scan in C, where the pattern's search tried every place in turn (35 ms
    for a mesh of 30,000 lines)."""
    return any(c in text for c in ODD_BREAKS) and _ODD.search(text) is not None


_NAMES = {
    "\r": r"a carriage return (\r) that is not followed by a newline",
    "\x0b": r"a vertical tab (\x0b)",
    "\x0c": r"a form feed (\x0c)",
    "\x1c": r"a file separator (\x1c)",
    "\x1d": r"a group separator (\x1d)",
    "\x1e": r"a record separator (\x1e)",
    "\x85": "a next-line character (U+0085)",
    "\u2028": "a line separator (U+2028)",
    "\u2029": "a paragraph separator (U+2029)",
}
_SHOWN = str.maketrans({c: " " for c in ODD_BREAKS})


class Unreadable(Exception):
    """A file that cannot or may not be read: `message` says why (callers add the place)."""

    def __init__(self, message: str, hint: str | None = None):
        super().__init__(message)
        self.message, self.hint = message, hint


_KINDS = ((stat.S_ISFIFO, "a named pipe"), (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
          (stat.S_ISSOCK, "a socket"))


def read_file(path, shown: str) -> bytes:
    """The bytes of a regular file of at most MAX_FILE_BYTES. Anything else (a directory, a
    named pipe that would block, a device such as /dev/zero that never ends, a file too large)
    raises Unreadable, with `shown` (the name as the user wrote it) in the message."""
    try:
        st = os.stat(path)  # before opening: opening a pipe or a device can block or act
        if stat.S_ISDIR(st.st_mode):
            raise Unreadable(f"cannot read `{shown}`: {os.strerror(errno.EISDIR)}")
        _regular(st, shown)
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    except OSError as e:
        raise Unreadable(f"cannot read `{shown}`: {e.strerror or e}") from None
    try:
        _regular(os.fstat(fd), shown)  # the same file still: it may have been replaced meanwhile
        with os.fdopen(fd, "rb", closefd=False) as f:
            data = f.read(MAX_FILE_BYTES + 1)
    except OSError as e:
        raise Unreadable(f"cannot read `{shown}`: {e.strerror or e}") from None
    finally:
        os.close(fd)
    if len(data) > MAX_FILE_BYTES:
        raise _too_large(shown, len(data))
    return data


def decoded(raw: bytes, file: str, message: str, hint: str) -> str:
    """`raw` as UTF-8 text; otherwise a NetgenError with `message`, at the first bad byte."""
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as e:
        start = raw.rfind(b"\n", 0, e.start) + 1
        end = raw.find(b"\n", e.start) % (len(raw) + 1)
        loc = Loc(file, raw[: e.start].count(b"\n") + 1, e.start - start + 1,
                  raw[start:end].decode("utf-8", "replace"))
        raise NetgenError(message, loc, hint) from None


def _regular(st: os.stat_result, shown: str) -> None:
    if not stat.S_ISREG(st.st_mode):
        what = next((name for test, name in _KINDS if test(st.st_mode)), "not a file")
        raise Unreadable(f"cannot read `{shown}`: it is {what}, not a regular file",
                         "netgen reads descriptions from regular .etn files only")
    if st.st_size > MAX_FILE_BYTES:
        raise _too_large(shown, st.st_size)


def _too_large(shown: str, size: int) -> Unreadable:
    return Unreadable(f"cannot read `{shown}`: it holds {size / 2**20:.1f} MB, and netgen reads files of at most "
                      f"{MAX_FILE_BYTES // 2**20} MB",
                      "split the description into files joined with `include`, or describe a large grid "
                      "with `plate`")


def split_lines(text: str) -> list[str]:
    """The lines of a text as the grammar counts them: cut at `\\n` only, a `\\r` before it
    dropped, no empty line after a final `\\n`. Odd line-break characters (in comments: the
    others are refused by `check_breaks`) are shown as spaces, so an echoed line stays one
    line on a terminal and its caret stays in place."""
    lines = text.split("\n")
    if lines and lines[-1] == "" and len(lines) > 1:
        lines.pop()
    if "\r" in text:
        lines = [ln[:-1] if ln.endswith("\r") else ln for ln in lines]
    if _has_odd(text):
        lines = [ln.translate(_SHOWN) for ln in lines]
    return lines


def check_breaks(text: str, file: str, lines: list[str]) -> None:
    """Refuse a line-break character other than `\\n` (or `\\r\\n`) outside a comment, where it
    stands. `lines` are those of `split_lines(text)`, to echo the line."""
    if not _has_odd(text):  # the common case
        return
    pieces = text.split("\n")
    for i, raw in enumerate(pieces):
        if i < len(pieces) - 1 and raw.endswith("\r"):
            raw = raw[:-1]  # the line end \r\n
        for m in _ODD_OR_COMMENT.finditer(raw):
            s = m.group()
            if s == "#":
                break  # the rest of the line is a comment
            col = m.start() + 1
            if s[0] == '"':  # a quoted title: the grammar takes these characters into it
                bad = _ODD_CHAR.search(s)
                if bad is None:
                    continue
                col, s = col + bad.start(), bad.group()
            raise NetgenError(f"a line break other than a newline: {_NAMES[s]}",
                              Loc(file, i + 1, col, lines[i] if i < len(lines) else ""),
                              r"lines end at \n (or \r\n) only; remove the character or put a newline there "
                              "(in a comment it may stay)")
