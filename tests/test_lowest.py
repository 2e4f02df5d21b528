"""Many fractions over one denominator put in lowest terms together
(exactlp/solver/lowest.py).

Every gcd it finds must be the gcd: compared here with gmpy2's own gcd of each
pair, and the fractions with gmpy2's normalising constructor, field by field.
The cases are built to reach each of its paths: a common factor of all the
numerators, a denominator with a long run of small primes, large primes shared
by a few numerators (the product tree's walk) or by most of them (its budget),
zeros, integers, negative numbers.
"""

from __future__ import annotations

from fractions import Fraction

import pytest
from gmpy2 import gcd, is_prime, mpq, mpz
from hypothesis import given, settings
from hypothesis import strategies as st

from exactlp.solver import form, lowest

from .helpers import fraction_route

BIG_PRIMES = [mpz(65537), mpz(1_000_003), mpz(2**61 - 1), mpz(2**89 - 1)]  # Mersenne primes 2^61-1, 2^89-1


def test_the_big_primes_are_prime_and_past_the_bound():
    assert all(is_prime(p) and p > lowest.SMOOTH_BOUND for p in BIG_PRIMES)


@st.composite
def over_one_denominator(draw):
    """A denominator and numerators over it, mixing the structures above."""
    small = draw(st.lists(st.sampled_from([2, 3, 5, 7, 65521]), max_size=40))  # 65521: the largest prime below 2^16
    big = draw(st.lists(st.sampled_from(BIG_PRIMES), max_size=4))
    den = mpz(draw(st.integers(1, 2**1500)))
    for p in small + big:
        den *= p
    common = mpz(draw(st.sampled_from([1, 1, 2, 12, 2**61 - 1])))
    nums = []
    for _ in range(draw(st.integers(1, 70))):
        kind = draw(st.integers(0, 9))
        if kind == 0:
            v = mpz(0)
        elif kind == 1:
            v = den * draw(st.integers(-9, 9))  # an integer value
        elif kind == 2 and big:
            v = draw(st.sampled_from(big)) * draw(st.integers(-(2**200), 2**200))
        elif kind == 3:
            v = mpz(draw(st.sampled_from([2, 3, 5, 7]))) ** draw(st.integers(1, 30)) * draw(st.integers(-50, 50))
        else:
            v = mpz(draw(st.integers(-(2**1600), 2**1600)))
        nums.append(v * common)
    return nums, den * common


class always_shared:
    """The shared work taken whatever the sample says (so that every shape of
    input reaches it), undone on leaving."""

    def __enter__(self):
        self.saved = lowest._pays
        lowest._pays = lambda nums, at, den: True

    def __exit__(self, *exc):
        lowest._pays = self.saved


@settings(max_examples=300, deadline=None)
@given(over_one_denominator())
def test_gcds_are_gmpys_gcds(case):
    nums, den = case
    want = [gcd(v, den) for v in nums]
    got = lowest.gcds_with(nums, den)
    assert got is None or got == want  # None: the caller takes them one by one
    with always_shared():
        got = lowest.gcds_with(nums, den)
    assert got is None or got == want  # None: the large primes shared are too many


@settings(max_examples=200, deadline=None)
@given(over_one_denominator())
def test_lowest_terms_are_the_normalising_constructors(case):
    nums, den = case
    want = [mpq(v, den) for v in nums]
    for forced in (False, True):
        if forced:
            with always_shared():
                got = lowest.lowest_mpq(nums, den)
        else:
            got = lowest.lowest_mpq(nums, den)
        assert [(type(a), int(a.numerator), int(a.denominator)) for a in got] == \
               [(type(b), int(b.numerator), int(b.denominator)) for b in want]
        assert sum(got, mpq(0)) == sum(want, mpq(0))  # and gmpy2 computes with them as with its own


def stair_like(n: int = 200, seed: int = 5):
    """A long denominator (a 2,000-bit prime-free part beside a few small primes)
    and numerators that share only small primes with it, and a few integers: the
    shape of STAIR's basic values, where the shared work pays."""
    import random

    rnd = random.Random(seed)
    rough = mpz(rnd.getrandbits(2000)) | 1
    while any(rough % p == 0 for p in (3, 5, 7, 11, 13)):
        rough += 2
    den = rough * 2**9 * 3**4
    nums = [mpz(rnd.getrandbits(2100)) * rnd.choice([1, 2, 6, 9]) * rnd.choice([1, -1]) for _ in range(n)]
    nums[7] = den * 5  # an integer value
    nums[11] = mpz(0)
    return nums, den


def test_the_shared_work_is_taken_where_it_pays_and_left_where_it_does_not():
    nums, den = stair_like()
    got = lowest.gcds_with(nums, den)
    assert got is not None and got == [gcd(v, den) for v in nums]
    # a few sharing a large prime (none of them in the sample): found through the
    # short product of the shared primes, each then given its long gcd
    p = BIG_PRIMES[3]
    few = [v * p if i in (1, 2, 3, 7) else v for i, v in enumerate(nums)]  # (7: still an integer)
    got = lowest.gcds_with(few, den * p)
    assert got is not None and got == [gcd(v, den * p) for v in few]
    assert [got[i] % p for i in (1, 2, 3)] == [0, 0, 0]
    # one value with a short denominator shares most of the rough part: the
    # shared primes are then long, and the gcds are taken one by one
    short = list(few)
    short[5] = den * 3  # 3 / p over den p
    assert lowest.gcds_with(short, den * p) is None
    # most numerators sharing a large prime with the denominator: one by one
    varied = [v * p if i % 2 else v for i, v in enumerate(nums)]
    assert lowest.gcds_with(varied, den * p) is None
    assert lowest.lowest_mpq(varied, den * p) == [mpq(v, den * p) for v in varied]
    # a short rough part (every gcd apiece short too): one by one
    assert lowest.gcds_with([v % 2**500 for v in nums], mpz(2**300 + 1)) is None


def test_the_smooth_split():
    # S holds the primes below the bound, with their powers; R none of them
    d = mpz(2) ** 40 * mpz(65521) ** 3 * mpz(65537) ** 2 * (mpz(2) ** 61 - 1)
    s, r = lowest.split_smooth(d)
    assert (s, r) == (mpz(2) ** 40 * mpz(65521) ** 3, mpz(65537) ** 2 * (mpz(2) ** 61 - 1))
    assert lowest.split_smooth(mpz(1)) == (1, 1)
    assert lowest.split_smooth(mpz(65537)) == (1, 65537)
    assert lowest.split_smooth(mpz(2) ** 300) == (mpz(2) ** 300, 1)


@pytest.mark.parametrize("path", ["as installed", "slots", "constructor"])
def test_coprime_fraction_is_the_normalising_constructor(path, monkeypatch):
    # each route to a Fraction without a gcd, as for frac() (see test_numbers.py)
    fraction_route(path, monkeypatch)
    for n, d in [(0, 1), (1, 1), (-3, 2), (10**60 + 1, 3 * 10**40), (-(2**521 - 1), 2**127 - 1)]:
        f = form.coprime_fraction(n, d)
        reference = Fraction(n, d)
        assert type(f) is Fraction and (f.numerator, f.denominator) == (reference.numerator, reference.denominator)
        assert hash(f) == hash(reference) and f + Fraction(1, 3) == reference + Fraction(1, 3)
