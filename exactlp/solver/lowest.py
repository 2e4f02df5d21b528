"""Many fractions over one denominator put in lowest terms together.

A solve by refinement ends with integers ``n_1, ..., n_m`` over one common
denominator ``D`` (the basic values, the duals).  Each ``n_i / D`` in lowest
terms needs ``g_i = gcd(n_i, D)``, one Euclidean algorithm on numbers of
thousands of bits apiece (STAIR: 356 of them at 2,300 bits, about a tenth of
its warm solve).  Here they share the work:

* ``G = gcd(D, n_1, ..., n_m)`` first (one long gcd; the rest meet a short
  ``G`` and cost a division each), and ``D' = D / G``, ``n'_i = n_i / G``:
  then ``g_i = G gcd(n'_i, D')``.
* ``D' = S R`` with ``S`` the part of ``D'`` made of primes below
  SMOOTH_BOUND and ``R`` the rest (no prime factor below it), so that
  ``gcd(S, R) = 1`` and ``gcd(n', D') = gcd(n' mod S, S) gcd(n' mod R, R)``.
  ``S`` is found from ``gcd(D', P)``, ``P`` the product of those primes: it
  holds each of them once, and dividing ``D'`` by it while it shares them
  takes their powers too.  ``S`` is short (72 to 213 bits on the Netlib
  bases), so its gcds are cheap.
* A prime factor of ``R`` is at least SMOOTH_BOUND, so few ``n'_i`` share
  one (those with shorter denominators: integers, or values at a simpler
  rational).  ``H = gcd(R, prod_i (n'_i mod R) mod R)`` is the product of the
  primes of ``R`` that some ``n'_i`` shares (a prime of ``R`` divides the
  product modulo ``R`` exactly when it divides one of the factors), so an
  ``n'_i`` with ``gcd(n'_i, H) = 1`` shares none: ``gcd(n'_i, R) = 1``.  ``H``
  is short when few are shared, and its gcds are cheap; only the ``n'_i``
  that meet it pay a long gcd.  (A residue 0, an integer multiple of ``R``,
  is left out of the product: its gcd is ``R``.)

The pairs that come out, ``(n_i / g_i, D / g_i)``, are coprime by
construction, and :func:`lowest_mpq` builds each ``mpq`` from them without
the gcd that its constructor would repeat (through a Fraction, whose two
integers gmpy2 takes as they are).  Tests compare every ``g_i`` with a direct
gcd, and every fraction with gmpy2's normalising constructor.

This pays only where the numbers' denominators are all nearly ``D`` itself
and ``R`` is long.  Where they vary (PILOT4's and GROW15's basic values share
large primes with ``D`` in most components), ``H`` is long and nearly every
component pays its long gcd anyway; a sample of the numerators tells which
case it is (:func:`_pays`), and the other is left to one gcd apiece.  STAIR's
basic values (slow spell of the machine, best of 7): 9.2 -> 4.2 ms, its duals
8.8 -> 3.9 ms; the problems it leaves alone pay 0.1-0.4 ms for the sample.
"""

from __future__ import annotations

from gmpy2 import gcd, mpq, mpz

from .form import coprime_fraction

#: primes below this go to the short part ``S``
SMOOTH_BOUND = 1 << 16

_smooth_product = None  # the product of the primes below SMOOTH_BOUND (94,027 bits), made once


def _primes_product() -> mpz:
    global _smooth_product
    if _smooth_product is None:
        from gmpy2 import primorial

        _smooth_product = primorial(SMOOTH_BOUND - 1)
    return _smooth_product


def split_smooth(d: mpz) -> tuple[mpz, mpz]:
    """``(S, R)`` with ``d = S R``, every prime factor of ``S`` below
    SMOOTH_BOUND and none of ``R``'s (``d > 0``)."""
    s, r = mpz(1), mpz(d)
    g = gcd(r, _primes_product() % r) if r > 1 else mpz(1)
    while g > 1:  # g: the small primes that still divide r, each once
        s *= g
        r //= g
        g = gcd(r, g)
    return s, r


def gcds_with(nums: list, den) -> list | None:
    """``[gcd(n, den) for n in nums]`` (``den > 0``; ``gcd(0, den) = den``), or
    None when sharing the work would not pay: fewer than 2 SAMPLE nonzero
    numerators, a sample that says so (:func:`_pays`), or large primes shared
    with the rough part that make up more than a quarter of it.  (Then one gcd
    apiece is cheaper, and the caller takes them so.)"""
    den = mpz(den)
    at = [i for i, v in enumerate(nums) if v]
    if len(at) < 2 * SAMPLE or not _pays(nums, at, den):
        return None
    out = [den] * len(nums)
    common = den
    for v in nums:
        if v:
            common = gcd(common, v)
            if common == 1:
                break
    d = den // common
    s, r = split_smooth(d)
    rest = [mpz(nums[i]) // common for i in at]
    for i, v in zip(at, rest):
        out[i] = gcd(v % s, s) * common if s != 1 else common
    if r == 1:
        return out
    residues = [v % r for v in rest]
    product = mpz(1)
    for v in residues:
        if v:
            product = product * v % r
    shared = gcd(product, r)  # the large primes some numerator shares with r
    if shared.bit_length() * 4 > r.bit_length():
        return None
    for i, v in zip(at, residues):
        if not v:
            out[i] *= r  # an integer multiple of r: gcd(0, r) = r
        elif shared != 1 and gcd(v % shared, shared) != 1:
            out[i] *= gcd(v, r)
    return out


#: how many numerators, spread evenly, :func:`_pays` looks at
SAMPLE = 16
#: ... and the shortest rough part for which the shared work pays
LONG_BITS = 1024


def _pays(nums: list, at: list[int], den: mpz) -> bool:
    """Whether sharing the work pays, judged on a sample of the numerators: not
    when the rough part left after their common factor is short (each gcd
    apiece is then short too: GROW22's duals, 363 bits), nor when the sample
    already shares a large prime with it (the numbers' own denominators vary,
    as PILOT4's and GROW15's do: many would pay a long gcd all the same, and
    the shared work only adds to it)."""
    sample = [mpz(nums[i]) for i in at[:: max(len(at) // SAMPLE, 1)]]
    common = den
    for v in sample:
        common = gcd(common, v)
    _, r = split_smooth(den // common)
    if r.bit_length() < LONG_BITS:
        return False
    product = mpz(1)
    for v in sample:
        v = v // common % r
        if v:  # (0: an integer multiple of r, settled without a long gcd)
            product = product * v % r
    return gcd(product, r) == 1


def lowest_mpq(nums: list, den) -> list[mpq]:
    """``[mpq(n, den) for n in nums]`` (``den > 0``), the gcds shared as above
    where that pays."""
    zero = mpq(0)
    gs = gcds_with(nums, den)
    if gs is None:
        return [mpq(v, den) if v else zero for v in nums]
    out = []
    reduced = {}  # den / g, by g (many numerators share one)
    for v, g in zip(nums, gs):
        if not v:
            out.append(zero)
            continue
        d = reduced.get(g)
        if d is None:
            d = reduced[g] = int(den // g)
        # in lowest terms: mpq of a Fraction takes its two integers as they are
        out.append(mpq(coprime_fraction(int(v // g), d)))
    return out
