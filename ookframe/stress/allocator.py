"""Keep freed memory inside a worker process (glibc only).

A stress chunk allocates numpy temporaries of a few hundred kB to a few MB, frees them and
allocates them again for the next chunk. glibc returns such blocks to the operating system
(``mmap``/``munmap``, heap trimming), and each new chunk page-faults them back in: on the
build machine about 35,000-45,000 minor page faults per 2,000 transmissions of gate_sensor
or hive_scale and a fifth to a third of the run time. :func:`keep_freed_memory` raises
glibc's mmap threshold to its maximum and turns heap trimming off, so the blocks are
reused; the peak resident size stays the same (the same blocks are reused, not added to).

ookframe calls it in its own stress worker processes and in the ``ookframe`` command-line
process; a library caller's process is left alone unless it calls the function itself.
On a C library without ``mallopt`` (musl, macOS, Windows) it does nothing.
"""

from __future__ import annotations

import ctypes

#: glibc's mallopt parameter numbers (<malloc.h>)
_M_TRIM_THRESHOLD = -1
_M_TOP_PAD = -2
_M_MMAP_THRESHOLD = -3
#: glibc caps the mmap threshold at HEAP_MAX_SIZE / 2: 32 MiB on 64-bit systems
_MMAP_THRESHOLD_BYTES = 32 * 1024 * 1024
_TRIM_THRESHOLD_BYTES = 1 << 30
_TOP_PAD_BYTES = 64 * 1024 * 1024


def keep_freed_memory() -> bool:
    """Ask the C allocator to keep freed blocks for reuse; return True where it took."""
    try:  # the C library already loaded into this process (no library search at start-up)
        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError, TypeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return all([mallopt(_M_MMAP_THRESHOLD, _MMAP_THRESHOLD_BYTES) == 1,
                mallopt(_M_TRIM_THRESHOLD, _TRIM_THRESHOLD_BYTES) == 1,
                mallopt(_M_TOP_PAD, _TOP_PAD_BYTES) == 1])
