"""Integer logarithms for the devex weights of both simplex methods.

Pricing weights only choose among improving columns (or infeasible rows), so
they may be rough; they are kept as whole numbers, 16 log2 of each weight, and
found with integer arithmetic only, so the pivot path is the same on every
machine.
"""

from __future__ import annotations

from gmpy2 import mpq


def _mantissa_table() -> tuple[int, ...]:
    """``floor(16 log2 (M / 128))`` for ``M = 128 .. 255``, in integers: the
    largest ``t`` with ``2^t 128^16 <= M^16``."""
    out = []
    for m in range(128, 256):
        t = 0
        while t < 15 and (1 << (t + 1)) * 128**16 <= m**16:
            t += 1
        out.append(t)
    return tuple(out)


_MANTISSA16 = _mantissa_table()


def _log16_of(n, d) -> int:
    """:func:`_log16` of ``n / d`` (positive integers, in lowest terms or not)."""
    # |v| = n / d lies in [2^(e-1), 2^(e+1)); q = floor(|v| 2^(8-e)) in [128, 512):
    # at 256 or more E = e and M = floor(q / 2) (= floor(|v| 2^(7-e))), else E = e - 1, M = q
    e = n.bit_length() - d.bit_length()
    k = 8 - e
    q = (n << k) // d if k >= 0 else n // (d << -k)
    if q >= 256:
        return 16 * e + _MANTISSA16[(q >> 1) - 128]
    return 16 * e - 16 + _MANTISSA16[q - 128]


def _log16(v: mpq) -> int:
    """About 16 log2 |v| as an integer (v nonzero), at most 0.08 bit under it.

    ``16 E + floor(16 log2 (M / 128))`` with ``2^E <= |v| < 2^(E+1)`` and
    ``M = floor(|v| 2^(7-E))``, the leading eight bits of the value.  Both are
    functions of the value alone, found by one integer division of short
    quotient, so any fraction equal to ``v`` gives the same result
    (:func:`_log16_of` takes ``v`` unreduced: the devex update reads
    ``alpha_pj`` as ``(D alpha_pj) / D`` without dividing, and the pivot path
    does not depend on whether the solves were scaled).  Integer arithmetic only.
    """
    n = v.numerator
    return _log16_of(-n if n < 0 else n, v.denominator)
