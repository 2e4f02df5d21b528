"""Exact solutions of a basis's linear systems by floating-point refinement.

Used to check a suggested basis (the warm start) without factoring it
exactly: the basic values ``x_B`` (``B x_B = r``) and the duals ``y``
(``B^T y = c_B``) are found as below, and each is then checked exactly.  A
check that fails, or a refinement that stalls, gives None, and the caller
factors the basis exactly as before; so nothing here can change a result:
floating point only proposes, and exact arithmetic decides.

The method is numeric refinement with exact residuals, then rational
reconstruction (from memory, after Z. Wan, "An algorithm to solve integer
linear systems exactly using numerical methods", J. Symbolic Computation 41,
2006):

* Scale each column of the basis by the least common multiple of its
  denominators (``A = B E``), and the right-hand side by the common multiple
  of its own: integer systems ``A z = b`` for ``B x = r`` (``x = E z / d``)
  and ``A^T z = b`` for ``B^T y = c`` (``E B^T y = E c``).
* Keep an integer residual ``r`` (first ``b``) and integers ``X`` and ``K``
  with ``A X = 2^K b - r``.  Each step solves ``A xh = r`` in double
  precision, rounds ``2^k xh`` to integers ``xt``, and sets
  ``r <- 2^k r - A xt`` (exactly), ``X <- 2^k X + xt``, ``K <- K + k``.
  Since ``xh`` solves the system to about ``eps cond(A)`` relative, ``r``
  stays as short as ``b`` and ``A`` while ``2^K`` grows ``k`` bits a step,
  and the error ``x - X / 2^K = A^-1 r / 2^K`` shrinks by as much.
* The exact ``x = adj(A) b / det(A)`` has denominators dividing ``det A``.
  Once ``2^K`` is past about twice their length, the continued fraction of
  ``X_i / 2^K`` finds them: a common denominator ``q`` is grown component by
  component (after the first, most components need no factor of their own).
* The candidate ``n / q`` is checked exactly: ``A n = q b`` in integers.  A
  nonsingular ``A`` has one solution, so a candidate that passes is it; and
  ``A`` is proven nonsingular apart (:meth:`FloatInverse.nonsingular`).

The residual is computed in 64-bit words that wrap around (numpy's unsigned
arithmetic is modular): ``2^k r`` and ``A xt`` may each overflow, but their
difference is short, and a short number is exact modulo ``2^64``.  A step
whose new residual is not short (the float solve was too poor for ``k``
bits, or a value wrapped) is taken again with a smaller ``k``.  (A wrapped
value that happens to look short would break ``A X = 2^K b - r``; the final
check then fails, and the answer is None.)

Floating point here never reaches a number of a result unchecked: it only
proposes ``xt``; every residual is exact, and the answer is checked exactly.
"""

from __future__ import annotations

import threading
from math import frexp as _frexp
from math import isfinite as _isfinite

from gmpy2 import f_mod_2exp as _f_mod_2exp
from gmpy2 import isqrt as _isqrt
from gmpy2 import lcm as _lcm
from gmpy2 import mpq, mpz

from .lowest import lowest_mpq

ONE = mpz(1)

#: the float inverse is dense: bases with more rows than this are factored exactly
MAX_ROWS = 1500
#: entries of the integer matrix must be shorter than this many bits, and
#: those of a scaled right-hand side shorter than RHS_BITS, so that the
#: residuals fit 64-bit words
ENTRY_BITS = 40
RHS_BITS = 62
#: a residual entry this long or longer means the step went too far
RESIDUAL_BITS = 56
#: the most bits taken per step (a double carries 53, less the condition
#: number's); each step's bits are a multiple of 8, so that the steps'
#: integers pack into bytes (see :func:`_combine`)
STEP_MOST = 48
#: the refinement gives up past this many bits in all (the Netlib bases up to
#: 1,000 rows have denominators of at most about 8,500 bits: see basis.py)
MAX_BITS = 40_000
#: a few components are tried for their denominators at K = this many bits,
#: then each time K has grown by a share (TRY_SHARE; by a fifth after a try in
#: which they came out but another component did not)
FIRST_TRY = 64
#: how many components are followed to learn when K suffices: the largest at
#: the start, and SPREAD_PROBES more spread evenly over the vector (with them,
#: GROW7's x_B 6.0 -> 4.9 ms, median of 16, where the largest four came out a
#: try before the rest; STAIR, GROW15 the same; 8 no better)
PROBES = 4
SPREAD_PROBES = 4
#: after a try, the next comes once K has grown by 1 / TRY_SHARE (the continued
#: fractions resume from one try to the next, so a try costs little; the primal and
#: dual solves, best of 15 in one process: STAIR 53.7 -> 52.2 ms, PILOT4 89.7 -> 84.5,
#: GROW22 59.7 -> 52.8, GROW15 38.1 -> 39.1, against 2; 3 and 6 no better)
TRY_SHARE = 4
#: bases of at least this many rows are inverted on a thread of their own when
#: asked (see FloatInverse): below it, the thread's start and the BLAS limit
#: (about 0.1 ms together) cost more than the overlap saves
BACKGROUND_ROWS = 100
#: the prime of the nonsingularity check: under 2^26, so that the dense tail can
#: reduce lazily (see :func:`_dense_mod`), and every residue is one digit of a
#: Python integer (a prime near 2^61 took half as long again).  A nonzero
#: determinant that it divides only costs time: the basis is then factored
#: exactly, which decides
NONSINGULAR_PRIME = (1 << 26) - 5
#: ... which gives up (unproven) past this many entry updates, about a second
#: (STAIR's basis needs 32,000)
NONSINGULAR_BUDGET = 2_000_000
#: the check turns dense once at least one in DENSE_FILL of the active part's
#: entries is nonzero and DENSE_FROM rows or more are left; the dense tail's
#: ``n^3 / 3`` element operations count as one entry update per DENSE_RATIO
#: toward the budget
DENSE_FILL = 5
DENSE_FROM = 24
DENSE_RATIO = 16


