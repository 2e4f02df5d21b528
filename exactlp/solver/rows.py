"""The constraint matrix as the pivot loop reads it: tableau rows and integer columns.

Kernels shared by the primal loop (:mod:`.simplex`), its partial pricing and the
dual phase (:mod:`.dual`), as a mix-in of :class:`.simplex.Simplex`:

* :func:`_dual_ints`: a vector of fractions over its common denominator, as
  integers, when that denominator is short;
* :meth:`TableauRows._int_cols`: each column of ``A`` as integers over its own
  least common denominator (or kept in fractions when that is long);
* :meth:`TableauRows._tableau_row`: row ``p`` of ``B^-1 A``, summed from one
  btran on integers (by rows of ``A``, or for wide models by numpy's 64-bit
  sums, in limbs when the integers are longer);
* :meth:`TableauRows._int_rows` and :meth:`TableauRows._rows`: ``A`` by rows.

Every sum here is exact; the design notes in DEVELOPERS.md give the
measurements behind each form ("Pricing", "Tableau rows by numpy").
"""

from __future__ import annotations

from collections.abc import Mapping
from operator import itemgetter as _itemgetter

from gmpy2 import lcm as _lcm
from gmpy2 import mpq, mpz

ZERO = mpq(0)
ONE_Z = mpz(1)
BASIC = 0  # the column state of simplex.py (a test checks)

#: partial pricing works on integers (see Simplex._price_partial) when the duals'
#: common denominator has at most this many bits past twice their longest one
DUAL_INTS_SLACK = 64


