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

import numpy as np

from registry.numba_import import numba

_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
_MAGNITUDE = np.uint64((1 << 63) - 1)
_INFINITY_BITS = np.uint64(0x7FF0000000000000)
_CANONICAL_NAN = np.uint64(0x7FF8000000000000)

compile_kernel = numba.njit(cache=True, nogil=True)


@numba.njit(inline="always")
def mix64(x):
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


@numba.njit(inline="always")
def _slot(word, shift, low_key, middle):
    """Table slot of one double's bits (see summarise_column)."""
    key = max(np.int64((word & _MAGNITUDE) >> shift), low_key) - low_key
    negative = np.int64(word >> np.uint64(63))
    return middle + (key ^ -negative) + negative  # middle - key when the sign bit is set


@numba.njit(inline="always")
def _bits_of(value):
    """The bits of a double, through a one-element view (numba has no scalar bit cast)."""
    return np.array([value], np.float64).view(np.uint64)[0]


@compile_kernel
def add_contributions(bits, floating, valid, sums0, sums1, key0, multiplier, null0, null1):
    """Add each row's contribution C(name, v) to the record sums per lane; count the
    non-finite values among the valid ones.

    `bits` holds int64 or float64 values as uint64; `valid` has a byte a row (0 for a null) or
    is empty when nothing is null. A one-word value contributes c0 = mix64(W(v) XOR K0) and
    c1 = c0 * (K1 | 1) (hashing.contributions); a null contributes null0 and null1. With
    empty sums only the count is made. The loop has no branch, so it runs on vectors.
    """
    hashing = sums0.shape[0] > 0
    all_valid = valid.shape[0] == 0
    non_finite = 0
    for i in range(bits.shape[0]):
        present = all_valid or valid[i] != 0
        if floating:
            non_finite += present and (bits[i] & _MAGNITUDE) >= _INFINITY_BITS
        if hashing:
            c = mix64(_canonical_word(bits[i], floating) ^ key0)
            sums0[i] += c if present else null0
            sums1[i] += c * multiplier if present else null1
    return non_finite


@numba.njit(inline="always")
def _sum_in_lanes(values):
    """Sum in eight lanes, so that no addition waits on the one before (and rounding stays
    near numpy's pairwise sum)."""
    s0 = s1 = s2 = s3 = s4 = s5 = s6 = s7 = 0.0
    n = values.shape[0]
    whole = n - n % 8
    for i in range(0, whole, 8):
        s0 += values[i]
        s1 += values[i + 1]
        s2 += values[i + 2]
        s3 += values[i + 3]
        s4 += values[i + 4]
        s5 += values[i + 5]
        s6 += values[i + 6]
        s7 += values[i + 7]
    for i in range(whole, n):
        s0 += values[i]
    return ((s0 + s1) + (s2 + s3)) + ((s4 + s5) + (s6 + s7))


@numba.njit(inline="always")
def _squares_in_lanes(values, mean):
    """Sum of squared deviations from the mean, in four lanes."""
    s0 = s1 = s2 = s3 = 0.0
    n = values.shape[0]
    whole = n - n % 4
    for i in range(0, whole, 4):
        d0 = values[i] - mean
        d1 = values[i + 1] - mean
        d2 = values[i + 2] - mean
        d3 = values[i + 3] - mean
        s0 += d0 * d0
        s1 += d1 * d1
        s2 += d2 * d2
        s3 += d3 * d3
    for i in range(whole, n):
        d0 = values[i] - mean
        s0 += d0 * d0
    return (s0 + s1) + (s2 + s3)


@numba.njit(nogil=True, cache=True, fastmath={"nnan", "ninf"})
def _range_of(values):
    """Minimum and maximum of values with no NaN or infinity among them, which lets the
    compiler take them on vectors."""
    low, high = values[0], values[0]
    for i in range(values.shape[0]):
        low = min(low, values[i])
        high = max(high, values[i])
    return low, high


@compile_kernel
def summarise_finite(values, floats, shift, floor_value):
    """Count, mean, M2, minimum, maximum and histogram of a column whose values all count
    (no null, no NaN or infinity): int64 or float64 `values` and the same as `floats`.

    The mean comes first, then the squared deviations from it (the two-pass algorithm, Chan,
    Golub and LeVeque 1983), the range of the values themselves (exact for integers) and the
    bucket counts. Buckets are histogram.py's: signed index sign * (1 + bits(|x|) >> shift), 0 for
    zeros.
    Slot `middle` +- k of the table counts the magnitudes whose key is floor_key - 1 + k; slot
    `middle` itself gathers zeros and magnitudes below the floor, which a third pass over just
    those sorts out when there are any.
    """
    n = values.shape[0]
    mean = _sum_in_lanes(floats) / n
    low, high = _range_of(values)
    deviations = _squares_in_lanes(floats, mean)

    floor_key = np.int64(_bits_of(floor_value) >> shift)
    low_key = floor_key - 1
    top, bottom = np.float64(high), -np.float64(low)
    positive_slots = np.int64(_bits_of(top) >> shift) - low_key if top >= floor_value else 0
    negative_slots = (np.int64(_bits_of(bottom) >> shift) - low_key if bottom >= floor_value
                      else 0)
    middle = negative_slots
    float_bits = floats.view(np.uint64)
    # Slots first, counts after: apart, each loop runs at full speed (the first on vectors).
    slots = np.empty(n, np.int64)
    zeros = 0
    for i in range(n):
        slots[i] = _slot(float_bits[i], shift, low_key, middle)
        zeros += (float_bits[i] & _MAGNITUDE) == 0
    table = np.zeros(negative_slots + positive_slots + 1, np.int64)
    for i in range(n):
        table[slots[i]] += 1

    tiny = table[middle] - zeros
    tiny_indices = np.empty(tiny, np.int64)
    if tiny:
        taken = 0
        for i in range(n):
            magnitude = float_bits[i] & _MAGNITUDE
            if magnitude != 0 and abs(floats[i]) < floor_value:
                index = np.int64(magnitude >> shift) + 1
                tiny_indices[taken] = index if floats[i] > 0.0 else -index
                taken += 1
        tiny_indices.sort()
    size = table.shape[0] + tiny
    indices = np.empty(size, np.int64)
    counts = np.empty(size, np.int64)
    kept = 0
    for slot in range(middle):  # negative magnitudes, the largest first
        if table[slot]:
            indices[kept], counts[kept] = -(floor_key + middle - slot), table[slot]
            kept += 1
    kept = _add_runs(tiny_indices, True, indices, counts, kept)
    if zeros:
        indices[kept], counts[kept] = 0, zeros
        kept += 1
    kept = _add_runs(tiny_indices, False, indices, counts, kept)
    for slot in range(middle + 1, table.shape[0]):
        if table[slot]:
            indices[kept], counts[kept] = floor_key + slot - middle, table[slot]
            kept += 1
    return mean, deviations, low, high, indices[:kept], counts[:kept]


@numba.njit(inline="always")
def _add_runs(sorted_indices, negative, indices, counts, kept):
    """Append each distinct negative (or positive) index of a sorted list with its count."""
    i = 0
    while i < sorted_indices.shape[0]:
        j = i
        while j < sorted_indices.shape[0] and sorted_indices[j] == sorted_indices[i]:
            j += 1
        if (sorted_indices[i] < 0) == negative:
            indices[kept], counts[kept] = sorted_indices[i], j - i
            kept += 1
        i = j
    return kept


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
        a = mix64(sums0[i] ^ key0)
        b = mix64(sums1[i] ^ key1)
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
