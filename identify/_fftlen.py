"""FFT lengths that numpy's pocketfft transforms quickly.

    fast_length   the smallest 2^a·3^b·5^c at least n

numpy's FFT handles any length, but a length with a large prime factor (1,995,001 =
17 × 117,353, say) costs hundreds of times more than a nearby 5-smooth one.  Zero-padding
a record to :func:`fast_length` keeps every transform of a long record near n log n.
"""
from __future__ import annotations

__all__ = ["fast_length"]


def fast_length(n: int) -> int:
    """Smallest integer ``m >= n`` whose only prime factors are 2, 3 and 5.

    Equal to ``scipy.fft.next_fast_len(n, real=True)`` (checked in tests/test_segment.py);
    written here so that the segment search imports no part of scipy.
    """
    n = int(n)
    if n <= 6:
        return max(n, 1)
    best = 1 << (n - 1).bit_length()  # the next power of two always qualifies
    p5 = 1
    while p5 < best:
        p35 = p5
        while p35 < best:
            # smallest power of two that lifts p35 to n or beyond
            quotient = -(-n // p35)
            m = p35 << (quotient - 1).bit_length()
            if m < best:
                best = m
            p35 *= 3
        p5 *= 5
    return best