def _reconstruct(value: int, den: int, tol: int, bound: int, memo: list | None = None) -> int:
    """The least ``s <= bound`` with ``|s value - h den| <= s tol`` for an integer
    ``h``, among the convergents ``h / s`` of ``value / den`` (``0 < value < den``);
    0 if there is none.

    A convergent is the best approximation of its size: if ``value / den`` lies
    within ``tol / den`` of a fraction ``a / s`` with ``2 s^2 tol < den``, that
    fraction is one of the convergents.  Along the Euclidean algorithm on
    ``(value, den)``, ``|s value - h den|`` for the convergent just formed is
    the remainder just computed, so no product is needed to test it.

    ``memo``, a one-item list, carries a pair of consecutive convergents'
    denominators from one call to the next for the same number known more
    precisely (the refinement's next try): the call resumes there when the
    pair is still a pair of convergents of the new ``value / den`` (see
    :func:`_resumed`), and keeps the last pair with ``s <= bound / 4`` for the
    next (those of an approximation within ``tol / den`` are shared with any
    closer one: ``s^2 tol / den <= 1/32``).  The answer is the same either way.
    """
    q0, q1 = 1, 0  # the convergents' denominators (their numerators are not needed)
    a, b = value, den
    if memo is not None and memo[0] is not None:
        got = _resumed(value, den, *memo[0])
        # resumed only if no earlier convergent would have stopped a fresh run:
        # the remainders fall and the denominators grow, so the test at the
        # pair decides for all before it
        if got is not None and got[1] > memo[0][1] * tol:
            if memo[0][1] > bound:
                return 0
            (a, b), (q0, q1) = got, memo[0]
    quarter = bound >> 2
    kept = None
    try:
        while b:
            t, r = divmod(a, b)
            q0, q1 = q1, t * q1 + q0
            if q1 > bound:
                return 0
            if r <= q1 * tol:
                return q1
            a, b = b, r
            if 0 < q0 < q1 <= quarter:  # (the first pairs, (0, 1) and (1, 1), resume nothing)
                kept = (q0, q1)
        return 0
    finally:
        if memo is not None and kept is not None:
            memo[0] = kept


def _resumed(value: int, den: int, s0: int, s1: int):
    """The remainders ``(|s0 value - h0 den|, |s1 value - h1 den|)`` with which the
    Euclidean algorithm on ``(value, den)`` reaches the convergents ``h0 / s0``,
    ``h1 / s1`` (each ``h`` the nearest integer to ``s value / den``), or None if
    they are not consecutive convergents of ``value / den``.  They are when
    ``0 < s0 < s1``, ``h1 s0 - h0 s1 = +-1``, the two errors have opposite signs
    and the first is the larger: then ``value / den = (h1 z + h0) / (s1 z + s0)``
    with ``z`` the ratio of the errors, ``z > 1`` (G. H. Hardy and E. M. Wright,
    An Introduction to the Theory of Numbers, theorem 172; cited from memory),
    and the algorithm goes on from there as on ``z``."""
    if not 0 < s0 < s1:
        return None
    half = den >> 1
    h0 = (s0 * value + half) // den
    h1 = (s1 * value + half) // den
    e0 = s0 * value - h0 * den
    e1 = s1 * value - h1 * den
    if not e0 or not e1 or (e0 > 0) == (e1 > 0) or abs(h1 * s0 - h0 * s1) != 1:
        return None
    a, b = abs(e0), abs(e1)
    return (a, b) if a > b else None


