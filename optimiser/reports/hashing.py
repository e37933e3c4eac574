"""SHA-256 of an input file, so that a report names exactly the inputs it was made from
(FIPS 180-4, via Python's hashlib)."""

from __future__ import annotations

import hashlib
from pathlib import Path


def file_sha256(path: Path | None) -> str:
    """SHA-256 of a file's bytes in hex, or a dash when there is no file to read."""
    if path is None or not Path(path).is_file():
        return "–"
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()
