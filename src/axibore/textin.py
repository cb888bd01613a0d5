"""Reading the user's text inputs (case files, profile CSVs): a regular file of bounded size,
decoded as UTF-8, or an InputError saying why not. Below both the case and the geometry."""

from __future__ import annotations

import stat
from pathlib import Path


class InputError(ValueError):
    """An input file that cannot be read as text (names the file and why)."""


def read_input_text(path: str | Path, what: str, max_bytes: int) -> str:
    """Text of a regular file of at most ``max_bytes``, decoded as UTF-8, or InputError saying why not."""
    path = Path(path)
    try:
        st = path.stat()
    except OSError as exc:
        raise InputError(f"cannot read the {what} ({exc.strerror})") from None
    if not stat.S_ISREG(st.st_mode):
        raise InputError(f"the {what} is not a regular file (a device, pipe or folder cannot be read as one)")
    if st.st_size > max_bytes:
        raise InputError(f"the {what} is {st.st_size / 1e6:.3g} MB, more than the {max_bytes / 1e6:.3g} MB a {what} may have")
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the {what} ({exc.strerror})") from None
    try:
        return raw.decode("utf-8").removeprefix("\ufeff")  # a byte-order mark some editors write is not text
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError(f"the {what} is not UTF-8 text (byte 0x{raw[exc.start]:02x} on line {line})") from None
