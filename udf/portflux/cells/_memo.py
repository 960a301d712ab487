"""Caches of parsed worksheet arguments, bounded by memory as well as by entry count.

A worksheet function caches what it parsed from a range on the range's frozen cells, so the many
functions of a sheet that share one port table parse it once. A count bound alone does not bound
memory: one entry of a 10^5-port table (its frozen cells, the SI arrays, the balance) is tens of
MiB, and every edit of one cell makes a new entry. :class:`MemoryLRU` therefore also keeps the
estimated bytes of its entries (the frozen key and the cached value, see :func:`size_of`) under a
budget, dropping the least recently used entries first. The most recent entry always stays, even
when it alone is over the budget: the next function on the same large table is then a cache hit,
and memory stays within the budget plus one entry.

>>> cache = MemoryLRU(maxsize=10, max_bytes=10_000)
>>> cache.put(("a",), "x" * 4000); cache.put(("b",), "y" * 4000); cache.put(("c",), "z" * 4000)
>>> cache.get(("a",)) is MISSING, cache.get(("c",)) is MISSING    # "a" was dropped, "c" kept
(True, False)
>>> cache.info().currsize, cache.info().bytes <= 10_000
(2, True)
"""

from __future__ import annotations

import functools
import sys
import threading
from collections import OrderedDict, namedtuple
from itertools import chain

import numpy as np

#: Default budget of one cache [bytes]: a handful of 10^5-port tables, far below a workstation's
#: memory; the entry bound still applies.
DEFAULT_MAX_BYTES = 256 * 2 ** 20

#: Arguments at least this large [bytes] have their cached value walked by :func:`size_of`.
WALK_FROM = 256 * 2 ** 10

MISSING = object()
_KWARGS = object()        # separates positional from keyword arguments in a key
CacheInfo = namedtuple("CacheInfo", "hits misses maxsize currsize bytes max_bytes")

_SCALARS = (str, bytes, int, float, bool, complex, type(None))
_getsizeof = sys.getsizeof


def size_of(obj, depth: int = 8) -> int:
    """Estimated bytes held by ``obj``: numpy arrays by their data, containers and objects
    (``__dict__``, ``__slots__``) walked to ``depth`` levels, shared objects counted once.

    Rows of cells (a tuple of tuples, what :func:`portflux.cells._grid.freeze` makes) and
    sequences of scalars are estimated at C speed: a text as its length plus the object header
    (a text that several cells share is counted in each), any other cell as 32 bytes. The last
    few ranges and objects estimated are remembered (:data:`_RECENT`), so the caches that share
    one range or one parsed table estimate it once.

    >>> size_of(np.zeros(1000)) >= 8000
    True
    >>> size_of((("port", 1.0), ("jet", 2.0))) > size_of((("port", 1.0),))
    True
    """
    return _size(obj, depth, set())


_SCALAR_TYPES = frozenset(_SCALARS)
_is_text = str.__instancecheck__
#: The last few ranges and objects estimated, with their sizes: the caches that share one range
#: or one parsed table estimate it once. It holds at most this many objects alive beyond their
#: caches, and those are the most recent ones, which the caches keep anyway.
_RECENT = 8
_RECENT_FROM = 2 ** 20          # only objects of at least a MiB are remembered
_recent = []


def _remembered(obj):
    for o, size in _recent:
        if o is obj:
            return size
    return None


def _remember(obj, size):
    if size >= _RECENT_FROM:
        _recent[:] = [(obj, size)] + _recent[:_RECENT - 1]
    return size


def _cells_size(cells: list) -> int:
    """Bytes of a list of cells: texts by their length, anything else 32 bytes."""
    texts = list(filter(_is_text, cells))
    return 49 * len(texts) + sum(map(len, texts)) + 32 * (len(cells) - len(texts))


def _rows(obj) -> int | None:
    """Bytes of a tuple of row tuples, or None if ``obj`` is not one."""
    if set(map(type, obj)) != {tuple} or (obj[0] and isinstance(obj[0][0], (tuple, list))):
        return None                # not rows of cells (cells are never sequences in a range)
    cells = list(chain.from_iterable(obj))
    return 56 + 8 * len(obj) + 56 * len(obj) + 8 * len(cells) + _cells_size(cells)


class _Key(list):
    """Arguments with their hash computed once (a large frozen range is slow to hash)."""

    __slots__ = ("hashvalue",)

    def __init__(self, args):
        super().__init__(args)
        self.hashvalue = hash(args)

    def __hash__(self):
        return self.hashvalue


