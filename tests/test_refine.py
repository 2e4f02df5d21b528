"""Exact solves by floating-point refinement (exactlp/solver/refine.py).

Every answer the module gives must be the exact solution: compared here with
SymPy's exact linear algebra, with closed forms, and with the exact factorised
path of the solver on whole models.  None (the caller then factors exactly) is
the only other answer allowed, and the tests say where it must not be given.
"""

from __future__ import annotations

from fractions import Fraction
from math import comb, isqrt

import pytest
from gmpy2 import mpq, mpz
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import exactlp
import exactlp.solver.simplex as simplex
from exactlp.floatlp import BasisHint, highs_available
from exactlp.io import model_from_text, read_mps
from exactlp.solver import refine
from exactlp.solver.form import build_form
from exactlp.solver.simplex import Simplex

from .conftest import NETLIB, needs_netlib, netlib_table
from .helpers import calls_recorded, solve_verified
from .models import KNOWN

np = pytest.importorskip("numpy", reason="refinement needs numpy (the exactlp[fast] extra)")


def columns(rows: list[list]) -> list:
    """A dense matrix, given by rows, as sparse columns of mpq made integer
    (:func:`refine.integer_column`, as the solver hands them over)."""
    n = len(rows)
    return ints([[(i, mpq(rows[i][k])) for i in range(n) if rows[i][k]] for k in range(len(rows[0]))])


def ints(cols) -> list:
    return [refine.integer_column(c) for c in cols]


def sympy_solve(rows: list[list], rhs: list, transpose: bool = False) -> list[Fraction] | None:
    """SymPy's exact solve (the reference library), or None when singular."""
    import sympy

    a = sympy.Matrix([[sympy.Rational(v.numerator, v.denominator) for v in r] for r in rows])
    if transpose:
        a = a.T
    if a.det() == 0:
        return None
    b = sympy.Matrix([sympy.Rational(v.numerator, v.denominator) for v in rhs])
    return [Fraction(int(v.p), int(v.q)) for v in a.LUsolve(b)]


small = st.fractions(min_value=-9, max_value=9, max_denominator=12)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(1, 6).flatmap(lambda n: st.tuples(
    st.lists(st.lists(small, min_size=n, max_size=n), min_size=n, max_size=n),
    st.lists(small, min_size=n, max_size=n))))
def test_primal_and_dual_solves_equal_sympys_exact_ones(case):
    rows, rhs = case
    ref_x, ref_y = sympy_solve(rows, rhs), sympy_solve(rows, rhs, transpose=True)
    try:
        fi = refine.FloatInverse(len(rows), columns(rows))
    except ArithmeticError:
        assert ref_x is None  # singular in floats: only a singular matrix gets here at this size
        return
    x = fi.primal([mpq(v) for v in rhs])
    got = fi.dual([mpq(v) for v in rhs])
    if ref_x is None:  # singular: a consistent system may be solved, never a wrong answer
        assert not fi.nonsingular()
        if x is not None:
            assert [sum(mpq(rows[i][k]) * x[k] for k in range(len(x))) for i in range(len(x))] == rhs
        return
    assert fi.nonsingular()
    assert x is not None and got is not None
    assert all(type(v) is type(mpq(0)) for v in x)
    assert [Fraction(int(v.numerator), int(v.denominator)) for v in x] == ref_x
    y, (ynum, yden) = got
    assert [Fraction(int(v.numerator), int(v.denominator)) for v in y] == ref_y
    assert [mpq(v, yden) for v in ynum] == y  # the scaled form is the same vector


def hilbert_inverse_column(n: int, j: int) -> list[int]:
    """Column j (1-based) of the inverse of the n x n Hilbert matrix, by the closed
    form (M.-D. Choi, "Tricks or treats with the Hilbert matrix", American
    Mathematical Monthly 90, 1983; the formula from memory, checked for n = 3
    against the well-known inverse [[9, -36, 30], [-36, 192, -180], [30, -180, 180]])."""
    return [(-1) ** (i + j) * (i + j - 1) * comb(n + i - 1, n - j) * comb(n + j - 1, n - i) * comb(i + j - 2, i - 1) ** 2
            for i in range(1, n + 1)]


def test_hilbert_closed_form_is_the_known_three_by_three_inverse():
    assert [hilbert_inverse_column(3, j) for j in (1, 2, 3)] == [[9, -36, 30], [-36, 192, -180], [30, -180, 180]]