def _dual_ints(y):
    """``(Y, D)`` with ``y = Y / D``, ``D`` the least common multiple of the
    denominators of ``y`` and ``Y`` integers; or None when ``D`` is long
    (past ``DUAL_INTS_SLACK`` + twice the longest denominator: nested
    denominators, whose product would make every ``Y_i`` long).  ``y`` is a
    list, or a dictionary of nonzero entries (then so is ``Y``)."""
    sparse = type(y) is dict
    dens = {v.denominator for v in (y.values() if sparse else y) if v}  # the distinct ones (the duals share a few)
    limit = DUAL_INTS_SLACK + 2 * max((d.bit_length() for d in dens), default=0)
    dy = ONE_Z
    for den in dens:
        if den != 1:
            dy = _lcm(dy, den)
            if dy.bit_length() > limit:  # (the multiples only grow: the same answer in any order)
                return None
    if sparse:
        return {i: v.numerator * (dy // v.denominator) for i, v in y.items()}, dy
    return [v.numerator * (dy // v.denominator) if v else 0 for v in y], dy


class NumpyRow(dict):
    """A tableau row (column -> ``S alpha_pj``, nonzeros only) that numpy's sums
    made, with the same entries as arrays: ``cols`` (the columns, ascending),
    ``sums`` (the integers ``R . (e_j a_j)``, so ``S alpha_pj = sums / e_j``: 64-bit,
    or Python integers in an object array when the row went by limbs) and
    ``den_bits`` (``bits(e_j) - 1`` for each, or None when every ``e_j`` is 1).
    The arrays are only read; the dictionary is the row."""

    __slots__ = ("cols", "sums", "den_bits")


class ArrayRow(Mapping):
    """A :class:`NumpyRow` whose every entry is whole, given as its arrays only
    (``cols``, 64-bit ``sums``; ``den_bits`` None): the dual phase's whole
    reduced costs (:mod:`.whole`) read nothing else, so the dictionary is made
    only when something reads the row as one (then it is the same, entry for
    entry).  Not a ``dict``: a reader that took it for one would see its
    dictionary, empty until made, instead of the row."""

    __slots__ = ("cols", "sums", "den_bits", "_made")

    def __init__(self, cols, sums) -> None:
        self.cols, self.sums, self.den_bits, self._made = cols, sums, None, None

    def _dict(self) -> dict:
        if self._made is None:
            self._made = dict(zip(self.cols.tolist(), self.sums.tolist()))
        return self._made

    def __getitem__(self, j):
        return self._dict()[j]

    def __iter__(self):
        return iter(self._dict())

    def __len__(self) -> int:
        return len(self.cols)


_POW2 = None  # 2^0 .. 2^62 as a numpy array, made on first use


def entry_bits(row: NumpyRow, at=None):
    """For the entries ``at`` (positions in ``row.cols``; all when None) of a
    :class:`NumpyRow`: ``bits N - 1`` for a whole entry ``N``, ``bits N - bits
    e_j`` for ``N / e_j``, as a numpy array.  ``|S alpha_pj|`` lies in ``[2^b,
    2^(b + 1))`` or ``(2^(b - 1), 2^(b + 1))`` for its ``b``, the bounds that the
    ratio tests' bit-length rule reads (no float: the powers of two are
    searched)."""
    import numpy as np

    global _POW2
    if _POW2 is None:
        _POW2 = np.array([1 << k for k in range(63)], dtype=np.int64)
    sums = row.sums if at is None else row.sums[at]
    if sums.dtype == object:  # (Python integers: the row went by limbs)
        bits = np.array([abs(v).bit_length() - 1 for v in sums.tolist()], dtype=np.int64)
    else:
        bits = np.searchsorted(_POW2, np.abs(sums), side="right") - 1
    if row.den_bits is not None:
        bits -= row.den_bits if at is None else row.den_bits[at]
    return bits


def _row_sums(irows, rho) -> dict[int, int]:
    """``sum_i r_i (e_j a_ij)`` by column ``j``, over the pairs ``(i, r_i)`` of
    ``rho`` (Python integers) and the integer rows of :meth:`TableauRows._int_rows`;
    only the columns met are keys."""
    acc: dict[int, int] = {}
    get = acc.get
    for i, r in rho:
        plus, minus, other = irows[i]
        for j in plus:
            acc[j] = get(j, 0) + r
        for j in minus:
            acc[j] = get(j, 0) - r
        for j, a in other:
            acc[j] = get(j, 0) + r * a
    return acc


#: a tableau row whose btran integers R pass the 64-bit bound of _np_rows is summed
#: in limbs of R, at most this many (past it, by the Python loops)
ROW_LIMBS_MOST = 4
#: the limbs' size in bits when smaller than the bound allows (None: as it allows;
#: tests set a few bits to take every row through the limbs)
ROW_LIMB_BITS = None
#: the tableau row is summed in a dictionary of the columns it meets when those
#: entries of A number at most 1 / SPARSE_ROW_SHARE of the columns
SPARSE_ROW_SHARE = 4
#: the tableau row's integer sums are made by numpy (when installed) on models
#: with this many nonzeros or more in integer columns (see Simplex._np_rows)
NUMPY_ROW_NONZEROS = 20_000


class TableauRows:
    """Mix-in of :class:`.simplex.Simplex`: the matrix read by columns as integers and by rows."""

    def _frac_cols(self) -> list[tuple]:
        """Every column as :meth:`_int_cols` gives one kept in fractions."""
        ncol = len(self.cols)
        if self._frac_cols_cache is None or self._frac_cols_cache[0] != ncol:
            self._frac_cols_cache = (ncol, [(None, None, [(i, a) for i, a in col if a]) for col in self.cols])
        return self._frac_cols_cache[1]

    def _int_cols(self) -> list[tuple]:
        """Each column ``j`` as integers ``e_j a_ij``, with ``e_j`` the least common
        multiple of its denominators: ``(e_j, pick, those integers)``, where
        ``pick(Y)`` takes the column's rows of a vector, for two nonzeros or more;
        else ``(e_j, None, [(i, e_j a_ij)])``; or ``(None, None, [(i, a_ij)])``
        when ``e_j`` is long (the rule of :func:`_dual_ints`).  Kept until the
        set of columns changes."""
        ncol = len(self.cols)
        if self._int_cols_cache is None or self._int_cols_cache[0] != ncol:
            out = []
            # the columns as integers made beside HiGHS for the warm start's check
            # (refine.IntegerColumns: the same e_j and integers, when not too long)
            ahead = self.integer_columns.made if self.integer_columns is not None else ()
            for j, col in enumerate(self.cols):
                got = ahead[j] if j < len(ahead) else False
                if got and (got[0] == 1 or got[0].bit_length() <= DUAL_INTS_SLACK + 2 * max(
                        a.denominator.bit_length() for _, a in col)):
                    e, ints = got
                    if len(ints) >= 2:
                        rows_of, values = zip(*ints)
                        out.append((e, _itemgetter(*rows_of), values))
                    else:
                        out.append((e, None, ints))
                    continue
                e = ONE_Z
                top = 0
                for _, a in col:
                    den = a.denominator
                    if den != 1:
                        e = _lcm(e, den)
                        top = max(top, den.bit_length())
                if e.bit_length() > DUAL_INTS_SLACK + 2 * top:
                    # many different primes among the denominators: their multiple
                    # would make every entry long (and, over many such columns, a
                    # hostile model's copy huge), so the column stays in fractions
                    out.append((None, None, [(i, a) for i, a in col if a]))
                    continue
                if e == 1:  # (most columns: whole entries, no division)
                    ints = [(i, a.numerator) for i, a in col if a]
                else:
                    ints = [(i, a.numerator * (e // a.denominator)) for i, a in col if a]
                if len(ints) >= 2:
                    rows_of, values = zip(*ints)
                    out.append((e, _itemgetter(*rows_of), values))
                else:
                    out.append((e, None, ints))
            self._int_cols_cache = (ncol, out)
        return self._int_cols_cache[1]

    def _tableau_row(self, p: int, arrays: bool = False) -> tuple[dict[int, mpq], mpz | None]:
        """Row p of ``B^-1 A`` at the nonbasic columns, ``rho . a_j`` for each j,
        as ``(D rho . a_j, D)`` when the solves are scaled, else ``(..., None)``.

        ``rho = e_p^T B^-1`` by one btran; then only the rows of A where rho
        is nonzero are read, which is cheap when rho is sparse.  With ``arrays``
        (for readers of the row's arrays only), a row that numpy's sums make
        with every entry whole comes as an :class:`ArrayRow`.
        """
        # the btran's scaled row ``D rho`` has (nearly) integer entries, so the
        # sums below meet only the short denominators of A; they are left scaled
        # (see basis.EtaBasis._set_scale and _update_reduced_costs)
        rho, d = self.basis.btran_unit(p)  # its nonzeros, by position
        self.last_rho = (rho, d)  # D rho and D (None: unscaled), for the dual's weights
        return self._row_times_a(rho, d, self.head[p], arrays)

    def _row_times_a(self, rho: dict[int, mpq], d: mpz | None, drop: int,
                     arrays: bool = False) -> tuple[dict[int, mpq], mpz | None]:
        """``(R . (e_j a_j), S)`` at the nonbasic columns ``j``, with ``rho . a_j``
        their quotients: the sums of :meth:`_tableau_row` for any row vector
        ``rho`` (its nonzeros by row, scaled by ``d`` unless that is None), such as
        a row of ``B^-1`` read from its columns.  ``drop``: the basic column whose
        sum is known without summing (that of the row's position), left out."""
        state = self.state
        ints = _dual_ints(rho)
        if ints is None:  # nested denominators: in fractions
            rows = self._rows()
            acc: dict[int, mpq] = {}
            get = acc.get
            for i, r in rho.items():
                for j, a in rows[i]:
                    if state[j] != BASIC:
                        acc[j] = get(j, ZERO) + r * a
            return acc, d
        # On integers: rho = R / E (E the common denominator of the btran's
        # result), and column j of A is its integers over e_j, so
        # (R . (e_j a_j)) = E e_j (rho . a_j): summed by rows as Python integers
        # (a product of two machine-size integers costs a fraction of one of two
        # mpq's), then each sum over e_j once.  The row comes back scaled by E
        # (times D when the solves are scaled).
        big, e = ints
        irows, escale, fcols = self._int_rows()
        scale = e if d is None else e * d
        touched = 0
        for i in big:
            plus, minus, other = irows[i]
            touched += len(plus) + len(minus) + len(other)
        if touched * SPARSE_ROW_SHARE <= len(self.cols):
            # rho meets few of A's entries (a network's row of B^-1 holds a few
            # nonzeros): sums in a dictionary of the columns met, so the pivot costs
            # nothing for the columns rho does not reach
            acc = _row_sums(irows, ((i, int(r)) for i, r in big.items()))
            out = {}
            for j in sorted(acc):  # (the order of the other forms: by column)
                v = acc[j]
                if v and state[j] != BASIC:
                    ej = escale[j]
                    out[j] = v if ej == 1 else mpq(v, ej)
            fast = None
        else:
            fast = self._np_rows()
            if fast is not None:
                dense = [0] * self.m
                for i, r in big.items():
                    dense[i] = r
                out = fast(dense, drop, True) if arrays and not fcols else fast(dense, drop)
            else:
                out = None
        if out is None:  # the loops (no numpy, a narrow model, or sums past 64 bits)
            acc_i = [0] * len(self.cols)
            for i, r in big.items():
                r = int(r)
                plus, minus, other = irows[i]
                # (entries +-1, most of A in many models, need no product)
                for j in plus:
                    acc_i[j] += r
                for j in minus:
                    acc_i[j] -= r
                for j, a in other:
                    acc_i[j] += r * a
            # (a whole entry stays a Python integer: mpq arithmetic takes it as it is,
            # and it has the numerator and denominator that the devex update reads)
            out = {}
            for j, v in enumerate(acc_i):
                if v and state[j] != BASIC:
                    ej = escale[j]
                    out[j] = v if ej == 1 else mpq(v, ej)
        if fcols and type(out) is NumpyRow:
            out.cols = None  # (its arrays would not hold the entries added below)
        for j, col in fcols:  # columns kept in fractions (see _int_cols)
            if state[j] != BASIC:
                v = ZERO
                for i, a in col:
                    r = big.get(i)
                    if r:
                        v += r * a
                if v:
                    out[j] = v
        return out, (None if scale == 1 else scale)

    def _np_rows(self):
        """For wide models with numpy at hand: a function ``fn(R, drop)`` giving
        :meth:`_tableau_row`'s integer sums ``R . (e_j a_j)`` for every column at
        once but ``drop``, the basic column at the row's position (or None, when a
        sum could leave 64 bits); else None.  Kept until the set of columns
        changes, and handed on with the matrix's copies to other solves of the same
        columns, so it reads nothing of this solve's basis.

        The sums are ``A_int^T R`` over the nonzeros sorted by column: one gather,
        one product and one segmented sum in 64-bit integers, exact when
        ``max |R_i|`` times the largest column sum of ``|e_j a_ij|`` is below 2^63
        (checked exactly on each call, on Python integers).  Of the basic columns
        only the one at position p has a nonzero sum (1, scaled): ``B^-1 a_j`` is
        the unit vector of j's position, so it is dropped by position, not by a scan.
        """
        ncol = len(self.cols)
        cache = self._np_rows_cache
        if cache is not None and cache[0] == ncol:
            return cache[1]
        fn = None
        rows, escale, fcols = self._int_rows()
        nnz = sum(len(a) + len(b) + len(c) for a, b, c in rows)
        if nnz >= NUMPY_ROW_NONZEROS:
            try:
                import numpy as np
            except ImportError:  # the float extra's library: without it, the loops below
                np = None
            if np is not None:
                # the nonzeros by (column, row): gathered by rows, then sorted in arrays
                cs: list[int] = []
                rs: list[int] = []
                vs: list[int] = []
                for i, (plus, minus, other) in enumerate(rows):
                    k = len(plus) + len(minus) + len(other)
                    cs.extend(plus)
                    cs.extend(minus)
                    cs.extend(j for j, _ in other)
                    rs.extend([i] * k)
                    vs.extend([1] * len(plus))
                    vs.extend([-1] * len(minus))
                    vs.extend(a for _, a in other)
                big = max(map(abs, vs), default=0)
                top = None
                if vs and big < 2**62:
                    order = np.lexsort((np.array(rs, dtype=np.int64), np.array(cs, dtype=np.int64)))
                    cols_a = np.array(cs, dtype=np.int64)[order]
                    rows_a = np.array(rs, dtype=np.int64)[order]
                    vals_a = np.array(vs, dtype=np.int64)[order]
                    starts = np.flatnonzero(np.r_[True, cols_a[1:] != cols_a[:-1]])
                    most = int(np.diff(np.r_[starts, len(cols_a)]).max())  # the longest column
                    if big * most < 2**63:  # the column sums of |e_j a_ij| exact in 64 bits
                        top = int(np.add.reduceat(np.abs(vals_a), starts).max())
                    else:
                        top = max(sum(map(abs, vals_a[a:b].tolist()))
                                  for a, b in zip(starts.tolist(), starts.tolist()[1:] + [len(vals_a)]))
                # top: the largest column sum of |e_j a_ij|
                if top is not None and top < 2**62:
                    col_ids = cols_a[starts]
                    whole_mask = np.array([escale[j] == 1 for j in col_ids.tolist()])
                    limit = (2**63 - 1) // max(top, 1)
                    # a limb of R: |digit| < 2^b <= limit (ROW_LIMB_BITS: smaller, in tests)
                    b = min(limit.bit_length() - 1, ROW_LIMB_BITS or 63)
                    ids = col_ids.tolist()
                    wholes = whole_mask.tolist()
                    all_whole = all(wholes)
                    den_bits = np.array([escale[j].bit_length() - 1 for j in ids], dtype=np.int64)

                    def limbs(big, drop, longest, _np=np):
                        # R = sum_k R_k 2^(k b) with signed digits |R_k| < 2^b, so each
                        # A_int^T R_k is exact in 64 bits; the sums are put together in
                        # Python integers (D6CUBE: 65 of its 427 rows, R up to 195 bits)
                        n = -(-longest // b)
                        if n > ROW_LIMBS_MOST:
                            return None  # too long even so: the loops below
                        mask = (1 << b) - 1
                        vals = [int(v) for v in big]
                        total = None
                        for k in range(n):
                            sh = k * b
                            r = _np.array([(v >> sh) & mask if v >= 0 else -((-v >> sh) & mask) for v in vals],
                                          dtype=_np.int64)
                            part = _np.add.reduceat(vals_a * r[rows_a], starts).tolist()
                            total = part if total is None else [t + (x << sh) if x else t
                                                                for t, x in zip(total, part)]
                        out = NumpyRow()
                        at = []
                        for k, (j, v, w) in enumerate(zip(ids, total, wholes)):
                            if v and j != drop:
                                out[j] = v if w else mpq(v, escale[j])
                                at.append(k)
                        # (as in fn below, with the sums as Python integers)
                        out.cols, out.sums = col_ids[at], _np.array([total[k] for k in at], dtype=object)
                        out.den_bits = None if all_whole else den_bits[at]
                        return out

                    forced = ROW_LIMB_BITS is not None

                    # (the basic column at the row's position comes in as ``drop``: this
                    # function is kept with the matrix's copies and handed on to other
                    # solves of the same columns (solver.ObjectiveProbes), so it must not
                    # read the basis of the solve that made it)
                    def fn(big, drop, lazy=False, _np=np):
                        longest = max(big, key=abs, default=0).__abs__()
                        if longest > limit or (forced and longest >> b):
                            return limbs(big, drop, int(longest).bit_length())  # a sum could leave 64 bits
                        r = _np.array([int(v) for v in big], dtype=_np.int64)
                        sums = _np.add.reduceat(vals_a * r[rows_a], starts)
                        nz = sums != 0
                        if lazy and all_whole:  # (the arrays alone: see ArrayRow)
                            at = _np.flatnonzero(nz & (col_ids != (-1 if drop is None else drop)))
                            return ArrayRow(col_ids[at], sums[at])
                        idx_w = _np.flatnonzero(nz & whole_mask)
                        out = NumpyRow(zip(col_ids[idx_w].tolist(), sums[idx_w].tolist()))
                        for k in _np.flatnonzero(nz & ~whole_mask).tolist():
                            j = int(col_ids[k])
                            out[j] = mpq(int(sums[k]), escale[j])
                        out.pop(drop, None)
                        # the same entries as arrays, for the dual ratio test's filter
                        # (DualPhase._ratio_candidates)
                        at = _np.flatnonzero(nz & (col_ids != (-1 if drop is None else drop)))
                        out.cols, out.sums = col_ids[at], sums[at]
                        out.den_bits = None if all_whole else den_bits[at]
                        return out
        self._np_rows_cache = (ncol, fn)
        return fn

    def _int_rows(self):
        """The columns of :meth:`_int_cols` read by rows: ``(rows, e, fraction
        columns)``, with ``rows[i]`` the columns where ``e_j a_ij`` is 1, those where
        it is -1, and the pairs ``(j, e_j a_ij)`` of the rest, as Python integers,
        ``e[j]`` the scale of column j, and the columns kept in fractions as
        ``(j, [(i, a_ij)])``.  Kept until the set of columns changes."""
        ncol = len(self.cols)
        if self._int_rows_cache is None or self._int_rows_cache[0] != ncol:
            rows: list[tuple[list[int], list[int], list[tuple[int, int]]]] = [([], [], []) for _ in range(self.m)]
            escale: list[int] = [1] * ncol
            fcols = []
            for j, (e, pick, ints) in enumerate(self._int_cols()):
                if e is None:
                    fcols.append((j, ints))
                    continue
                escale[j] = int(e)
                if pick is None:
                    pairs = ints
                else:
                    pairs = zip((i for i, a in self.cols[j] if a), ints)
                for i, v in pairs:
                    v = int(v)
                    if v == 1:
                        rows[i][0].append(j)
                    elif v == -1:
                        rows[i][1].append(j)
                    else:
                        rows[i][2].append((j, v))
            self._int_rows_cache = (ncol, (rows, escale, fcols))
        return self._int_rows_cache[1]

    def _rows(self) -> list[list[tuple[int, mpq]]]:
        """The columns read by rows (kept until the set of columns changes)."""
        ncol = len(self.cols)
        if self._rows_cache is None or self._rows_cache[0] != ncol:
            rows: list[list[tuple[int, mpq]]] = [[] for _ in range(self.m)]
            for j, col in enumerate(self.cols):
                for i, a in col:
                    rows[i].append((j, a))
            self._rows_cache = (ncol, rows)
        return self._rows_cache[1]
