"""The compiled kernel that hashes row ids: 64-bit FNV-1a over each id's UTF-8 bytes, then the
splitmix64 finaliser (registry.datasets.kernels.mix64) so that nearby ids spread over all bits.

FNV-1a: Fowler, Noll and Vo, the FNV hash (IETF draft-eastlake-fnv); splitmix64: Steele, Lea
and Flood, Fast splittable pseudorandom number generators (OOPSLA 2014). The numpy definition
it is tested against is row_ids.hash_row_ids_reference.
"""

from __future__ import annotations

import numpy as np

from registry.datasets.kernels import mix64
from registry.numba_import import numba

FNV_OFFSET = np.uint64(0xCBF29CE484222325)
FNV_PRIME = np.uint64(0x100000001B3)


@numba.njit(inline="always")
def _fnv(h, data, start, end):
    for j in range(start, end):
        h ^= np.uint64(data[j])
        h *= FNV_PRIME
    return h


@numba.njit(cache=True, nogil=True)
def hash_strings(offsets, data, out):
    """out[i] = finalise(FNV-1a(data[offsets[i]:offsets[i + 1]])).

    FNV-1a is one multiplication after another, each waiting for the last; four ids are
    hashed side by side, byte k of each in turn, so that the core multiplies four at once
    (ids of one length, the usual case: hash_row_ids of 1,000,000 ids of 13 bytes takes 10 ms
    where one id at a time took 17 ms). Each id's hash is its own, as if hashed alone."""
    n = out.shape[0]
    whole = n - n % 4
    for i in range(0, whole, 4):
        a, b, c, d = offsets[i], offsets[i + 1], offsets[i + 2], offsets[i + 3]
        e = offsets[i + 4]
        shared = min(b - a, c - b, d - c, e - d)
        h0 = h1 = h2 = h3 = FNV_OFFSET
        for k in range(shared):
            h0 = (h0 ^ np.uint64(data[a + k])) * FNV_PRIME
            h1 = (h1 ^ np.uint64(data[b + k])) * FNV_PRIME
            h2 = (h2 ^ np.uint64(data[c + k])) * FNV_PRIME
            h3 = (h3 ^ np.uint64(data[d + k])) * FNV_PRIME
        out[i] = mix64(_fnv(h0, data, a + shared, b))
        out[i + 1] = mix64(_fnv(h1, data, b + shared, c))
        out[i + 2] = mix64(_fnv(h2, data, c + shared, d))
        out[i + 3] = mix64(_fnv(h3, data, d + shared, e))
    for i in range(whole, n):
        out[i] = mix64(_fnv(FNV_OFFSET, data, offsets[i], offsets[i + 1]))


@numba.njit(cache=True, nogil=True)
def _table_size(n):
    """The power of two at least twice n: open addressing stays short-probed at half full."""
    size = 1
    while size < 2 * n:
        size *= 2
    return size


# Ids per partition of has_repeat: a partition's table (twice as many slots of 9 bytes) stays
# within a core's L2 cache, where one table for a million random ids missed it on most inserts.
PARTITION_IDS = 4096


@numba.njit(cache=True, nogil=True)
def first_repeat(hashes):
    """The index of the first hash equal to an earlier one, or -1.

    Whether any id repeats is found partition by partition (has_repeat); only then is the
    earliest repeating row looked for, with one table over all the ids."""
    n = hashes.shape[0]
    if n > PARTITION_IDS and not has_repeat(hashes):
        return -1
    size = _table_size(n)
    return insert_until_repeat(np.zeros(size, np.uint64), np.zeros(size, np.bool_), hashes)


@numba.njit(cache=True, nogil=True)
def has_repeat(hashes):
    """Whether some hash occurs twice. The hashes are grouped by their top bits (a counting
    sort), then each group goes through an open-addressing table of its own (linear probing,
    twice its size) that stays in cache, where one table for a million random ids misses the
    cache on most inserts: 1,000,000 ids in about 10 ms where one table takes 16 ms."""
    n = hashes.shape[0]
    bits = 0
    while (n >> bits) > PARTITION_IDS:
        bits += 1
    shift = np.uint64(64 - bits) if bits else np.uint64(63)
    partitions = 1 << bits
    starts = np.zeros(partitions + 1, np.int64)
    if bits:
        for i in range(n):
            starts[np.int64(hashes[i] >> shift) + 1] += 1
    else:
        starts[1] = n
    largest = 0
    for p in range(partitions):
        largest = max(largest, starts[p + 1])
        starts[p + 1] += starts[p]
    grouped = hashes
    if bits:
        grouped = np.empty(n, np.uint64)
        filled = starts[:-1].copy()
        for i in range(n):
            group = np.int64(hashes[i] >> shift)
            grouped[filled[group]] = hashes[i]
            filled[group] += 1
    capacity = _table_size(largest)
    table = np.empty(capacity, np.uint64)
    used = np.empty(capacity, np.bool_)
    for p in range(partitions):
        low, high = starts[p], starts[p + 1]
        size = _table_size(high - low)
        used[:size] = False
        if insert_until_repeat(table[:size], used[:size], grouped[low:high]) >= 0:
            return True
    return False


@numba.njit(cache=True, nogil=True)
def insert_until_repeat(table, used, hashes):
    """Insert hashes into an open-addressing table (linear probing) until one is already
    there: its index, or -1 when every hash was new and is now in the table. The table has
    at least twice as many slots as there are hashes, so it never fills."""
    mask = np.uint64(table.shape[0] - 1)
    for i in range(hashes.shape[0]):
        h = hashes[i]
        slot = h & mask
        while used[slot]:
            if table[slot] == h:
                return i
            slot = (slot + np.uint64(1)) & mask
        used[slot] = True
        table[slot] = h
    return -1


@numba.njit(cache=True, nogil=True)
def index_of(keys):
    """An open-addressing table (linear probing, twice the size of the input) of distinct
    hashes: (slots, positions + 1 with 0 for an empty slot, mask)."""
    n = keys.shape[0]
    size = _table_size(n)
    mask = np.uint64(size - 1)
    slots = np.zeros(size, np.uint64)
    positions = np.zeros(size, np.int64)
    for i in range(n):
        h = keys[i]
        slot = h & mask
        while positions[slot] != 0 and slots[slot] != h:
            slot = (slot + np.uint64(1)) & mask
        slots[slot] = h
        positions[slot] = i + 1
    return slots, positions, mask


@numba.njit(cache=True, nogil=True)
def mark_found(slots, positions, mask, hashes, found):
    """found[k] = True for every key k of the table (index_of) that some hash equals."""
    for i in range(hashes.shape[0]):
        h = hashes[i]
        slot = h & mask
        while positions[slot] != 0:
            if slots[slot] == h:
                found[positions[slot] - 1] = True
                break
            slot = (slot + np.uint64(1)) & mask


@numba.njit(cache=True, nogil=True)
def positions_in(slots, positions, mask, hashes, out):
    """out[i] = the position of hashes[i] among the table's keys (index_of), or -1."""
    for i in range(hashes.shape[0]):
        h = hashes[i]
        slot = h & mask
        out[i] = -1
        while positions[slot] != 0:
            if slots[slot] == h:
                out[i] = positions[slot] - 1
                break
            slot = (slot + np.uint64(1)) & mask