@pytest.mark.parametrize("n", [3, 6, 8])
def test_ill_conditioned_hilbert_systems_come_out_exact(n):
    # Hilbert matrices are the usual ill-conditioned test (condition about 1e10 at
    # n = 8): each float solve then carries fewer good bits, and the steps shorten
    h = [[Fraction(1, i + j + 1) for j in range(n)] for i in range(n)]
    fi = refine.FloatInverse(n, columns(h))
    for j in (1, n):
        e = [mpq(1 if i == j - 1 else 0) for i in range(n)]
        x = fi.primal(e)
        assert x == [mpq(v) for v in hilbert_inverse_column(n, j)]
        y, _ = fi.dual(e)  # H is symmetric: the same column
        assert y == x
    assert fi.nonsingular()


def bidiagonal(n: int, diag: Fraction, sub: Fraction):
    """Lower bidiagonal columns, ``b``, and the solution by forward substitution in
    Fractions (the reference): ``x_i = (b_i - sub x_(i-1)) / diag``."""
    cols = [[(k, mpq(diag))] + ([(k + 1, mpq(sub))] if k + 1 < n else []) for k in range(n)]
    b = [mpq(1, 1 + i % 4) for i in range(n)]
    x, prev = [], Fraction(0)
    for i in range(n):
        prev = (Fraction(int(b[i].numerator), int(b[i].denominator)) - sub * prev) / diag
        x.append(prev)
    return cols, b, x


def test_long_denominators_are_recovered_exactly():
    # diagonal 7/3, subdiagonal -2/5: x_i = (3/7)(b_i + 2/5 x_(i-1)) stays below 1,
    # while its denominator grows like 35^i: about 770 bits at n = 150
    cols, b, x = bidiagonal(150, Fraction(7, 3), Fraction(-2, 5))
    got = refine.FloatInverse(150, ints(cols)).primal(b)
    assert got is not None
    assert [Fraction(int(v.numerator), int(v.denominator)) for v in got] == x
    assert x[-1].denominator.bit_length() > 700


def test_values_past_a_word_are_left_to_exact_factorisation():
    # diagonal 5/11, subdiagonal -7/3: x_i grows like (77/15)^i, past 2^300 at n =
    # 150; a step's integers must fit 64-bit words, so this method declines
    cols, b, x = bidiagonal(150, Fraction(5, 11), Fraction(-7, 3))
    assert abs(x[-1]) > 2**300
    assert refine.FloatInverse(150, ints(cols)).primal(b) is None


def test_a_long_right_hand_side_takes_a_first_step_of_zero_bits():
    # b near 2^60: round(xh) itself must fit a word before the steps of k bits begin
    rows = [[Fraction(2), Fraction(1)], [Fraction(1), Fraction(3)]]
    rhs = [mpq(2**60 + 1), mpq(-(2**59) + 7, 3)]
    x = refine.FloatInverse(2, columns(rows)).primal(rhs)
    assert [Fraction(int(v.numerator), int(v.denominator)) for v in x] == sympy_solve(rows, [Fraction(int(v.numerator), int(v.denominator)) for v in rhs])


def test_nonsingular_is_decided_modulo_a_prime():
    three = [[Fraction(1), Fraction(2), Fraction(0)], [Fraction(0), Fraction(1), Fraction(1)],
             [Fraction(1), Fraction(3), Fraction(1)]]  # row 3 = row 1 + row 2
    fi = refine.FloatInverse.__new__(refine.FloatInverse)  # integer data only: no float inverse needed
    fi.m, fi.rows, fi.cols, fi.vals = 3, [0, 0, 1, 1, 2, 2, 2], [0, 1, 1, 2, 0, 1, 2], [1, 2, 1, 1, 1, 3, 1]
    assert not fi.nonsingular()
    three[2][2] = Fraction(2)
    fi.vals = [1, 2, 1, 1, 1, 3, 2]
    assert fi.nonsingular()
    # det = p itself is 0 modulo p: "not proven", and the caller factors exactly
    p = refine.NONSINGULAR_PRIME
    fi.m, fi.rows, fi.cols, fi.vals = 1, [0], [0], [p]
    assert not fi.nonsingular() and fi.nonsingular(p=7)


def test_the_prime_is_prime():
    import sympy

    # below 2^26: the dense tail's lazy reduction relies on it (see _dense_mod)
    assert sympy.isprime(refine.NONSINGULAR_PRIME) and refine.NONSINGULAR_PRIME < 2**26


def sparse_triples(rows: list[list[int]]):
    n = len(rows)
    got = [(i, j, rows[i][j]) for i in range(n) for j in range(n) if rows[i][j]]
    return [t[0] for t in got], [t[1] for t in got], [t[2] for t in got]


