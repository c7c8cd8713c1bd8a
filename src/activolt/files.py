"""Writing output files atomically: a temporary file in the same folder, then a rename.

A reader never sees a half-written file, and a failure leaves the previous file (or none).
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_atomically(path: str | Path, content: bytes | str) -> Path:
    """Write ``content`` to ``path`` through a temporary file and :func:`os.replace`.

    Parameters
    ----------
    path : str or pathlib.Path
        Destination; its folder must exist.
    content : bytes or str
        Bytes, or text written as UTF-8.

    Returns
    -------
    pathlib.Path
        The destination path.
    """
    path = Path(path)
    data = content.encode("utf-8") if isinstance(content, str) else content
    handle, temporary = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temporary, 0o644)
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return path
