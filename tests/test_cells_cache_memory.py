"""The worksheet functions' parse caches are bounded by memory, not only by entry count.

Editing one cell of a large port table makes a new range every time; each edit used to leave its
frozen cells, SI arrays and balance in the caches until the entry bound (hundreds of entries,
gigabytes for a 10^5-port table) was reached. Port data are invented.
"""

import threading
import tracemalloc

import numpy as np
import pytest

import portflux.cells as C
from portflux.cells import _inputs as I
from portflux.cells._grid import freeze
from portflux.cells._memo import MISSING, MemoryLRU, memory_lru, size_of

HEAD = ("port", "role", "area", "density", "vx")
UNITS = (None, None, "ft^2", "slug/ft^3", "ft/s")


def big_table(n, vx=80.0):
    rows = tuple((f"p{i}", "in" if i % 2 == 0 else "out", 0.05, 1.94, 80.0) for i in range(n))
    rows = rows[:-1] + ((f"p{n - 1}", "out", 0.05, 1.94, vx),)      # the cell being edited
    return (HEAD, UNITS) + rows


@pytest.fixture(autouse=True)
def fresh_caches():
    C.clear_caches()
    yield
    C.clear_caches()


@pytest.fixture
def small_budgets():
    """Every parse cache limited to 2 MiB for the test, restored after."""
    caches = [I._table.cache, I._cv.cache, I._settings.cache, I._evaluate.cache, I._compile.cache]
    old = [c.max_bytes for c in caches]
    for c in caches:
        c.max_bytes = 2 * 2 ** 20
    yield caches
    for c, b in zip(caches, old):
        c.max_bytes = b


def test_the_least_recently_used_entries_go_first_when_the_bytes_run_out():
    cache = MemoryLRU(maxsize=100, max_bytes=10_000)
    for k in "abc":
        cache.put(k, "x", nbytes=4_000)
    assert cache.get("a") is MISSING                       # dropped: 12 000 > 10 000
    assert cache.get("b") == "x" and cache.get("c") == "x"
    cache.put("d", "x", nbytes=4_000)                      # "b" is now the least recent
    assert cache.get("b") is MISSING and cache.get("c") == "x" and cache.get("d") == "x"
    assert cache.info().bytes <= 10_000


def test_the_newest_entry_stays_even_when_it_alone_is_over_the_budget():
    cache = MemoryLRU(maxsize=100, max_bytes=1_000)
    cache.put("small", 1, nbytes=10)
    cache.put("huge", 2, nbytes=50_000)
    assert cache.get("huge") == 2 and cache.get("small") is MISSING
    assert cache.info().currsize == 1


def test_the_entry_bound_still_holds():
    cache = MemoryLRU(maxsize=3, max_bytes=10 ** 9)
    for k in range(10):
        cache.put(k, k, nbytes=1)
    assert cache.info().currsize == 3 and cache.get(9) == 9 and cache.get(6) is MISSING


def test_the_decorator_is_typed_like_lru_cache_and_counts_hits():
    calls = []

    @memory_lru(maxsize=8)
    def f(x, scale=1):
        calls.append(x)
        return x * scale

    assert f(1) == 1 and f(1.0) == 1.0 and f(True) == 1    # three entries: 1, 1.0, True differ
    assert f(1) == 1 and len(calls) == 3
    assert f(2, scale=3) == 6 and f(2, scale=3) == 6 and len(calls) == 4
    assert f.cache_info().hits == 2


def test_the_size_of_a_range_counts_its_texts_and_a_parsed_value_its_arrays():
    key = freeze(((("a" * 10_000, 1.0),) * 50))
    assert size_of(key) >= 50 * 10_000                     # the text is counted per cell
    assert size_of({"v": np.zeros((1000, 3))}) >= 24_000


def test_the_caches_are_thread_safe_under_concurrent_calls():
    cache = MemoryLRU(maxsize=50, max_bytes=5_000)
    errors = []

    def work(t):
        try:
            for k in range(2000):
                cache.put((t, k % 80), k, nbytes=100)
                cache.get((t, (k * 7) % 80))
        except Exception as e:      # noqa: BLE001 - reported below
            errors.append(e)

    threads = [threading.Thread(target=work, args=(t,)) for t in range(4)]
    for th in threads:
        th.start()
    for th in threads:
        th.join()
    assert not errors
    info = cache.info()
    assert info.currsize <= 50 and info.bytes <= 5_000
    assert info.bytes == sum(b for _, b in cache._data.values())


def test_editing_one_cell_of_a_large_table_again_and_again_keeps_memory_bounded(small_budgets):
    # 2000 ports: each edit makes a new range, table and balance. Without the byte budget the 24
    # edits keep all 24 entries (entry bound 256/512): memory grew 9.8 MiB over the last 20
    # edits when measured so; with it, 0.0 MiB.
    tables = [big_table(2000, vx=80.0 + k * 1e-3) for k in range(24)]
    tracemalloc.start()
    try:
        for k, t in enumerate(tables):
            out = C.PFX_IMBALANCE(t, 0.0)
            assert isinstance(out, list), out
            if k == 3:
                after_4 = tracemalloc.get_traced_memory()[0]
        after_24 = tracemalloc.get_traced_memory()[0]
    finally:
        tracemalloc.stop()
    grown = (after_24 - after_4) / 2 ** 20
    assert grown < 4, f"memory grew {grown:.1f} MiB over 20 edits"
    for cache in small_budgets:
        info = cache.info()
        assert info.currsize == 1 or info.bytes <= info.max_bytes, info
    assert I._table.cache_info().currsize < 10
    assert I._evaluate.cache_info().currsize < 10


def test_the_default_budget_bounds_a_hundred_thousand_port_table_to_a_few_entries():
    # Each 10^5-port entry is estimated at tens of MiB; the default 256 MiB budget keeps a few
    # (a sheet of many functions on one table still hits the cache every time).
    t = big_table(10 ** 5)
    C.PFX_IMBALANCE(t, 0.0)
    entry = I._table.cache_info().bytes
    assert entry > 10 * 2 ** 20
    assert C.PFX_POWER(t, 0.0) == 0.0 and I._table.cache_info().currsize == 1
    assert I._table.cache.max_bytes // entry < 20       # not hundreds of edits


def test_a_failure_message_is_cached_short_however_long_the_value():
    bad = ((("port", "role", "x" * 10 ** 6),) + big_table(2)[1:])
    out = C.PFX_POWER(bad, 0.0)
    # the value shows as an excerpt; the rest of the text lists every known column (34 now),
    # so the bound is the cap of any cell message (excel.bounded_message, 600 characters)
    assert out.startswith("ports row 1, column 3: unknown column 'xxxx")
    assert "... (1000000 characters)" in out and len(out) <= 600
    assert I._table.cache_info().bytes < 10 ** 6 + 10 ** 5   # the key (the cell) and a short text