def integer_column(col) -> tuple[mpz, list[tuple[int, int]]] | None:
    """A column ``[(row, value), ...]`` as ``(e, [(row, e value), ...])`` with ``e``
    the least common multiple of its denominators; None when an integer is
    ENTRY_BITS long or longer."""
    e = ONE
    for _, v in col:
        d = v.denominator
        if d != 1:
            e = _lcm(e, d)
    limit = 1 << ENTRY_BITS
    out = []
    for i, v in col:
        if v:
            a = int(v.numerator * (e // v.denominator))
            if not -limit < a < limit:
                return None
            out.append((i, a))
    return e, out


class IntegerColumns:
    """:func:`integer_column` of each of ``cols``, made on demand or ahead of it
    (:meth:`fill_while`: while the float solver runs, the interpreter is free)."""

    def __init__(self, cols) -> None:
        self.cols = cols
        self.made: list = [False] * len(cols)
        self.done = 0

    def fill_while(self, going) -> None:
        """Make columns in order while ``going()`` (asked every 32 columns) holds."""
        cols, made = self.cols, self.made
        for j in range(self.done, len(cols)):
            if j % 32 == 0 and not going():
                break
            made[j] = integer_column(cols[j])
            self.done = j + 1

    def __getitem__(self, j: int):
        got = self.made[j]
        if got is False:
            got = self.made[j] = integer_column(self.cols[j])
        return got


class FloatInverse:
    """A basis ``B`` (given by its columns as :func:`integer_column` makes them) as
    an integer matrix ``A = B E`` (``E`` the diagonal of each column's least
    common denominator), with ``A``'s inverse in double precision, for
    :meth:`primal` and :meth:`dual`.  Raises ArithmeticError when this cannot be
    set up: numpy missing, no rows or too many, an integer too long, or ``A``
    singular in floats.  With ``background``, a large inverse is made on a
    thread of its own (see :meth:`wait`), and a singular ``A`` then makes
    :meth:`primal` and :meth:`dual` give None instead."""

    def __init__(self, m: int, columns, background: bool = False) -> None:
        if not 0 < m <= MAX_ROWS:
            raise ArithmeticError("no rows, or too many rows for a dense float inverse")
        try:
            import numpy as np
        except ImportError:  # the float extra's library
            raise ArithmeticError("numpy is not installed") from None
        self.np, self.m = np, m
        rows, cols, vals, scales = [], [], [], []
        for k, got in enumerate(columns):
            if got is None:
                raise ArithmeticError("an entry is too long for 64-bit residuals")
            e, ints = got
            scales.append(e)
            if ints:
                r, v = zip(*ints)
                rows.extend(r)
                vals.extend(v)
                cols.extend([k] * len(r))
        self.scales = scales
        self.rows, self.cols, self.vals = rows, cols, vals
        self._r = r_a = np.array(rows, dtype=np.int64)
        self._c = c_a = np.array(cols, dtype=np.int64)
        self._v = np.array(vals, dtype=np.int64)  # exact: every integer is below 2^40
        # equilibrated by powers of two (exact), rows then columns, so that the
        # float inverse is as accurate as the matrix allows: A = S_r^-1 H S_c^-1
        # with H = S_r A S_c, so A^-1 = S_c H^-1 S_r (the largest entry of each
        # row and column read off the nonzeros, not the dense matrix)
        av = np.abs(self._v).astype(np.float64)
        top = np.zeros(m)
        np.maximum.at(top, r_a, av)
        s_r = np.ldexp(1.0, -np.frexp(top)[1])
        av *= s_r[r_a]
        top[:] = 0.0
        np.maximum.at(top, c_a, av)
        s_c = np.ldexp(1.0, -np.frexp(top)[1])
        scaled = np.zeros((m, m))
        scaled[r_a, c_a] = self._v.astype(np.float64) * s_r[r_a] * s_c[c_a]
        self._inv = None
        self._failed = None
        self._worker = None
        self._sorted: dict = {}
        self._limiter = background and m >= BACKGROUND_ROWS and _one_blas_thread()
        if self._limiter:
            # LAPACK runs without the interpreter lock: the inverse is made on the
            # other core while the caller proves A nonsingular (pure Python), and
            # waited for at its first use.  BLAS is held to one thread meanwhile:
            # OpenBLAS's second thread would take the caller's core, and its
            # threads spin between calls, so that this way was slower than
            # inline with two (STAIR's warm solve, median of 30 in alternation:
            # 73 ms this way, 78 inline, 91 in the background on two threads)
            worker = threading.Thread(target=self._invert, args=(scaled, s_r, s_c),
                                      name="exactlp-float-inverse", daemon=True)
            try:
                worker.start()
            except RuntimeError:  # no thread to be had: inline, BLAS given back
                self.wait()
            else:
                self._worker = worker
        if self._worker is None:
            self._invert(scaled, s_r, s_c)
            self.inv  # raises at once if singular in floats

    def _invert(self, scaled, s_r, s_c) -> None:
        np = self.np
        try:
            inv = np.linalg.inv(scaled)
        except np.linalg.LinAlgError:
            self._failed = "singular in floating point"
            return
        inv = inv * s_c[:, None] * s_r[None, :]
        if not np.all(np.isfinite(inv)):
            self._failed = "singular in floating point"
            return
        self._inv = inv

    @property
    def inv(self):
        """``A^-1`` in double precision (waited for if made in the background);
        ArithmeticError if ``A`` is singular in floating point."""
        self.wait()
        if self._failed is not None:
            raise ArithmeticError(self._failed)
        return self._inv

    def wait(self) -> None:
        """Wait for an inverse made in the background, and let BLAS have its
        threads back (call it before dropping this object unused)."""
        if self._worker is not None:
            self._worker.join()
            self._worker = None
        if self._limiter:
            self._limiter = False
            _release_blas()

    #: a callable telling when to give up (a time limit or an interruption), or None
    expired = None
    #: the primal's common denominator, once known: the duals' first guess
    den_hint = ONE

    def primal(self, rhs: list[mpq]) -> list[mpq] | None:
        """The exact ``x`` with ``B x = rhs``, or None.  (``B x = A E^-1 x``: solve
        ``A z = rhs``, then ``x = E z``.)"""
        try:
            inv = self.inv
        except ArithmeticError:
            return None
        got = self._solve(False, inv, rhs, ONE)
        if got is None:
            return None
        nums, den = got
        self.den_hint = den
        return lowest_mpq([v * e for v, e in zip(nums, self.scales)], den)

    def dual(self, rhs: list[mpq]):
        """``(y, (Y, D))`` with ``B^T y = rhs`` exactly and ``y = Y / D`` (``Y``
        integers), or None.  (``B^T = E^-1 A^T``: solve ``A^T y = E rhs``.)  The
        denominators of both solutions divide ``det A``, so the primal's common
        denominator, if known, is tried first."""
        try:
            inv = self.inv
        except ArithmeticError:
            return None
        got = self._solve(True, inv.T,
                          [v * e if v and e != 1 else v for v, e in zip(rhs, self.scales)],
                          self.den_hint)
        if got is None:
            return None
        nums, den = got
        return lowest_mpq(nums, den), (nums, den)

    def nonsingular(self, p: int = NONSINGULAR_PRIME) -> bool:
        """Whether ``det A != 0``, proven by ``det A mod p != 0`` (False can also
        mean that ``p`` divides a nonzero determinant: then the caller factors
        exactly, and learns the truth there).  Gaussian elimination modulo the
        prime ``p`` on sparse rows, each step on the column with the fewest
        entries left and its shortest row, and once the rest has filled in, on
        one dense array (for ``p < 2^26``).  False, too, past NONSINGULAR_BUDGET
        entry updates (a dense basis: the exact factorisation decides)."""
        return _nonsingular_mod(self.m, self.rows, self.cols, self.vals, p, NONSINGULAR_BUDGET)

    # ------------------------------------------------------------------
    def _solve(self, transpose: bool, inv, rhs: list[mpq], q0):
        """``(Z, D)``, integers ``Z`` and ``D`` with ``M (Z / D) = rhs`` exactly, for
        the integer matrix ``M`` (``A``, or with ``transpose`` its transpose) and
        ``inv`` its float inverse; or None.  ``q0``: a likely multiple of the
        denominators, tried first."""
        np, m, vals = self.np, self.m, self.vals
        rows, cols = (self.cols, self.rows) if transpose else (self.rows, self.cols)
        d = ONE  # the right-hand side's common denominator: solve M z' = d rhs, z = z' / d
        for v in rhs:
            if v.denominator != 1:
                d = _lcm(d, v.denominator)
        limit = 1 << RHS_BITS
        b = []
        for v in rhs:
            a = int(v.numerator * (d // v.denominator))
            if not -limit < a < limit:
                return None
            b.append(a)
        if not any(b):
            return [mpz(0)] * m, ONE
        got = self._sorted.get(transpose)
        if got is None:  # the nonzeros by row of M, for the exact product below
            r_a, c_a = (self._c, self._r) if transpose else (self._r, self._c)
            order = np.lexsort((c_a, r_a))
            rows_a = r_a[order]
            got = self._sorted[transpose] = (
                c_a[order], self._v[order].view(np.uint64),
                np.flatnonzero(np.r_[True, rows_a[1:] != rows_a[:-1]]))
        cols_a, vals_u, starts = got
        if len(starts) != m:
            return None  # an empty row: singular

        def product(xt):  # M xt, modulo 2^64
            return np.add.reduceat(vals_u * xt.view(np.uint64).take(cols_a), starts)

        r = np.array(b, dtype=np.int64)
        rbits = int(np.max(np.abs(r))).bit_length()
        limit = 1 << RESIDUAL_BITS
        chunks: list = []  # (k, xt) per step
        total = 0
        # log2 of the float solve's relative error, |new r| / (2^k |r|), as last seen
        rho = None
        # a few components, the largest at the start, are followed as the steps
        # go (their X_i kept up to date); when their denominators come out, all
        # the components are tried, and one that fails is followed from then on
        probes = np.argsort(-np.abs(inv @ r.astype(np.float64)), kind="stable")[:PROBES].tolist()
        for i in (range(0, m, max(m // SPREAD_PROBES, 1))[:SPREAD_PROBES] if SPREAD_PROBES else ()):
            if i not in probes:
                probes.append(i)
        x_probes = [0] * len(probes)
        memos: dict = {}  # the probes' continued fractions, from one try to the next
        next_try = FIRST_TRY
        if q0 != 1:  # try q0 as soon as K is past its length and a margin
            next_try = q0.bit_length() + 64
        xh = None
        expired = self.expired
        while total < MAX_BITS:
            if expired is not None and len(chunks) % 16 == 15 and expired():
                return None
            if xh is None:
                xh = inv @ r.astype(np.float64)
                # the float solve's size: it only sets how many bits this step may
                # take (so that round(2^k xh) fits a word) and the tolerance of the
                # denominator tries; no value of a result comes from it unchecked
                # (each step's residual is exact, and the answer is checked exactly)
                big = float(abs(xh).max())  # (array methods: np.max costs a wrapper call a step)
                if not _isfinite(big):
                    return None
                done = big == 0.0
                if done and r.any():
                    return None
                if done or total >= next_try:
                    next_try = total + total // TRY_SHARE
                    q, _ = _denominator([mpz(v) for v in x_probes], [int(abs(xh[i]) * 4) + 1 for i in probes],
                                        total, q0, memos)
                    if q is not None:
                        z, failed = _candidate(m, chunks, total, xh, rows, cols, vals, b, q, d)
                        if z is not None:
                            return z
                        if failed is not None and failed not in probes:
                            probes.append(failed)
                            x_probes.append(_combine(m, chunks, failed))
                        # the followed components came out and one other did not:
                        # the answer is likely near, so the next try comes sooner
                        next_try = total + total // 5
                    if done:
                        return None
                # xt = round(2^k xh) must fit a word: |xt| < 2^62 (big < 2^e)
                fit = 61 - _frexp(big)[1] if big >= 1 else 61
            # the longest step that keeps the new residual short: |r'| is about
            # 2^(k + rho) |r|, and must stay under 2^RESIDUAL_BITS (a margin of 4)
            want = STEP_MOST if rho is None else RESIDUAL_BITS - 4 - rbits - rho
            k = min(STEP_MOST, fit, want) // 8 * 8
            # A long right-hand side can leave no room at first: then one step
            # with k = 0 (xt = round(xh)) shortens the residual
            if k < 8 and (chunks or k < 0):
                return None
            xt = np.rint(np.ldexp(xh, k)).astype(np.int64)
            rn = ((r.view(np.uint64) << np.uint64(k)) - product(xt)).view(np.int64)
            top = int(abs(rn).max())
            if top >= limit:
                # too far for the float solve's accuracy (or a value wrapped): this
                # says rho >= RESIDUAL_BITS - k - rbits; the same xh, a shorter step
                rho = max(rho if rho is not None else -STEP_MOST, RESIDUAL_BITS - k - rbits)
                continue
            rho = top.bit_length() - k - rbits
            chunks.append((k, xt))
            x_probes = [(v << k) + t for v, t in zip(x_probes, xt.take(probes).tolist())]
            total += k
            r, rbits, xh = rn, top.bit_length(), None
        return None


_controller = None  # threadpoolctl's view of the loaded BLAS, made once; False without it
_blas_lock = threading.Lock()
_blas_holders = 0  # solves holding BLAS to one thread now (the setting is the process's)
_blas_limiter = None  # what the first of them set, to be undone by the last


def _load_controller() -> None:
    """threadpoolctl's view of the loaded BLAS, made once a process (its import
    and the look at the libraries took 4.4 ms here: done while HiGHS runs, when
    there is time, see ``solver.solve``); False when it cannot be had."""
    global _controller
    if _controller is None:
        try:
            from threadpoolctl import ThreadpoolController

            _controller = ThreadpoolController()
        except Exception:  # not installed, or it cannot read the loaded libraries
            _controller = False


def _one_blas_thread() -> bool:
    """Hold BLAS to one thread; True if held (then :func:`_release_blas` must
    follow), False when threadpoolctl is not installed or cannot set the loaded
    BLAS (then nothing runs in the background).  The setting is global, so
    holders are counted: the first sets it and the last puts back what was
    there before the first (two solves on two threads, overlapping, would
    otherwise leave one thread for good: the second would "restore" the
    first's limit).  A solve on another thread meanwhile is slower, not wrong."""
    global _blas_holders, _blas_limiter
    with _blas_lock:
        if _blas_holders == 0:
            _load_controller()
            if _controller is False:
                return False
            try:
                _blas_limiter = _controller.limit(limits=1, user_api="blas")
            except Exception:  # a BLAS it cannot set: the inverse is made inline instead
                return False
        _blas_holders += 1
        return True


def _release_blas() -> None:
    """Undo one :func:`_one_blas_thread` that returned True."""
    global _blas_holders, _blas_limiter
    with _blas_lock:
        _blas_holders -= 1
        if _blas_holders == 0:
            limiter, _blas_limiter = _blas_limiter, None
            limiter.restore_original_limits()


def _denominator(xs: list, errs: list[int], bits: int, q=ONE, memos: dict | None = None):
    """A common denominator ``q`` with each ``q xs_i / 2^bits`` within ``q errs_i /
    2^bits`` of an integer, grown from ``q`` component by component (see
    :func:`_reconstruct`), and None; or None and the first component for which
    ``2^bits`` is too short to tell.  ``memos`` (a dict kept from one call to
    the next, for the same components known more precisely) lets the
    continued fractions resume where the last call's left off, for each
    component whose ``q`` is the same as then."""
    den = ONE << bits
    for n, (x, e) in enumerate(zip(xs, errs)):
        rem = _f_mod_2exp(q * x, bits)
        if 2 * rem > den:
            rem -= den
        tol = q * e
        if abs(rem) <= tol:
            continue  # q x_i is (near) an integer already
        memo = None
        if memos is not None:
            got = memos.get(n)
            if got is None or got[0] != q:
                got = memos[n] = (q, [None])
            memo = got[1]
        # a new factor s of the common denominator: s q x_i near an integer,
        # unique while 2 s^2 tol < 2^bits
        s = _reconstruct(rem % den, den, tol, _isqrt(den // (2 * tol)), memo)
        if not s:
            return None, n
        q *= s
    return q, None


def _combine(m: int, chunks, only: int | None = None):
    """``X = sum_t xt_t 2^(k_(t+1) + ... + k_T)`` (as mpz), or its component ``only``.

    Each step's integers are made nonnegative by an offset, ``u_t = xt_t + 2^62``
    (below 2^63: every ``|xt| < 2^62``), and brought to digits ``0 <= D_t <
    2^k_t`` by carrying up, over all the steps at once (:func:`_offset_digits`);
    each ``k_t`` is a whole number of bytes, so the digits of a component are
    its bytes, read as one integer, plus the last carry, less the offsets'
    sum ``C = sum_t 2^62 2^(k_(t+1) + ... + k_T)``, the same for every
    component.  (Without the offset a negative step borrows, and a borrow runs
    up through every zero digit above it, one step a pass; nonnegative digits
    carry on only through digits of all ones.)  Where the passes do not settle,
    the steps are carried one after another.  STAIR's basic values, 124 steps:
    3.7 -> 2.6 ms; PILOT4's, 187 steps: 5.3 -> 4.0 ms.
    """
    import numpy as np

    if only is not None:
        x = 0
        for k, xt in chunks:
            x = (x << k) + int(xt[only])
        return mpz(x)
    got = _offset_digits(np, m, chunks)
    if got is None:
        return _combine_in_turn(np, m, chunks)
    body, carry = got
    blob = body.tobytes()
    size = len(blob) // m
    total = 8 * size
    offsets = 0
    for k, _ in chunks:
        offsets = (offsets << k) + OFFSET
    offsets = mpz(offsets)
    from_bytes = mpz.from_bytes
    out = []
    for i, c in enumerate(carry.tolist()):
        x = from_bytes(blob[i * size:(i + 1) * size], "little") - offsets
        out.append(x + (mpz(c) << total) if c else x)
    return out


OFFSET = 1 << 62
#: carries over all the steps at once, at most this many times (a pass settles
#: at least 8 bits of every carry: about 62 / 8 passes at worst, 2 or 3 with
#: steps of 40-48 bits)
CARRY_PASSES = 9


def _offset_digits(np, m: int, chunks):
    """``(bytes, carry)``: the digits of ``u_t = xt_t + 2^62`` (see :func:`_combine`)
    as an ``m x (K / 8)`` array of bytes, least significant first, and the carry
    out of the first step (uint64 per component); or None if the passes did not
    settle.  A pass takes every row's ``c_t = u_t >> k_t`` (its digit is ``u_t -
    c_t 2^k_t``) and adds it to the row above, the first row's to the carry.
    No value wraps: ``u_t < 2^63``; after a pass a row is a digit plus at most
    ``2^63 >> 8`` from below; the first step may take 0 bits (its whole value is
    carried), and the carry stays under ``2^63`` plus what later passes add,
    at most ``2^55`` each."""
    shifts = np.array([k for k, _ in chunks], dtype=np.uint64)[:, None]
    u = np.array([xt for _, xt in chunks], dtype=np.int64).view(np.uint64) + np.uint64(OFFSET)
    carry = np.zeros(m, dtype=np.uint64)
    for _ in range(CARRY_PASSES):
        c = u >> shifts
        if not c.any():
            break
        u -= c << shifts
        carry += c[0]
        u[:-1] += c[1:]
    else:
        return None
    widths = [k // 8 for k, _ in chunks]
    # little-endian: the last step's digits first; byte b of step t is kept if b < k_t / 8
    as_bytes = u[::-1].astype("<u8").view(np.uint8).reshape(len(chunks), m, 8).transpose(1, 0, 2)
    if min(widths) == max(widths):
        body = as_bytes[:, :, : widths[0]]
    else:
        keep = np.arange(8)[None, :] < np.array(widths[::-1])[:, None]
        body = as_bytes[:, keep]
    return np.ascontiguousarray(body), carry


def _combine_in_turn(np, m: int, chunks) -> list:
    """:func:`_combine` by carrying from the last step up, one step at a time."""
    carry = np.zeros(m, dtype=np.int64)
    pieces = []
    total = 0
    for k, xt in reversed(chunks):
        v = xt + carry
        carry = v >> k  # floor division by 2^k
        digits = (v - (carry << k)).astype(np.uint64)
        pieces.append(digits.astype("<u8").view(np.uint8).reshape(m, 8)[:, : k // 8])
        total += k
    body = np.concatenate(pieces, axis=1) if pieces else np.zeros((m, 0), dtype=np.uint8)
    out = []
    for i, c in enumerate(carry.tolist()):
        x = mpz(int.from_bytes(body[i].tobytes(), "little"))
        out.append(x + (mpz(c) << total) if c else x)
    return out


def _candidate(m, chunks, total, next_xh, rows, cols, vals, b, q, d):
    """``(Z, D)`` with ``M (Z / D) = b / d`` from ``X / 2^total``, the common
    denominator grown from ``q`` and checked exactly, and None; or None and the
    component that failed (None if the check did)."""
    x_int = _combine(m, chunks) if chunks else [mpz(0)] * m
    # X_i / 2^K is off by about next_xh_i / 2^K (the next step's correction):
    # allow four times that, and one unit
    errs = [int(e) + 1 for e in (abs(next_xh) * 4).tolist()]
    q, nums = _rounded(x_int, errs, total, q)
    if q is None:
        return None, nums
    # the exact check: M nums = q b, in integers
    acc = [0] * m
    for i, j, a in zip(rows, cols, vals):
        acc[i] += a * nums[j]
    if any(s != q * bi for s, bi in zip(acc, b)):
        return None, None
    return (nums, q * d), None


def _rounded(xs: list, errs: list[int], bits: int, q):
    """What :func:`_denominator` finds, with each ``q xs_i / 2^bits`` rounded to
    the nearest integer (a half rounded down) under the final ``q``: ``(q, nums)``,
    or ``(None, i)`` for the first component ``i`` for which ``2^bits`` is too
    short.  One product ``q xs_i`` a component serves both the test and the
    rounding; the components before the last new factor of ``q`` are rounded
    again at the end."""
    den = ONE << bits
    half = den >> 1
    nums = []
    grown = 0  # the components before this one were rounded under an earlier q
    for n, (x, e) in enumerate(zip(xs, errs)):
        t = q * x
        rem = _f_mod_2exp(t, bits)
        k = t >> bits
        if rem > half:
            rem -= den
            k += 1
        tol = q * e
        if abs(rem) <= tol:
            nums.append(k)
            continue
        s = _reconstruct(rem % den, den, tol, _isqrt(den // (2 * tol)))
        if not s:
            return None, n
        q *= s
        nums.append(_round_shift(q * x, bits, half))
        grown = n
    for n in range(grown):
        nums[n] = _round_shift(q * xs[n], bits, half)
    return q, nums


def _round_shift(t, bits: int, half):
    """``t / 2^bits`` rounded to the nearest integer, a half rounded down."""
    k = t >> bits
    return k + 1 if _f_mod_2exp(t, bits) > half else k


def _nonsingular_mod(m: int, rows, cols, vals, p: int, budget: int) -> bool:
    """See :meth:`FloatInverse.nonsingular`.

    Sparse elimination while the active part is sparse; once it has filled in
    (one in DENSE_FILL of its entries nonzero, DENSE_FROM or more rows), the
    rest is eliminated as one dense array of residues (:func:`_dense_mod`).
    STAIR's basis: 240 sparse steps take 4,100 entry updates, and the last 115 x
    115, a fifth of it filled, would take 28,000 more one by one (19.5 ms in
    all, in a slow spell of the machine, against 12.3 ms with the dense tail;
    switching at a tenth filled, 169 x 169, 15.9 ms, at 0.3, 88 x 88, 14.3 ms)."""
    import heapq

    rw: list[dict[int, int]] = [{} for _ in range(m)]
    cl: list[set[int]] = [set() for _ in range(m)]
    nnz = 0
    for i, j, a in zip(rows, cols, vals):
        a %= p
        if a:
            rw[i][j] = a
            cl[j].add(i)
            nnz += 1
    alive = [True] * m
    row_alive = [True] * m
    heap = [(len(cl[j]), j) for j in range(m)]
    heapq.heapify(heap)
    for step in range(m):
        left = m - step  # active rows and columns
        if DENSE_FROM <= left < 2048 and p < 1 << 26 and nnz * DENSE_FILL >= left * left:
            work = left * left * left // (3 * DENSE_RATIO)
            if work > budget:
                return False  # not proven: too big for this check
            return _dense_mod([rw[i] for i in range(m) if row_alive[i]],
                              [j for j in range(m) if alive[j]], p)
        while True:  # the column with the fewest entries (stale heap entries skipped)
            cnt, c = heapq.heappop(heap)
            if alive[c] and cnt == len(cl[c]):
                break
        if not cnt:
            return False  # a column with no entry left: det A = 0 mod p
        alive[c] = False
        r = min(cl[c], key=lambda i: (len(rw[i]), i))
        row_alive[r] = False
        prow = rw[r]
        inv = pow(prow[c], -1, p)
        pitems = [(cj, v) for cj, v in prow.items() if cj != c]
        touched = set()
        nnz -= len(prow) + cnt - 1  # the pivot's row and column leave the active part
        for i in cl[c]:
            if i == r:
                continue
            ri = rw[i]
            f = ri.pop(c) * inv % p
            budget -= len(pitems)
            if budget < 0:
                return False  # not proven: too much fill for this check
            for cj, v in pitems:
                old = ri.get(cj)
                if old is None:
                    # fill: -f v is never 0 modulo the prime (neither factor is)
                    ri[cj] = -f * v % p
                    cl[cj].add(i)
                    touched.add(cj)
                    nnz += 1
                    continue
                nv = (old - f * v) % p
                if nv:
                    ri[cj] = nv
                else:  # cancelled
                    del ri[cj]
                    cl[cj].discard(i)
                    touched.add(cj)
                    nnz -= 1
        for cj, _ in pitems:
            cl[cj].discard(r)
            touched.add(cj)
        rw[r] = {}
        cl[c] = set()
        for cj in touched:
            if alive[cj]:
                heapq.heappush(heap, (len(cl[cj]), cj))
    return True


def _dense_mod(row_dicts: list[dict[int, int]], columns: list[int], p: int) -> bool:
    """Whether the square matrix of residues (rows as ``{column: residue}``,
    over ``columns``) is nonsingular modulo the prime ``p``: Gaussian
    elimination on a dense array of 64-bit integers, reduced lazily.

    Only the pivot's column and row are reduced at each step; the entries of
    the rest are updated without reduction.  Each update subtracts ``f v`` with
    ``0 <= f, v < p``, so after ``t`` steps an entry lies within
    ``p + t (p - 1)^2`` of 0: under ``2^26 + 2047 * 2^52 < 2^63`` for ``p < 2^26``
    and fewer than 2,048 rows, so no value ever wraps, and each is congruent
    modulo ``p`` to the entry of the exact elimination.  (numpy's ``%`` by a
    positive number is never negative.)  Any nonzero residue of a column will
    do as its pivot: only whether the determinant is 0 modulo ``p`` is asked."""
    import numpy as np

    n = len(columns)
    where = {c: k for k, c in enumerate(columns)}
    d = np.zeros((n, n), dtype=np.int64)
    for i, row in enumerate(row_dicts):
        for c, v in row.items():
            d[i, where[c]] = v
    for k in range(n - 1):
        col = d[k:, k] % p
        below = np.flatnonzero(col)
        if not len(below):
            return False  # a column with no entry left: det = 0 mod p
        j = int(below[0])
        if j:  # row k holds a zero there: swap the pivot's row in
            d[[k, k + j]] = d[[k + j, k]]
            col[0], col[j] = col[j], col[0]
        f = col[1:] * pow(int(col[0]), -1, p) % p
        d[k + 1:, k + 1:] -= np.outer(f, d[k, k + 1:] % p)
    return bool(d[n - 1, n - 1] % p)
