"""A list that keeps a bounded number of items in memory and the rest in a temporary file.

A scan of 100,000 entries hands back a summary per entry and the name of every file it
wrote; held as Python objects they cost about 1 KB an entry in the scanning process. A
:class:`Spill` keeps the last ``block`` items as objects and pickles each full block to an
anonymous temporary file (deleted when it is closed, or by the OS if the process dies), so
the process's memory stays flat in the number of entries. A scan of fewer than ``block``
entries never opens a file.
"""

from __future__ import annotations

import pickle
import tempfile
from collections.abc import Callable, Iterable, Iterator
from typing import Generic, TypeVar

T = TypeVar("T")
U = TypeVar("U")


class Spill(Generic[T]):
    """Append-only sequence: ``append``, ``extend``, ``len``, iteration in order, and
    ``spill[i]`` (which reads one block back)."""

    def __init__(self, items: Iterable[T] = (), block: int = 2048) -> None:
        assert block > 0
        self.block = block
        self._tail: list[T] = []
        self._offsets: list[int] = []  # where each full block starts in the file
        self._file = None
        self.extend(items)

    def append(self, item: T) -> None:
        self._tail.append(item)
        if len(self._tail) == self.block:
            if self._file is None:
                self._file = tempfile.TemporaryFile(prefix="masstrail-scan-")  # noqa: SIM115 (kept open)
            self._file.seek(0, 2)
            self._offsets.append(self._file.tell())
            pickle.dump(self._tail, self._file, protocol=pickle.HIGHEST_PROTOCOL)
            self._tail = []

    def extend(self, items: Iterable[T]) -> None:
        for item in items:
            self.append(item)

    def __len__(self) -> int:
        return len(self._offsets) * self.block + len(self._tail)

    def _block(self, k: int) -> list[T]:
        assert self._file is not None
        self._file.seek(self._offsets[k])
        return pickle.load(self._file)

    def __iter__(self) -> Iterator[T]:
        for k in range(len(self._offsets)):
            yield from self._block(k)
        yield from list(self._tail)

    def __getitem__(self, i: int) -> T:
        n = len(self)
        if i < 0:
            i += n
        if not 0 <= i < n:
            raise IndexError(f"index {i} out of range for {n} items")
        k, j = divmod(i, self.block)
        return self._tail[j] if k == len(self._offsets) else self._block(k)[j]

    def __eq__(self, other: object) -> bool:
        if isinstance(other, Spill | list | tuple):
            return len(self) == len(other) and all(a == b for a, b in zip(self, other, strict=True))
        return NotImplemented

    __hash__ = None  # type: ignore[assignment]

    def view(self, fn: Callable[[T], U]) -> Iterable[U]:
        """``fn`` of each item, as an iterable that can be read more than once."""
        return _View(self, fn)

    def close(self) -> None:
        """Remove the temporary file (the items held in it are gone)."""
        if self._file is not None:
            self._file.close()
            self._file, self._offsets = None, []

    def __del__(self) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"Spill({len(self)} items, {len(self._offsets)} block(s) on disk)"


class _View(Generic[U]):
    def __init__(self, spill: Spill, fn: Callable) -> None:
        self.spill, self.fn = spill, fn

    def __iter__(self) -> Iterator[U]:
        return map(self.fn, self.spill)

    def __len__(self) -> int:
        return len(self.spill)
