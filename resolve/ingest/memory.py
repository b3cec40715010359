"""An opt-in memory setting for big runs: the C library keeps freed memory for reuse.

Ingest and normalise build and drop many column-sized numpy buffers (megabytes each at a
million records, from pandas and numpy). By default the C library (glibc) gives large
freed blocks back to the operating system at once, and the next buffer faults the pages in
again, zero-filled by the kernel; on a small virtual machine that kernel time was a third of
the whole run (measured with bench/normalise_speed.py). `keep_freed_memory` asks glibc to
serve blocks up to 32 MiB from its heap and never to trim the heap, so freed memory is
reused. The process keeps its peak size until it exits, which suits a batch run, not a
long-lived server; no result changes. (Arrow's own allocator could be told the same, but in
our measurements that raised the peak by about 0.2 GB for little gain, so it is left alone.)

This is a process-wide setting, so the library never calls it on its own: the entry point
of a run (the command line, a benchmark) decides.
"""

from __future__ import annotations

import ctypes
import ctypes.util

# glibc mallopt parameters (malloc.h).
_M_TRIM_THRESHOLD = -1
_M_TOP_PAD = -2
_M_MMAP_THRESHOLD = -3
_MMAP_THRESHOLD_MAX = 32 * 1024 * 1024  # the largest glibc accepts on 64-bit systems
_TOP_PAD = 64 * 1024 * 1024
_TRIM_THRESHOLD = 2**31 - 1


def keep_freed_memory() -> bool:
    """Make the C library reuse freed memory; False where it is not glibc (nothing changes)."""
    name = ctypes.util.find_library("c")
    if not name:
        return False
    try:
        mallopt = ctypes.CDLL(name).mallopt
    except (OSError, AttributeError):  # not glibc (musl, macOS): nothing to set
        return False
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    mallopt.restype = ctypes.c_int
    done = [mallopt(_M_MMAP_THRESHOLD, _MMAP_THRESHOLD_MAX),
            mallopt(_M_TRIM_THRESHOLD, _TRIM_THRESHOLD),
            mallopt(_M_TOP_PAD, _TOP_PAD)]
    return all(result == 1 for result in done)