def _size(obj, depth, seen) -> int:
    if isinstance(obj, _SCALARS):
        return _getsizeof(obj)
    if id(obj) in seen:
        return 0
    seen.add(id(obj))
    if isinstance(obj, np.ndarray):
        return _getsizeof(obj) + (obj.nbytes if obj.base is not None else 0)
    known = _remembered(obj)
    if known is not None:
        return known
    if isinstance(obj, tuple) and obj and type(obj[0]) is tuple:
        fast = _rows(obj)
        if fast is not None:
            return _remember(obj, fast)
    total = _getsizeof(obj)
    if depth <= 0:
        return total
    if hasattr(obj, "__dict__"):
        return _remember(obj, total + _size(vars(obj), depth - 1, seen) + _slots(obj, depth, seen))
    if isinstance(obj, dict):
        return total + sum(_size(k, depth - 1, seen) + _size(v, depth - 1, seen)
                           for k, v in obj.items())
    if isinstance(obj, (tuple, list, set, frozenset)):
        if _SCALAR_TYPES.issuperset(map(type, obj)):        # labels, words: at C speed
            return total + _cells_size(list(obj))
        return total + sum(_size(v, depth - 1, seen) for v in obj)
    return total + _slots(obj, depth, seen)


def _slots(obj, depth, seen) -> int:
    return sum(_size(getattr(obj, name), depth - 1, seen)
               for name in getattr(type(obj), "__slots__", ()) if hasattr(obj, name))


class MemoryLRU:
    """Least-recently-used mapping bounded by ``maxsize`` entries and ``max_bytes`` bytes.

    Thread-safe (a spreadsheet may call worksheet functions from several threads). Sizes are
    estimated once, when an entry is stored.
    """

    def __init__(self, maxsize: int, max_bytes: int = DEFAULT_MAX_BYTES):
        self.maxsize, self.max_bytes = int(maxsize), int(max_bytes)
        self._data = OrderedDict()      # key -> (value, bytes)
        self._bytes = 0
        self._hits = self._misses = 0
        self._lock = threading.Lock()

    def get(self, key):
        """The value stored for ``key`` (now the most recent), or :data:`MISSING`."""
        with self._lock:
            item = self._data.get(key, MISSING)
            if item is MISSING:
                self._misses += 1
                return MISSING
            self._data.move_to_end(key)
            self._hits += 1
            return item[0]

    def put(self, key, value, nbytes: int | None = None):
        """Store ``value`` under ``key`` (estimating its bytes unless given), then drop the
        least recently used entries until both bounds hold (the newest entry always stays)."""
        if nbytes is None:
            nbytes = size_of(key) + size_of(value)
        with self._lock:
            old = self._data.pop(key, None)
            if old is not None:
                self._bytes -= old[1]
            self._data[key] = (value, nbytes)
            self._bytes += nbytes
            while len(self._data) > 1 and (len(self._data) > self.maxsize
                                           or self._bytes > self.max_bytes):
                _, (_, b) = self._data.popitem(last=False)
                self._bytes -= b

    def clear(self):
        with self._lock:
            self._data.clear()
            self._bytes = self._hits = self._misses = 0

    def info(self) -> CacheInfo:
        with self._lock:
            return CacheInfo(self._hits, self._misses, self.maxsize, len(self._data),
                             self._bytes, self.max_bytes)


def memory_lru(maxsize: int, max_bytes: int = DEFAULT_MAX_BYTES):
    """Decorator: ``functools.lru_cache(maxsize, typed=True)``, bounded by memory too (see
    :class:`MemoryLRU`). The wrapper has ``cache_clear``, ``cache_info`` and ``cache`` (the
    :class:`MemoryLRU`).

    For parse functions, whose value is derived from their arguments: an entry is the estimated
    size of the arguments plus that of the value, which is walked only when the arguments are
    at least :data:`WALK_FROM` bytes; below, the value is charged 4 x the arguments + 16 KiB
    (measured for the port-table parse and the balance: 2-3 x + about 12 KiB), which keeps the
    estimate off the path of the many small calls of a sheet.

    >>> @memory_lru(maxsize=4)
    ... def double(x):
    ...     return 2 * x
    >>> double(2), double(2.0), double.cache_info().currsize      # typed: 2 and 2.0 differ
    (4, 4.0, 2)
    """
    def wrap(func):
        cache = MemoryLRU(maxsize, max_bytes)

        @functools.wraps(func)
        def call(*args, **kwargs):
            full = args + (_KWARGS,) + tuple(sorted(kwargs.items())) if kwargs else args
            key = _Key((full, tuple(map(type, full))))
            value = cache.get(key)
            if value is MISSING:
                value = func(*args, **kwargs)
                nbytes = size_of(full)
                nbytes += size_of(value) if nbytes >= WALK_FROM else 4 * nbytes + 16384
                cache.put(key, value, nbytes)
            return value

        call.cache = cache
        call.cache_clear = cache.clear
        call.cache_info = cache.info
        return call
    return wrap
