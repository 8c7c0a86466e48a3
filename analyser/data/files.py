"""Reading an input file once: its text and the SHA-256 of its bytes.

Hashing the very bytes that are parsed means the recorded hash always
describes the data the analysis used.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from pathlib import Path

from .problems import Problems


@dataclass(frozen=True)
class InputFile:
    path: Path
    display: str    # how problems and row sources name the file
    sha256: str
    text: str


def read_input(path: Path, display: str, problems: Problems) -> InputFile | None:
    """The file's text (UTF-8, an optional byte-order mark dropped), or None after
    recording why it cannot be read."""
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        problems.add(display, "file not found")
        return None
    except IsADirectoryError:
        problems.add(display, "is a folder, not a file")
        return None
    except OSError as err:
        problems.add(display, f"cannot be read: {err.strerror or err}")
        return None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        line = raw[:err.start].count(b"\n") + 1
        problems.add(display, "is not UTF-8 text", line)
        return None
    return InputFile(path, display, hashlib.sha256(raw).hexdigest(), text)
