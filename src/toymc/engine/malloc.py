"""Private: keep freed block-sized buffers in the heap (glibc only).

Every block allocates its output arrays afresh (tens of MB).  glibc hands
allocations this large to mmap and gives them back on free, so the next block
pays a page fault for every 4 kB page it writes: measured here, about 3500
faults and a third of the generation time per block.  Raising the mmap and
trim thresholds keeps the freed memory in the heap, where the next block
reuses it; the peak memory does not change (the same buffers are reused), it
is only not returned to the system between blocks.  Elsewhere than glibc this
does nothing.
"""

import ctypes
import ctypes.util

__all__ = ("keep_buffers",)

_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
_done = False


def keep_buffers(limit=1 << 30):
    """Set glibc's mmap and trim thresholds to `limit` bytes, once per process."""
    global _done
    if _done:
        return
    _done = True
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt(_M_MMAP_THRESHOLD, int(limit))
    mallopt(_M_TRIM_THRESHOLD, int(2 * limit) if 2 * limit < 2**31 else 2**31 - 1)
