"""Keep the memory of large temporaries in the process between batches of trials.

Notes
-----
A batch of trials makes and frees arrays of hundreds of kilobytes to tens of megabytes
hundreds of times (each stage's matrices, their solutions, every figure's intermediates).
glibc's allocator hands memory above its mapping threshold straight back to the system
(and, in the worker threads' arenas, keeps that threshold low), and trims the top of its
heap once the free space there passes another threshold; every array made after that is
fresh memory the kernel must fault in and zero page by page, a cost of the same order as
the arithmetic done on it. Fixing the mapping threshold at glibc's largest (32 MiB on a
64-bit system), the trim threshold above a batch's working set, and growing the heap in
large steps lets the next batch reuse the same pages (glibc's ``mallopt``:
M_MMAP_THRESHOLD, M_TRIM_THRESHOLD and M_TOP_PAD, as the mallopt(3) manual page describes
them). Elsewhere (another C library, another system) this does nothing. The memory is not
leaked: it stays with the process until it exits.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import sys

# mallopt(3) parameter numbers (glibc's malloc.h).
M_TRIM_THRESHOLD = -1
M_TOP_PAD = -2
M_MMAP_THRESHOLD = -3
#: Free memory at the top of the heap kept rather than trimmed, bytes.
TRIM_THRESHOLD = 256 << 20
#: Extra memory asked of the system each time the heap grows, bytes.
TOP_PAD = 64 << 20
#: Blocks from this size up are mapped apart (glibc takes no larger value on 64 bits).
MMAP_THRESHOLD = 32 << 20

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
    _kept = all(
        mallopt(parameter, value)
        for parameter, value in (
            (M_MMAP_THRESHOLD, MMAP_THRESHOLD),
            (M_TRIM_THRESHOLD, TRIM_THRESHOLD),
            (M_TOP_PAD, TOP_PAD),
        )
    )
    return _kept
