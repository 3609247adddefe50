"""Keep the memory of large temporaries in the process between batches of trials.

Notes
-----
A batch of trials makes and frees arrays of tens of megabytes hundreds of times (each
stage's matrices, their solutions, every figure's intermediates). glibc's allocator hands
memory above a threshold straight back to the system, and trims the top of its heap once
the free space there passes another; every array made after that is fresh memory the
kernel must fault in and zero page by page, a cost of the same order as the arithmetic
done on it. Fixing the trim threshold high (which also stops glibc from moving its
thresholds itself) and growing the heap in large steps lets the next batch reuse the same
pages (glibc's ``mallopt``, M_TRIM_THRESHOLD and M_TOP_PAD, as the malloc(3) and
mallopt(3) manual pages describe them). Elsewhere (another C library, another system)
this does nothing. The memory is not leaked: it stays with the process until it exits.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import sys

# mallopt(3) parameter numbers (glibc's malloc.h).
M_TRIM_THRESHOLD = -1
M_TOP_PAD = -2
#: Free memory at the top of the heap kept rather than trimmed, bytes.
TRIM_THRESHOLD = 1 << 30
#: Extra memory asked of the system each time the heap grows, bytes.
TOP_PAD = 1 << 28

_kept = False


def keep_freed_memory() -> bool:
    """Ask glibc to keep freed memory for reuse (once per process); False where the C
    library is not glibc or refuses."""
    global _kept
    if _kept:
        return True
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    _kept = bool(mallopt(M_TRIM_THRESHOLD, TRIM_THRESHOLD)) and bool(mallopt(M_TOP_PAD, TOP_PAD))
    return _kept
