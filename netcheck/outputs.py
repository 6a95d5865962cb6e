"""The one place output files are written: ``-`` is stdout, files are replaced atomically."""

from __future__ import annotations

import contextlib
import io
import os
import sys
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import IO

from .exceptions import RenderError

__all__ = ["open_output"]


@contextlib.contextmanager
def open_output(path: str | os.PathLike, binary: bool = False) -> Iterator[IO]:
    """Yield a stream for ``path``; on success the file appears complete under its name.

    ``-`` means standard output. Otherwise the data goes to a temporary file in the
    same directory (created if needed), which is renamed over ``path`` only when the
    block finishes without error; on error it is removed, so a half-written report
    never sits under the final name and an existing file is left as it was.

    Raises
    ------
    RenderError
        When the directory or file cannot be written.
    """
    if str(path) == "-":
        if binary:
            yield sys.stdout.buffer
            sys.stdout.buffer.flush()
        else:
            yield sys.stdout
            sys.stdout.flush()
        return
    target = Path(path)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part",
                                   dir=target.parent)
    except OSError as err:
        raise RenderError(f"cannot write {target}: {err.strerror or err}",
                          path=str(target)) from None
    try:
        with os.fdopen(fd, "wb" if binary else "w", **({} if binary else
                                                       {"encoding": "utf-8",
                                                        "newline": "\n"})) as stream:
            yield stream
        os.chmod(tmp, 0o644)
        os.replace(tmp, target)
    except BaseException as err:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(err, OSError):
            raise RenderError(f"cannot write {target}: {err.strerror or err}",
                              path=str(target)) from None
        raise


def text_buffer() -> io.StringIO:
    """A text buffer for renderers tested without files."""
    return io.StringIO()
