"""Compiled kernels for the hot path of fingerprinting a numeric column.

numpy spends one pass over memory per operation: hashing a column (mix64 alone is eight of
them) and bucketing it came to some twenty passes per column per batch. These kernels do the
same arithmetic in one pass each, compiled by numba and cached on disk; their loops have no
branches, so the compiler can keep several values in flight (or in one vector register). The
definitions stay where they were: the canonical encoding in docs/canonical-values.md and
hashing.py, the buckets in histogram.py; the tests check each kernel against those numpy
definitions.
"""

from __future__ import annotations

import numba
import numpy as np

_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
_MAGNITUDE = np.uint64((1 << 63) - 1)
_INFINITY_BITS = np.uint64(0x7FF0000000000000)
_CANONICAL_NAN = np.uint64(0x7FF8000000000000)

compile_kernel = numba.njit(cache=True, nogil=True)


@numba.njit(inline="always")
def _mix64(x):
    """The splitmix64 finaliser, as hashing.mix64."""
    x ^= x >> np.uint64(30)
    x *= _M1
    x ^= x >> np.uint64(27)
    x *= _M2
    x ^= x >> np.uint64(31)
    return x


@numba.njit(inline="always")
def _canonical_word(bits, floating):
    """W(v) of one value: integers as they are; doubles with -0.0 as 0.0 and one NaN."""
    if not floating:
        return bits
    magnitude = bits & _MAGNITUDE
    word = np.uint64(0) if magnitude == 0 else bits
    return _CANONICAL_NAN if magnitude > _INFINITY_BITS else word


@compile_kernel
def add_contributions(bits, floating, valid, key0, multiplier, null0, null1, sums0, sums1):
    """Add each value's contribution C(name, v) to the record sums, per lane.

    `bits` holds int64 or float64 values as uint64. A one-word value contributes
    c0 = mix64(W(v) XOR K0) and c1 = c0 * (K1 | 1) (hashing.contributions); where `valid` (one
    byte a row, empty when nothing is null) is 0, the row gets the null contributions instead.
    """
    if valid.shape[0] == 0:
        for i in range(bits.shape[0]):
            c = _mix64(_canonical_word(bits[i], floating) ^ key0)
            sums0[i] += c
            sums1[i] += c * multiplier
    else:
        for i in range(bits.shape[0]):
            c = _mix64(_canonical_word(bits[i], floating) ^ key0)
            present = valid[i] != 0
            sums0[i] += c if present else null0
            sums1[i] += c * multiplier if present else null1


@numba.njit(inline="always")
def _slot(word, shift, low_key, middle):
    """Table slot of one double's bits (see bucket_counts)."""
    key = max(np.int64((word & _MAGNITUDE) >> shift), low_key) - low_key
    negative = np.int64(word >> np.uint64(63))
    return middle + (key ^ -negative) + negative  # middle - key when the sign bit is set


@compile_kernel
def bucket_counts(values, mean, shift, floor_key, negative_keys, positive_keys):
    """Sum of squared deviations from the mean and bucket counts of finite doubles, one pass.

    Slot negative_keys + s * k of the table counts the values of sign s (+1 or -1) whose
    magnitude key, bits(|x|) >> shift, is floor_key - 1 + k (histogram.py's signed index is
    sign * (1 + key)). Slot k = 0 in the middle gathers zeros and the magnitudes below the
    floor, whichever their sign; the caller sorts those few out with the count of zeros, which
    is returned too. The squares are summed in four lanes, so no one addition waits on the last.
    """
    table = np.zeros(negative_keys + positive_keys + 1, np.int64)
    middle = np.int64(negative_keys)
    low_key = np.int64(floor_key - 1)
    bits = values.view(np.uint64)
    n = values.shape[0]
    whole = n - n % 4
    s0 = s1 = s2 = s3 = 0.0
    zeros = 0
    for i in range(0, whole, 4):
        d0 = values[i] - mean
        d1 = values[i + 1] - mean
        d2 = values[i + 2] - mean
        d3 = values[i + 3] - mean
        s0 += d0 * d0
        s1 += d1 * d1
        s2 += d2 * d2
        s3 += d3 * d3
        for j in range(i, i + 4):
            table[_slot(bits[j], shift, low_key, middle)] += 1
            zeros += (bits[j] & _MAGNITUDE) == 0
    for i in range(whole, n):
        d0 = values[i] - mean
        s0 += d0 * d0
        table[_slot(bits[i], shift, low_key, middle)] += 1
        zeros += (bits[i] & _MAGNITUDE) == 0
    return (s0 + s1) + (s2 + s3), zeros, table


@compile_kernel
def finish_records(sums0, sums1, key0, key1):
    """Record hashes W = mix64(sum XOR K(record, "")) per lane (hashing.finish), and the three
    sums hashing.digest_of_lanes adds: low and high 32-bit halves of lane 0, and lane 1.

    The halves are summed apart so that no carry out of lane 0 is lost (exact below 2^32 rows).
    """
    n = sums0.shape[0]
    lane0 = np.empty(n, np.uint64)
    lane1 = np.empty(n, np.uint64)
    low = np.uint64(0)
    high = np.uint64(0)
    upper = np.uint64(0)
    for i in range(n):
        a = _mix64(sums0[i] ^ key0)
        b = _mix64(sums1[i] ^ key1)
        lane0[i] = a
        lane1[i] = b
        low += a & np.uint64(0xFFFFFFFF)
        high += a >> np.uint64(32)
        upper += b
    return lane0, lane1, low, high, upper


@compile_kernel
def merge_sorted_counts(a_indices, a_counts, b_indices, b_counts):
    """Two lists of (index, count), each sorted by index without repeats, merged into one;
    counts of an index in both are added."""
    size = a_indices.shape[0] + b_indices.shape[0]
    indices = np.empty(size, np.int64)
    counts = np.empty(size, np.int64)
    i = j = taken = 0
    while i < a_indices.shape[0] or j < b_indices.shape[0]:
        if j == b_indices.shape[0] or (i < a_indices.shape[0]
                                       and a_indices[i] < b_indices[j]):
            indices[taken], counts[taken] = a_indices[i], a_counts[i]
            i += 1
        elif i == a_indices.shape[0] or b_indices[j] < a_indices[i]:
            indices[taken], counts[taken] = b_indices[j], b_counts[j]
            j += 1
        else:
            indices[taken], counts[taken] = a_indices[i], a_counts[i] + b_counts[j]
            i += 1
            j += 1
        taken += 1
    return indices[:taken], counts[:taken]
