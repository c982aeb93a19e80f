"""Reading the next file, or folder, while the one at hand is worked on.

A streamed merge reads a decomposed case folder after folder: reading a folder's files and
inflating them (gzip) takes a third of the merge, placing what was read most of the rest.
Both release the interpreter lock for their long stretches (file reads, ISA-L's and
zlib's inflation, the compiled kernels), so reading the next folder on a thread of its own
overlaps the two on a machine with a second core. Memory: two folders' worth instead of
one, which the caller allows for.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from typing import Callable, Iterable, Iterator, TypeVar

Item = TypeVar("Item")
Read = TypeVar("Read")


def read_ahead(read: Callable[[Item], Read], items: Iterable[Item]) -> Iterator[Read]:
    """``read(item)`` of each of ``items``, in order, the next one read on a thread while
    the caller works on the one yielded. An error of ``read`` is raised when its item's
    turn comes, as if read then; a caller that stops early waits for the read in
    flight."""
    items = list(items)
    if not items:
        return
    with ThreadPoolExecutor(1, thread_name_prefix="caselint-read-ahead") as pool:
        future = pool.submit(read, items[0])
        for item in items[1:]:
            current = future.result()
            future = pool.submit(read, item)
            yield current
            del current                 # not held while the one after next is read
        yield future.result()


__all__ = ["read_ahead"]
