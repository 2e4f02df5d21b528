"""The dual phase's reduced costs as whole numbers over one common denominator.

On a network (a basis of a network matrix is unimodular) every reduced cost of
the dual phase keeps the denominators of the costs: a generated 1,000-row
network's share a denominator of at most 4 bits, with numerators of at most
10.  There the dual ratio test and the update of the reduced costs are the
interpreter's loops over the tableau row (about 1,500 entries a pivot on the
3,000-row network, a third of its solve), each entry an ``mpq`` read, a bit
length or a product and a gcd.  Kept as ``d_j = N_j / Q`` with the ``N_j`` in
a 64-bit numpy array and ``Q`` a Python integer, both run in arrays:

- the update ``d_j' = d_j - (theta / S) v_j`` over the row's entries ``v_j =
  S alpha_pj`` is ``N_j' = N_j k_d - k_n v_j`` and ``Q' = Q k_d``, with ``k_n /
  k_d = Q theta / S`` in lowest terms (``k_d = 1`` on a network: no rescaling);
  the leaving column's ``d_b' = -theta`` is ``-k_n S / Q'``.  When ``k_d > 1``
  the common factor of every ``N_j`` and ``Q'`` is divided out, so ``Q`` stays
  the least common denominator.  Every bound on the products is checked on
  Python integers first (below ``2^62``); where one would not hold, the caller
  goes back to its list of ``mpq`` for the rest of the phase.
- the ratio test's candidates (signs against states) and the order of their
  ratios are found in arrays, and only the few that can be chosen are handed,
  as a small dictionary, to the loop that chooses (see
  :meth:`WholeCosts.candidates`).

Exact throughout: ``N_j / Q`` is ``d_j`` itself, and what the arrays filter out
could neither be chosen nor tie (whole keys that order the ratios).  So
the pivots, the flips and every logged value are those of the ``mpq`` list.
Read as a list (``d[j]``, iteration, ``==``), a :class:`WholeCosts` gives the
same ``mpq`` values or None.  numpy is imported lazily; without it the list
stays.
"""

from __future__ import annotations

import heapq
from itertools import repeat

from gmpy2 import lcm, mpq

#: the dual phase keeps its reduced costs whole when they fit (tests turn it off
#: to compare both ways)
WHOLE_COSTS = True
#: kept whole from the start only when the common denominator has at most this
#: many bits and every numerator at most NUM_BITS
DEN_BITS = 32
NUM_BITS = 48
#: kept whole only on models with at least this many columns: below, the
#: arrays' cost per pivot (tens of microseconds) is more than the loops' over
#: short rows, and a small model's solve does not import numpy
MIN_COLUMNS = 4000
#: every product and sum of the arrays stays below this
LIMIT = 1 << 62
#: the ratio test with flips puts this many of its least bounds on its heap at a
#: time (see BatchedPending)
BATCH = 64

BASIC, AT_LOWER, AT_UPPER, AT_ZERO = 0, 1, 2, 3  # the column states of simplex.py (a test checks)
ZERO = mpq(0)
_POW2 = None  # the powers of two below 2^63, as an int64 array (made when first needed)


def row_arrays(row):
    """``(cols, v, keys)``: a tableau row's columns and entries as int64 arrays,
    and its columns as a list; or None when an entry is not a whole number in 64
    bits (a fraction, or longer)."""
    import numpy as np

    cols = getattr(row, "cols", None)
    if cols is not None and row.sums.dtype == np.int64 and row.den_bits is None:
        return cols, row.sums, cols.tolist()  # (a NumpyRow: the same entries, every one whole)
    keys = list(row)
    if not keys:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty, keys
    v = np.array(list(row.values()))  # (int64 only when every entry is a Python int that fits)
    if v.dtype != np.int64:
        return None
    return np.array(keys, dtype=np.int64), v, keys