def nonsingular_both_ways(rows: list[list[int]], p: int) -> tuple[bool, bool]:
    """The check as it runs (dense once the active part fills in) and with the
    dense tail switched off (sparse steps to the end)."""
    r, c, v = sparse_triples(rows)
    n = len(rows)
    with_tail = refine._nonsingular_mod(n, r, c, v, p, 10**9)
    old = refine.DENSE_FILL
    refine.DENSE_FILL = 0  # no share filled is enough: never dense
    try:
        sparse_only = refine._nonsingular_mod(n, r, c, v, p, 10**9)
    finally:
        refine.DENSE_FILL = old
    return with_tail, sparse_only


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(24, 40), st.sampled_from([0.25, 0.5, 1.0]), st.integers(0, 2**32 - 1), st.booleans())
def test_the_dense_tail_agrees_with_sympys_determinant(n, share, seed, dependent):
    # SymPy's exact determinant (the reference library) taken modulo the prime
    import random

    import sympy

    rnd = random.Random(seed)
    rows = [[rnd.randint(-9, 9) if rnd.random() < share else 0 for _ in range(n)] for _ in range(n)]
    if dependent:  # one row a combination of two others: singular over Q, so modulo p too
        rows[n - 1] = [3 * a - 2 * b for a, b in zip(rows[0], rows[1])]
    p = refine.NONSINGULAR_PRIME
    want = sympy.Matrix(rows).det(method="bareiss") % p != 0
    assert nonsingular_both_ways(rows, p) == (want, want)


def test_the_dense_tail_sees_a_determinant_that_the_prime_divides():
    # L U with L unit lower and U upper, both full: dense from the first step, and
    # det = product of U's diagonal = 5 p, nonzero but 0 modulo p; with 7 instead
    # of p on the diagonal, 35 (nonzero modulo p)
    import random

    rnd = random.Random(11)
    n, p = 30, refine.NONSINGULAR_PRIME
    lower = [[1 if i == j else rnd.randint(-4, 4) if j < i else 0 for j in range(n)] for i in range(n)]
    for last in (p, 7):
        upper = [[(5 if i == 0 else last if i == n - 1 else 1) if i == j else rnd.randint(-4, 4) if j > i else 0
                  for j in range(n)] for i in range(n)]
        rows = [[sum(lower[i][k] * upper[k][j] for k in range(n)) for j in range(n)] for i in range(n)]
        assert sum(1 for row in rows for a in row if a) > 0.9 * n * n
        expected = last != p
        assert nonsingular_both_ways(rows, p) == (expected, expected)


def test_the_dense_tail_stays_exact_with_residues_near_the_prime():
    # every entry p - 1 - (small): the lazily reduced entries grow by about
    # p^2 a step over 100 steps, which must neither wrap nor lose a residue; the
    # sparse steps (all residues reduced at once) give the reference
    import random

    rnd = random.Random(3)
    p = refine.NONSINGULAR_PRIME
    n = 100
    rows = [[p - 1 - rnd.randint(0, 1000) for _ in range(n)] for _ in range(n)]
    assert nonsingular_both_ways(rows, p) == (True, True)
    rows[7] = [(a + b) % p for a, b in zip(rows[3], rows[5])]  # dependent modulo p
    assert nonsingular_both_ways(rows, p) == (False, False)


def test_the_dense_tail_counts_toward_the_budget():
    # a full 40 x 40 matrix goes dense at once: 40^3 / (3 * 16) = 1,333 updates'
    # worth; a budget under that gives up (unproven), one over it decides
    n, p = 40, refine.NONSINGULAR_PRIME
    rows = [[200 if i == j else (i * 7 + j * 3) % 5 + 1 for j in range(n)] for i in range(n)]  # diagonally dominant
    r, c, v = sparse_triples(rows)
    import sympy

    assert sympy.Matrix(rows).det(method="bareiss") % p != 0
    work = n ** 3 // (3 * refine.DENSE_RATIO)
    assert not refine._nonsingular_mod(n, r, c, v, p, work - 1)
    assert refine._nonsingular_mod(n, r, c, v, p, work)


@pytest.mark.parametrize("a, s", [(355, 113), (-1, 3), (2**70 + 1, 3**40), (0, 1), (7, 1)])
def test_common_denominator_from_a_binary_approximation(a, s):
    bits = 4 * max(s.bit_length(), 8) + abs(a).bit_length()
    x = mpz((mpz(a) << bits) // s)  # a / s to ``bits`` binary places, rounded down: error < 1 unit
    q, failed = refine._denominator([x], [2], bits)
    assert (q, failed) == (s, None)
    # too few places to tell: None, and the component that could not be settled
    if s > 1000:
        assert refine._denominator([x >> (bits - 8)], [2], 8) == (None, 0)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.integers(-10**30, 10**30), st.integers(1, 3)), min_size=1, max_size=6),
       st.lists(st.integers(1, 60), min_size=1, max_size=3), st.sampled_from([0, 1, 8, 64, 200]),
       st.integers(-2, 2), st.sampled_from([1, 2, 3]))
