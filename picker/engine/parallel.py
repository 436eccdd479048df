"""Blocks of work spread over the CPU's cores.

numpy lets go of Python's global lock inside its loops, so threads working
on separate blocks of rows run side by side. The blocks are independent and
each thread writes only its own results: the answer does not depend on how
many threads there are, only the time does.
"""

import os
from concurrent.futures import ThreadPoolExecutor


def workers() -> int:
    """Threads to use: the environment variable PICKER_THREADS if it holds a
    whole number >= 1 (1 turns the threads off), else the CPUs this process
    may run on."""
    text = os.environ.get("PICKER_THREADS", "").strip()
    if text.isdigit() and int(text) >= 1:
        return int(text)
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        return os.cpu_count() or 1


def map_blocks(fn, blocks: list) -> list:
    """[fn(b) for b in blocks], on up to `workers()` threads, in order."""
    n = min(workers(), len(blocks))
    if n <= 1:
        return [fn(b) for b in blocks]
    with ThreadPoolExecutor(n) as pool:
        return list(pool.map(fn, blocks))
