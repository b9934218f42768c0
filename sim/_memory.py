"""Keep freed working memory in the process instead of handing it back.

The kernels allocate and free many short-lived arrays of a chunk's size
(256 kB for 32,768 drops). glibc's ``malloc`` serves blocks above its mmap
threshold (128 kB at start, adjusted on the fly) with fresh ``mmap`` pages
and trims the heap top back to the kernel above its trim threshold, so the
same memory is faulted in again and again: measured here, the page faults
cost about a third of the kernel's time (``benchmarks/kernel_split.py``
with and without ``MALLOC_MMAP_THRESHOLD_``). Raising both thresholds once
per process makes those blocks come from the heap and stay there.

Effects outside the kernels: the process keeps up to
:data:`TRIM_THRESHOLD` of freed heap for reuse instead of returning it at
once; blocks up to :data:`MMAP_THRESHOLD` come from the heap. Elsewhere
than glibc (macOS, musl, Windows) nothing is changed. An explicit
``MALLOC_MMAP_THRESHOLD_`` in the environment is respected (both
thresholds are then left as the environment says). A
``MALLOC_TRIM_THRESHOLD_`` alone is not: Dask's nanny puts a 64 kB one into
every worker it starts (``distributed.nanny.pre-spawn-environ``), made for
long-lived servers, which makes the kernel about 3.4x slower per task; on
workers of a cluster this package does not start, the kernel sets both
thresholds itself. A cluster it starts gets both in its workers'
environment (:func:`allocator_environment`).
"""
from __future__ import annotations

import ctypes
import ctypes.util
import os
import sys

#: Blocks up to this size come from the heap (glibc's ceiling on 64-bit). [bytes]
MMAP_THRESHOLD = 32 * 1024 * 1024
#: Freed heap kept for reuse before any is handed back. [bytes]
TRIM_THRESHOLD = 128 * 1024 * 1024

_M_TRIM_THRESHOLD = -1  # glibc <malloc.h>
_M_MMAP_THRESHOLD = -3

_done = False


def keep_freed_memory() -> bool:
    """Raise glibc's mmap and trim thresholds once per process.

    Returns True when the thresholds were set (now or before).
    """
    global _done
    if _done:
        return True
    _done = True
    if not sys.platform.startswith("linux"):
        return False
    if "MALLOC_MMAP_THRESHOLD_" in os.environ:
        return True
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        mallopt = libc.mallopt
    except (OSError, AttributeError):  # not glibc
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return bool(mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD)) and bool(mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD))


def allocator_environment() -> dict:
    """The same setting as environment variables, for worker processes
    started by others (glibc reads them when a process starts)."""
    return {"MALLOC_MMAP_THRESHOLD_": str(MMAP_THRESHOLD), "MALLOC_TRIM_THRESHOLD_": str(TRIM_THRESHOLD)}