def test_candidate_rounding_is_the_denominator_then_the_nearest_integer(comps, factors, bits, jitter, q0):
    # _rounded finds the common denominator as _denominator does and rounds each
    # q x_i / 2^bits under the final q, a half down: the definition, spelled out
    s = 1
    for f in factors:
        s *= f
    xs = [mpz((mpz(a) << bits) // (s if k == 1 else f) + jitter) for (a, k), f in zip(comps, factors * 6)]
    errs = [k for _, k in comps]
    q, failed = refine._denominator(xs, errs, bits, mpz(q0))
    got = refine._rounded(xs, errs, bits, mpz(q0))
    if q is None:
        assert got == (None, failed)
        return
    den = 1 << bits
    # spelled out on Fractions: the nearest integer, a tie (exactly a half) going down
    want = [int((Fraction(int(q * x), den) + Fraction(1, 2)).__floor__()) if (int(q * x) * 2) % (2 * den) != den
            else int(q * x) // den for x in xs]
    assert got[0] == q and got[1] == want


def fresh_and_resumed(a: int, s: int, precisions: list[int], tol: int = 2):
    """``a / s`` to each number of binary places in turn (rounded down), its
    denominator reconstructed afresh and with one memo carried from call to call."""
    memo = [None]
    out = []
    for bits in precisions:
        den = mpz(1) << bits
        value = (mpz(a) << bits) // s % den
        if not 0 < value < den:
            continue
        bound = int(isqrt(den // (2 * tol)))
        out.append((refine._reconstruct(value, den, tol, bound), refine._reconstruct(value, den, tol, bound, memo)))
    return out


@settings(max_examples=300, deadline=None)
@given(st.integers(1, 2**400), st.integers(2, 2**200), st.lists(st.integers(8, 1200), min_size=1, max_size=8),
       st.integers(1, 9))
def test_resumed_continued_fractions_give_what_fresh_ones_give(a, s, precisions, tol):
    # the memo only saves work: each call answers exactly as a fresh one, whether
    # the precisions grow (as the refinement's tries do) or jump about
    for fresh, resumed in fresh_and_resumed(a, s, sorted(precisions), tol):
        assert resumed == fresh
    for fresh, resumed in fresh_and_resumed(a, s, precisions, tol):
        assert resumed == fresh


@settings(max_examples=300, deadline=None)
@given(st.integers(1, 2**300), st.integers(2, 2**150), st.integers(1, 2**160), st.integers(1, 2**160))
def test_a_memo_that_is_not_a_pair_of_convergents_is_not_used(a, s, s0, s1):
    # any pair at all: _resumed accepts it only when it is a pair of consecutive
    # convergents of value / den, and the answer is the fresh one either way
    bits = 700
    den = mpz(1) << bits
    value = (mpz(a) << bits) // s % den
    if not 0 < value < den:
        return
    bound = int(isqrt(den // 4))
    assert refine._reconstruct(value, den, 2, bound, [(mpz(s0), mpz(s1))]) == refine._reconstruct(value, den, 2, bound)
    got = refine._resumed(value, den, mpz(s0), mpz(s1))
    if got is not None:  # then the two are convergents: h / s0 and h' / s1 from the fraction's own expansion
        import sympy

        convergents = [c.q for c in sympy.continued_fraction_convergents(
            sympy.continued_fraction_iterator(sympy.Rational(int(value), int(den))))]
        assert int(s0) in convergents and int(s1) in convergents
        assert convergents.index(int(s1)) == convergents.index(int(s0)) + 1


def test_the_refinements_tries_resume_their_continued_fractions():
    # the probes' memos carry over: each try after the first resumes (none
    # starts afresh), and the answer is the exact solution
    cols, b, x = bidiagonal(60, Fraction(7, 3), Fraction(-2, 5))
    fi = refine.FloatInverse(60, ints(cols))
    with calls_recorded(refine, "_resumed") as calls:
        got = fi.primal(b)
    assert [Fraction(int(v.numerator), int(v.denominator)) for v in got] == x
    assert len(calls) >= 4 and all(calls)


@settings(max_examples=150, deadline=None)
@given(st.integers(1, 10).flatmap(lambda m: st.tuples(
    st.just(m),
    st.lists(st.tuples(st.sampled_from([8, 16, 24, 40, 48, 56]),
                       st.lists(st.one_of(st.integers(-(2**62) + 1, 2**62 - 1),
                                          st.sampled_from([0, -1, 1, 2**48 - 1, -(2**48), 2**62 - 1, -(2**62) + 1])),
                                min_size=m, max_size=m)),
             min_size=1, max_size=12),
    st.booleans(), st.sampled_from([9, 1, 0]))))
def test_combined_steps_are_the_sum_of_the_steps(case):
    # X_i = sum_t xt_t 2^(bits of the later steps), by the offset digits (all
    # passes, or too few passes and the steps carried in turn instead), against
    # the sum made in Python integers; a first step of 0 bits included
    m, steps, zero_first, passes = case
    if zero_first:
        steps = [(0, steps[0][1])] + steps[1:]
    chunks = [(k, np.array(xs, dtype=np.int64)) for k, xs in steps]
    want = []
    for i in range(m):
        x = 0
        for k, xs in steps:
            x = (x << k) + xs[i]
        want.append(x)
    saved = refine.CARRY_PASSES
    refine.CARRY_PASSES = passes
    try:
        got = refine._combine(m, chunks)
    finally:
        refine.CARRY_PASSES = saved
    assert all(type(v) is type(mpz(0)) for v in got) and [int(v) for v in got] == want
    assert [int(refine._combine(m, chunks, only=i)) for i in range(m)] == want


def test_too_many_rows_or_long_entries_are_left_to_exact_factorisation(monkeypatch):
    monkeypatch.setattr(refine, "MAX_ROWS", 1)
    with pytest.raises(ArithmeticError, match="too many rows"):
        refine.FloatInverse(2, columns([[Fraction(1), Fraction(0)], [Fraction(0), Fraction(1)]]))
    monkeypatch.undo()
    with pytest.raises(ArithmeticError, match="too long"):
        refine.FloatInverse(1, ints([[(0, mpq(2**41))]]))
    with pytest.raises(ArithmeticError, match="singular in floating point"):
        refine.FloatInverse(2, columns([[Fraction(1), Fraction(2)], [Fraction(2), Fraction(4)]]))


def blas_threads() -> int:
    """The thread count of the BLAS libraries the solver's limit acts on: those
    loaded when it first looked (numpy's, which makes the inverse; a BLAS that
    another library loads later, such as scipy's own copy, is not numpy's)."""
    refine._load_controller()
    return max((i["num_threads"] for i in refine._controller.info() if i["user_api"] == "blas"), default=1)


def test_an_inverse_made_in_the_background_is_the_same_and_blas_gets_its_threads_back(monkeypatch):
    pytest.importorskip("threadpoolctl")
    monkeypatch.setattr(refine, "BACKGROUND_ROWS", 1)
    n = 8  # the Hilbert matrix (condition number about 1.5e10): refinement takes many steps
    rows = [[Fraction(1, i + j + 1) for j in range(n)] for i in range(n)]
    rhs = [mpq(i - 5, 7) for i in range(n)]
    before = blas_threads()
    inline = refine.FloatInverse(n, columns(rows))
    made = refine.FloatInverse(n, columns(rows), background=True)
    assert made._worker is not None and blas_threads() == 1  # held to one thread meanwhile
    x = made.primal(rhs)
    assert made._worker is None and not made._limiter and blas_threads() == before
    assert x == inline.primal(rhs) == [mpq(v.numerator, v.denominator) for v in sympy_solve(rows, [
        Fraction(int(v.numerator), int(v.denominator)) for v in rhs])]
    # The two float inverses come from the same LAPACK call, but on one BLAS thread
    # against the default count: some BLAS builds (numpy 1.24's OpenBLAS) then differ
    # in the last bits of an ill-conditioned matrix. Only the exact answers above
    # must agree; the inverses need only be the same to float rounding.
    assert np.allclose(made.inv, inline.inv, rtol=1e-5, atol=0)


def test_a_singular_basis_inverted_in_the_background_gives_none(monkeypatch):
    pytest.importorskip("threadpoolctl")
    monkeypatch.setattr(refine, "BACKGROUND_ROWS", 1)
    before = blas_threads()
    fi = refine.FloatInverse(2, columns([[Fraction(1), Fraction(2)], [Fraction(2), Fraction(4)]]), background=True)
    assert fi.primal([mpq(1), mpq(2)]) is None and fi.dual([mpq(1), mpq(2)]) is None
    with pytest.raises(ArithmeticError, match="singular in floating point"):
        fi.inv
    assert blas_threads() == before


def test_no_thread_to_be_had_means_inline_and_blas_given_back(monkeypatch):
    pytest.importorskip("threadpoolctl")
    import threading

    def refuse(self):
        raise RuntimeError("can't start new thread")

    monkeypatch.setattr(refine, "BACKGROUND_ROWS", 1)
    monkeypatch.setattr(threading.Thread, "start", refuse)
    before = blas_threads()
    fi = refine.FloatInverse(2, columns([[Fraction(2), Fraction(1)], [Fraction(1), Fraction(1)]]), background=True)
    assert fi._worker is None and not fi._limiter and blas_threads() == before and refine._blas_holders == 0
    assert fi.primal([mpq(3), mpq(2)]) == [mpq(1), mpq(1)]


class _Refusing:
    def limit(self, **kw):
        raise RuntimeError("cannot set this BLAS")


@pytest.mark.parametrize("controller", [False, _Refusing()], ids=["not installed", "refuses"])
def test_without_a_blas_limit_the_inverse_is_made_inline(monkeypatch, controller):
    monkeypatch.setattr(refine, "BACKGROUND_ROWS", 1)
    monkeypatch.setattr(refine, "_controller", controller)
    fi = refine.FloatInverse(2, columns([[Fraction(2), Fraction(1)], [Fraction(1), Fraction(1)]]), background=True)
    assert fi._worker is None and not fi._limiter
    assert fi.primal([mpq(3), mpq(2)]) == [mpq(1), mpq(1)]


# -- the solver's refined start, against its factorised one --------------------

def optimal_hint(model) -> BasisHint:
    r = exactlp.solve(model, warm_start=False)
    return BasisHint(tuple(r.basis_columns), frozenset(r.at_upper_columns), "test", "optimal")


@pytest.mark.parametrize("case", [k for k in KNOWN if k[2] == "optimal" and "constraints" in k[1]], ids=lambda k: k[0])
def test_refined_start_gives_the_factorised_starts_answer(monkeypatch, case):
    model = model_from_text(case[1])
    hint = optimal_hint(model)
    form = build_form(model)
    plain = Simplex(form, hint=hint)
    out_plain = plain.run()
    monkeypatch.setattr(simplex, "REFINE_WHEN", 0)  # every basis by refinement
    sx = Simplex(form, hint=hint, refine=True)
    assert sx.warm.accepted and sx.warm.reason.endswith("(solved by refinement, checked exactly)")
    assert sx._basis is None  # not factored
    out = sx.run()
    assert out.status == out_plain.status == "optimal"
    assert out.z == out_plain.z and out.y == out_plain.y
    assert [sx.x[j] for j in range(form.n)] == [plain.x[j] for j in range(form.n)]
    assert all(type(v) is type(mpq(0)) for v in out.y)
    assert sx._basis is None  # an optimal suggestion never needed the factors
    assert form.sign * out.z + form.constant == case[3]


def test_refined_start_that_must_pivot_factors_then(monkeypatch):
    # an optimal basis of a neighbour: feasible here, not optimal, so phase 2 pivots
    # and the basis is factored on first use
    text = KNOWN[0][1]
    model = model_from_text(text)
    hint = optimal_hint(model)
    changed = model_from_text(text.replace("maximize: 5 x1 + 4 x2 + 3 x3", "maximize: 5 x1 + 4 x2 + 9 x3"))
    monkeypatch.setattr(simplex, "REFINE_WHEN", 0)
    sx = Simplex(build_form(changed), hint=hint, refine=True)
    assert sx.warm.accepted and sx._basis is None
    out = sx.run()
    assert out.status == "optimal" and sx._basis is not None and sx.iterations >= 1
    assert build_form(changed).sign * out.z == solve_verified(changed, warm_start=False).objective


@needs_netlib
@pytest.mark.skipif(not highs_available(), reason="the warm start needs highspy")
@pytest.mark.parametrize("name", ["GROW7", "STAIR"])
def test_netlib_bases_with_long_numbers_are_solved_by_refinement(monkeypatch, name):
    # Their nuclei hold over 50,000 bits (REFINE_WHEN): refined, and the answer is
    # the factorised path's to the last digit, with a certificate the verifier accepts
    row = netlib_table()[name]
    m = read_mps(NETLIB / row["file"])
    r = solve_verified(m, warm_start=True)
    assert r.warm_start == "accepted: the suggested basis is exactly primal feasible (solved by refinement, checked exactly)"
    monkeypatch.setattr(simplex, "REFINE_WHEN", 10**12)
    f = solve_verified(m, warm_start=True)
    assert f.warm_start == "accepted: the suggested basis is exactly primal feasible"
    assert (r.objective, r.primal, r.duals, r.reduced_costs) == (f.objective, f.primal, f.duals, f.reduced_costs)
    assert r.iterations == f.iterations == 0


def test_refined_values_outside_their_bounds_go_to_the_repair_as_before(monkeypatch):
    # the infeasible suggestion of test_netlib's repair test: refinement finds the
    # basic values, one lies outside its bounds, so the basis is factored exactly
    # and repaired from there, with those same values (no second solve)
    m = model_from_text("maximize: x + y\nvariables: {x: {}, y: {}}\nconstraints:\n  a: x + 2 y <= 4\n  b: 3 x + y <= 6\n")
    form = build_form(m)
    hint = BasisHint(basic=(0, 3), at_upper=frozenset({2}), source="test", float_status="made up")
    plain = Simplex(form, hint=hint)
    monkeypatch.setattr(simplex, "REFINE_WHEN", 0)
    sx = Simplex(form, hint=hint, refine=True)
    assert sx._basis is not None and set(sx.repair) == set(plain.repair) == {3}
    assert sx.x == plain.x and sx.warm == plain.warm
    out = sx.run()
    assert out.status == "optimal" and form.sign * out.z == solve_verified(m, warm_start=False).objective


def test_integer_columns_made_ahead_are_the_ones_made_on_demand():
    cols = [[(0, mpq(1, 6)), (2, mpq(-3, 4))], [(1, mpq(5))], [(0, mpq(2**45))], []]
    ahead = refine.IntegerColumns(cols)
    calls = []
    ahead.fill_while(lambda: calls.append(1) or len(calls) < 2)  # asked at column 0 only: all four made
    assert ahead.done == 4 and calls == [1]
    assert ahead.made == [(mpz(12), [(0, 2), (2, -9)]), (mpz(1), [(1, 5)]), None, (mpz(1), [])]
    lazy = refine.IntegerColumns(cols)
    lazy.fill_while(lambda: False)
    assert lazy.done == 0 and [lazy[j] for j in range(4)] == ahead.made


def test_refinement_and_its_check_are_bounded(monkeypatch):
    # a time limit or an interruption ends the refinement (None: the exact path
    # then runs under the same limit), and the nonsingularity check gives up
    # (unproven) past its budget of row operations
    cols, b, x = bidiagonal(150, Fraction(7, 3), Fraction(-2, 5))
    fi = refine.FloatInverse(150, ints(cols))
    asked = []
    fi.expired = lambda: asked.append(1) or True
    assert fi.primal(b) is None and asked == [1]
    fi.expired = None
    assert fi.primal(b) is not None
    h = [[Fraction(1, i + j + 1) for j in range(6)] for i in range(6)]
    dense = refine.FloatInverse(6, columns(h))
    assert dense.nonsingular()
    monkeypatch.setattr(refine, "NONSINGULAR_BUDGET", 10)
    assert not dense.nonsingular()


@needs_netlib
@pytest.mark.skipif(not highs_available(), reason="the warm start needs highspy")
def test_the_switch_interval_is_put_back_after_the_work_beside_highs():
    import sys

    before = sys.getswitchinterval()
    m = read_mps(NETLIB / netlib_table()["STAIR"]["file"])
    exactlp.solve(m, warm_start=True)
    assert sys.getswitchinterval() == before


def test_fixed_columns_reduced_costs_come_from_the_same_scaled_duals(monkeypatch):
    # Pricing skips a fixed column (it cannot move), but the result reports its
    # reduced cost: at an optimal first pricing it is filled in from the same
    # (D y, D) as the rest.  By hand: a = 3, b = 5 with c fixed at 2; the duals
    # are 2 on "cap" (b's column) and 1 on "mix" (3 = 2 + 1 for a), so c's reduced
    # cost is 4 - (2 * 1 + 1 * 3) = -1 in the model's (maximising) sense.
    text = ("maximize: 3 a + 2 b + 4 c\nvariables: {a: {}, b: {}, c: {lower: 2, upper: 2}}\n"
            "constraints:\n  cap: a + b + c <= 10\n  mix: a + 3 c <= 9\n")
    model = model_from_text(text)
    hint = optimal_hint(model)
    monkeypatch.setattr(simplex, "REFINE_WHEN", 0)
    form = build_form(model)
    sx = Simplex(form, hint=hint, refine=True)
    assert sx.warm.accepted and sx.warm.reason.endswith("(solved by refinement, checked exactly)")
    out = sx.run()
    c = [v.name for v in model.variables].index("c")
    assert out.status == "optimal" and out.d[c] == mpq(1)  # minimising -3a - 2b - 4c inside
    r = solve_verified(model, start_basis=hint)
    assert r.reduced_costs["c"] == Fraction(-1) and type(r.reduced_costs["c"]) is Fraction
    assert (r.duals["cap"], r.duals["mix"], r.objective) == (Fraction(2), Fraction(1), Fraction(27))


@pytest.mark.skipif(not highs_available(), reason="the warm start needs highspy")
def test_the_collector_is_paused_for_a_warm_solve_only_and_resumed():
    import gc

    seen = []
    m = model_from_text(KNOWN[0][1])
    assert gc.isenabled()
    r = exactlp.solve(m, warm_start=True, listener=lambda e: seen.append(gc.isenabled()))
    assert r.status.is_proven and seen and not any(seen) and gc.isenabled()
    seen.clear()
    exactlp.solve(m, warm_start=False, listener=lambda e: seen.append(gc.isenabled()))
    assert seen and all(seen)  # a cold solve leaves it alone
    # resumed after an error too; and one paused by the caller stays paused
    with pytest.raises(RuntimeError, match="stop here"):
        exactlp.solve(m, warm_start=True, listener=lambda e: (_ for _ in ()).throw(RuntimeError("stop here")))
    assert gc.isenabled()
    gc.disable()
    try:
        exactlp.solve(m, warm_start=True)
        assert not gc.isenabled()
    finally:
        gc.enable()


@pytest.mark.parametrize("warm", [False, True], ids=["cold", "warm"])
def test_solves_leave_nothing_to_the_cyclic_collector(warm):
    # what lets a warm solve pause the collector (see the test above): the solver
    # makes no reference cycles, so its objects go by their counts.  Every known
    # model (optimal, infeasible and unbounded, with the certificate built and
    # verified), a generated network, and where present ADLITTLE and SCSD6 from
    # the Netlib LP set; each solved once before the count, so that what a first
    # solve imports or caches (a lazy import's classes refer to each other) is not
    # counted.  Measured at 0 on BANDM, STAIR, PILOT4, GROW7, D6CUBE, SC205 and
    # SHIP04L, cold and warm, in the twenty-fifth session.
    import gc

    from .helpers import network

    if warm and not highs_available():
        pytest.skip("the warm start needs highspy")
    models = [model_from_text(k[1]) for k in KNOWN] + [network(8, 12, 4)]
    if NETLIB is not None:
        models += [read_mps(NETLIB / netlib_table()[name]["file"]) for name in ("ADLITTLE", "SCSD6")]
    for m in models:
        solve_verified(m, warm_start=warm)
    gc.collect()
    was = gc.isenabled()
    gc.disable()
    try:
        statuses = [solve_verified(m, warm_start=warm).status.value for m in models]
        left = gc.collect()
    finally:
        if was:
            gc.enable()
    assert statuses[:len(KNOWN)] == [k[2] for k in KNOWN]
    assert left == 0


def test_overlapping_solves_hand_the_process_settings_back_in_any_order():
    # two solves on two threads: the first to start may end first; the BLAS limit
    # and the collector's pause are counted, so the last to end puts back what was
    # there before the first began (a plain save and restore left BLAS on one thread)
    import gc

    from exactlp.solver import _collector_paused

    pytest.importorskip("threadpoolctl")
    before = blas_threads()
    assert refine._one_blas_thread() and refine._one_blas_thread()
    assert blas_threads() == 1
    refine._release_blas()
    assert blas_threads() == 1  # the other still holds it
    refine._release_blas()
    assert blas_threads() == before and refine._blas_holders == 0
    first, second = _collector_paused(True), _collector_paused(True)
    first.__enter__()
    second.__enter__()
    first.__exit__(None, None, None)
    assert not gc.isenabled()  # the second is still running
    second.__exit__(None, None, None)
    assert gc.isenabled()


@pytest.mark.parametrize("source", ["KNOWN", "SCSD6", "STAIR"])
def test_integer_columns_made_beside_highs_serve_the_pivot_loop_as_its_own(source):
    # Simplex._int_cols takes each column made ahead for the warm start's check
    # (refine.IntegerColumns) instead of making it again: the same scale, rows and
    # integers as its own, column by column
    if source == "KNOWN":
        models = [model_from_text(k[1]) for k in KNOWN if "constraints" in k[1]]
    else:
        if NETLIB is None:
            pytest.skip("../shared/netlib is absent")
        models = [read_mps(NETLIB / netlib_table()[source]["file"])]
    for model in models:
        form = build_form(model)
        ahead = refine.IntegerColumns(form.cols)
        ahead.fill_while(lambda: True)
        own = Simplex(build_form(model))._int_cols()
        sx = Simplex(form, integer_columns=ahead)
        taken = sx._int_cols()
        assert len(own) == len(taken) == len(sx.cols)
        probe = list(range(1, sx.m + 1))
        for j, ((e1, p1, v1), (e2, p2, v2)) in enumerate(zip(own, taken)):
            assert e1 == e2 and (p1 is None) == (p2 is None), j
            if p1 is None:
                assert [(i, int(v)) for i, v in v1] == [(i, int(v)) for i, v in v2], j
            else:
                assert p1(probe) == p2(probe) and [int(v) for v in v1] == [int(v) for v in v2], j