class WholeCosts:
    """Reduced costs ``d_j = num[j] / q`` (None where ``live[j]`` is false: basic
    or fixed columns), read as the list of ``mpq`` they stand for."""

    __slots__ = ("num", "q", "live")
    __hash__ = None  # type: ignore[assignment]

    def __init__(self, num, q: int, live) -> None:
        self.num = num
        self.q = q
        self.live = live

    @classmethod
    def of(cls, d: list) -> "WholeCosts | None":
        """``d`` (``mpq`` or None) made whole, or None when numpy is absent or
        the common denominator or a numerator is long (DEN_BITS, NUM_BITS)."""
        try:
            import numpy as np
        except ImportError:  # (the float extra's library)
            return None
        q = 1
        for den in {x.denominator for x in d if x}:
            q = lcm(q, den)
            if q.bit_length() > DEN_BITS:
                return None
        q = int(q)
        nums = [0 if x is None else int(x.numerator) * (q // int(x.denominator)) for x in d]
        if nums and max(map(abs, nums)).bit_length() > NUM_BITS:
            return None
        return cls(np.array(nums, dtype=np.int64), q, np.array([x is not None for x in d], dtype=bool))

    # -- read as a list ------------------------------------------------
    def __len__(self) -> int:
        return len(self.num)

    def __getitem__(self, j: int):
        if not self.live[j]:
            return None
        return mpq(int(self.num[j]), self.q)

    def tolist(self) -> list:
        q = self.q
        return [mpq(n, q) if on else None for n, on in zip(self.num.tolist(), self.live.tolist())]

    def __iter__(self):
        return iter(self.tolist())

    def __eq__(self, other) -> bool:
        return self.tolist() == list(other)

    # -- the dual phase's two loops, in arrays -------------------------
    def update(self, arrays, scale, q: int, b: int, theta: mpq, b_fixed: bool) -> bool:
        """:meth:`Simplex._update_reduced_costs` (no devex scores): ``d_j -=
        (theta / S) v_j`` over the row ``arrays = (cols, v)`` (``v = S alpha_pj``,
        ``S = scale`` or 1), then ``d_q`` None and ``d_b = -theta`` (None when
        ``b`` is fixed).  False, with nothing changed, when a bound would not
        hold (the caller then updates its list of ``mpq`` instead)."""
        import numpy as np

        cols, v, _ = arrays
        s = 1 if scale is None else int(scale)
        k = theta * self.q / s  # Q theta / S = k_n / k_d, in lowest terms
        kn, kd = int(k.numerator), int(k.denominator)
        num, live = self.num, self.live
        on = live[cols]
        c, vv = cols[on], v[on]
        top_n = int(np.abs(num).max()) if len(num) else 0
        top_v = int(np.abs(vv).max()) if len(vv) else 0
        # (each bound on Python integers: |N_j k_d - k_n v_j| <= top_n k_d + |k_n| top_v)
        # (Q is a Python integer: it needs no bound of its own)
        if top_n * kd + abs(kn) * top_v >= LIMIT or abs(kn) * s >= LIMIT:
            return False
        if kd != 1:
            num *= kd  # (the dead entries are 0 and stay 0)
            self.q *= kd
        if len(c):
            num[c] -= np.int64(kn) * vv
        live[q] = False
        num[q] = 0
        if b_fixed:
            live[b] = False
            num[b] = 0
        else:
            live[b] = True
            num[b] = -kn * s  # -theta Q' = -(k_n S / (k_d Q)) (Q k_d)
        if kd != 1:
            g = int(np.gcd.reduce(num)) if len(num) else 0
            g = int(np.gcd(g, self.q))
            if g > 1:
                num //= g  # (exact: g divides every entry)
                self.q //= g
        return True

    def _candidates(self, arrays, s: int, state: list):
        """The positions in the row ``arrays = (cols, v, keys)`` of the columns the
        dual ratio test can choose (those of :meth:`DualPhase._dual_entering_plain`:
        ``d_j`` not None, and ``a_j = s v_j`` positive at a lower bound, negative
        at an upper one, nonzero at zero), from ``state``, the columns' states."""
        import numpy as np

        cols, v, keys = arrays
        st = np.fromiter(map(state.__getitem__, keys), np.int8, len(keys))
        a = v if s > 0 else -v
        ok = self.live[cols] & (a != 0) & ((st != AT_LOWER) | (a > 0)) & ((st != AT_UPPER) | (a < 0))
        return np.flatnonzero(ok)

    def least(self, arrays, s: int, state: list) -> tuple[dict, dict]:
        """For the plain ratio test: ``({j: v_j}, {j: d_j})`` over the candidates
        among which are the least ratio and every tie with it.

        The ratios ``|t_j| = |N_j| / (Q |v_j|)`` are ordered by the whole keys
        ``k_j = floor(|N_j| 2^h / |v_j|)`` (``h`` as large as keeps ``|N_j| 2^h``
        below ``2^63``): ``Q |t_j| 2^h`` lies in ``[k_j, k_j + 1)``, so ``k_j <
        k_i`` means ``|t_j| < |t_i|``, and equal ratios have equal keys.  The
        candidates of the least key go on."""
        import numpy as np

        cols, v, _ = arrays
        at = self._candidates(arrays, s, state)
        if not len(at):
            return {}, {}
        n = np.abs(self.num[cols[at]])
        h = 62 - int(n.max()).bit_length()  # (|N_j| < 2^62: h >= 0)
        key = (n << h) // np.abs(v[at])
        pick = at[key == key.min()]
        js = cols[pick].tolist()
        q = self.q
        return dict(zip(js, v[pick].tolist())), dict(zip(js, (mpq(x, q) for x in self.num[js].tolist())))

    def collect(self, arrays, s: int, state: list, ready: list) -> "BatchedPending":
        """For the ratio test with bound flipping: every candidate, as the loop of
        :meth:`DualPhase._dual_entering_plain` collects it, in a
        :class:`BatchedPending` as ``(K_j, j, None, |v_j|)`` (``d_j`` left for the
        division, which only the few taken off the heap need) or, when ``d_j =
        0``, into ``ready`` as ``(0, -|v_j|, j)``.

        ``K_j`` is a strict lower bound, ``|t_j| > 2^K_j``, as the heap needs:
        ``|t_j| = |N_j| / (Q |v_j|)`` with ``|N_j| >= 2^(bits - 1)``, ``Q <
        2^(bits Q)`` and ``|v_j| < 2^(bits)``, so ``K_j = bits |N_j| - bits Q -
        bits |v_j| - 1`` (the bit lengths found by a search over the powers of
        two: no float)."""
        import numpy as np

        global _POW2
        if _POW2 is None:
            _POW2 = np.array([1 << k for k in range(63)], dtype=np.int64)
        cols, v, _ = arrays
        at = self._candidates(arrays, s, state)
        n = np.abs(self.num[cols[at]])
        av = np.abs(v[at])
        zero = n == 0
        if zero.any():
            ready.extend((ZERO, -a, j) for a, j in zip(av[zero].tolist(), cols[at[zero]].tolist()))
            nz = ~zero
            n, av, at = n[nz], av[nz], at[nz]
        bound = (np.searchsorted(_POW2, n, side="right") - np.searchsorted(_POW2, av, side="right")
                 - (self.q.bit_length() + 1))
        return BatchedPending(bound, cols[at], av)


class BatchedPending(list):
    """A heap of the ratio test's candidates not yet divided, ``(K_j, j, None,
    |a_j|)``, that holds at first only those whose ``K_j`` is at most the
    BATCH-th least, and a sentinel ``(K, -1, None, None)`` with ``K`` the least
    ``K_j`` of the rest, above every ``K_j`` held.  The sentinel comes off the
    heap before any of the rest could, and then the next batch goes on
    (:meth:`refill`): so the heap gives the candidates up in the order it would
    holding them all, and a pivot that takes a few makes tuples for a batch,
    not for the thousands of a long row (its rest stays in arrays)."""

    __slots__ = ("keys", "cols", "mags")

    def __init__(self, keys, cols, mags) -> None:
        super().__init__()
        self.keys, self.cols, self.mags = keys, cols, mags  # the rest, as int64 arrays
        self.refill()

    def refill(self) -> None:
        """The next batch onto the heap, and a sentinel for what is left."""
        import numpy as np

        keys = self.keys
        if not len(keys):
            return
        if len(keys) > BATCH:
            # (every key up to the BATCH-th least: at least BATCH of them, so each
            # refill makes progress, and ties stay together)
            take = keys <= np.partition(keys, BATCH - 1)[BATCH - 1]
            rest = ~take
            batch = zip(keys[take].tolist(), self.cols[take].tolist(), repeat(None), self.mags[take].tolist())
            self.keys, self.cols, self.mags = keys[rest], self.cols[rest], self.mags[rest]
        else:
            batch = zip(keys.tolist(), self.cols.tolist(), repeat(None), self.mags.tolist())
            self.keys = keys[:0]
        self.extend(batch)
        if len(self.keys):
            self.append((int(self.keys.min()), -1, None, None))
        heapq.heapify(self)

    def entries(self) -> list:
        """Every candidate not yet taken (the sentinel left out)."""
        return [e for e in self if e[1] >= 0] + list(
            zip(self.keys.tolist(), self.cols.tolist(), repeat(None), self.mags.tolist()))
