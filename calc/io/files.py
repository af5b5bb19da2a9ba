"""Reading an input file: a regular file, at most a size limit, with a clear error for anything else.

The one reader of the run file (:mod:`calc.io.runfile`) and the thermometer log
(:mod:`calc.io.readings`): both refuse a missing file, a directory or device, an unreadable path and a
file over its limit (``calc/limits.py``) with an :class:`~calc.errors.InputError` naming the file.
"""

from __future__ import annotations

import os
import stat

from calc import limits
from calc.errors import InputError

__all__ = ["read_limited"]


def read_limited(path: str | os.PathLike[str], *, limit: str, what: str, expected: str, source: str) -> bytes:
    """Return the bytes of the regular file at ``path``; ``limit`` names its size limit, ``what`` the
    file in the limit's message, ``expected`` what it should be, and ``source`` the name for messages."""
    cap = int(limits.get(limit))
    try:
        with open(path, "rb") as handle:
            if not stat.S_ISREG(os.fstat(handle.fileno()).st_mode):
                raise InputError(f"is not a regular file; expected {expected}", source=source)
            data = handle.read(cap + 1)
    except FileNotFoundError:
        raise InputError(f"file not found; expected {expected}", source=source) from None
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc}); expected {expected}", source=source) from None
    except ValueError:  # a NUL byte in the path
        raise InputError("is not a usable path (it contains a NUL byte)", source=limits.shorten(repr(source))) from None
    limits.require_size(len(data), limit, what=what, source=source)
    return data
