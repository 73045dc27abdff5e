"""Reading input files safely: regular files only, bounded size, data never control text.

Every reader of user-given files (element sets, OEM, CDM, configuration, digests) goes
through here, so a FIFO, a device (/dev/zero, /dev/urandom) or a symlink to one is refused
at once instead of hanging or filling memory, and terminal control characters in names or
ids never reach a terminal, a report or a CDM.
"""

from __future__ import annotations

import os
import stat

from .environment import env_float
from .errors import ParseError, ScreenerError

ENV_MAX_INPUT_MB = "SCREENER_MAX_INPUT_MB"
DEFAULT_MAX_INPUT_MB = 1024.0      # one input file; 200,000 TLEs are about 33 MB

# C0 controls but TAB, LF and CR; DEL; the C1 block; and the Unicode line and paragraph
# separators (str.splitlines would split records on them, shifting reported line numbers).
# Each becomes "?", one character for one, so columns and line numbers stay as in the file.
_CONTROL = {c: "?" for c in (*range(0x00, 0x09), 0x0B, 0x0C, *range(0x0E, 0x20), 0x7F,
                             *range(0x80, 0xA0), 0x2028, 0x2029)}


def max_input_bytes() -> int:
    try:
        mb = env_float(ENV_MAX_INPUT_MB, DEFAULT_MAX_INPUT_MB, 0.001, 1e6, "a size in MB")
    except ScreenerError as exc:
        raise ParseError(str(exc), "<environment>") from None
    return int(mb * 1024 * 1024)


def clean_text(text: str) -> str:
    """Replace control characters (see _CONTROL) by '?'."""
    return text.translate(_CONTROL)


def open_regular(path: str, what: str = "input"):
    """A binary file object for `path`, which must be (or link to) a regular file within the
    size limit.  Opened non-blocking first so that a FIFO cannot hang the check."""
    try:
        fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_CLOEXEC", 0))
    except OSError as exc:
        raise ParseError(f"cannot read {what} file: {exc.strerror}", path) from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            kind = ("a folder" if stat.S_ISDIR(st.st_mode) else "a FIFO" if stat.S_ISFIFO(st.st_mode)
                    else "a device" if stat.S_ISCHR(st.st_mode) or stat.S_ISBLK(st.st_mode)
                    else "a socket" if stat.S_ISSOCK(st.st_mode) else "not a regular file")
            raise ParseError(f"{what} must be a regular file; this is {kind}", path)
        cap = max_input_bytes()
        if st.st_size > cap:
            raise ParseError(f"{what} file is {st.st_size / 1048576:.0f} MB, above the "
                             f"{cap / 1048576:.0f} MB limit ({ENV_MAX_INPUT_MB} sets it)", path)
        os.set_blocking(fd, True)
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def read_bytes(path: str, what: str = "input") -> bytes:
    cap = max_input_bytes()
    with open_regular(path, what) as fh:
        data = fh.read(cap + 1)
    if len(data) > cap:       # grew while being read
        raise ParseError(f"{what} file is above the {cap / 1048576:.0f} MB limit", path)
    return data


def read_text(path: str, what: str = "input") -> str:
    """UTF-8 (undecodable bytes replaced), control characters replaced by '?'."""
    return clean_text(read_bytes(path, what).decode("utf-8", errors="replace"))


MAX_NAME_CHARS = 80


def clean_name(text) -> str:
    """A name or id as one line of plain text: control characters replaced, tabs and line
    breaks folded to spaces, at most MAX_NAME_CHARS characters."""
    return " ".join(clean_text(str(text)).split())[:MAX_NAME_CHARS]
