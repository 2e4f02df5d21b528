"""Exact basis factorisation in product form (an eta file), with reinversion.

The basis matrix is kept as ``B = B0 E1 E2 ... Ek`` where ``B0`` is a
diagonal of +1/-1 (unit columns: logicals and artificials, one per row) and
each ``Et`` is the identity with one column, ``p``, replaced by the vector
``w`` (the entering column expressed in the previous basis).  Then

    ftran:  B^-1 a   = Ek^-1 ... E1^-1 B0^-1 a
    btran:  c^T B^-1 = c^T Ek^-1 ... E1^-1 B0^-1

and ``E^-1 v`` changes ``v_p`` to ``v_p / w_p`` and every other ``v_i`` to
``v_i - w_i v_p / w_p``.  All arithmetic is exact (gmpy2 ``mpq``), so the
file never drifts; it is rebuilt only to keep it short and sparse.

Reinversion rebuilds the file from the current set of basic columns: unit
columns keep the position of their row, and the other columns are brought
in one at a time, fewest nonzeros first (column singletons first cause no
fill), each at the free position with the fewest remaining nonzeros in its
row among the columns still to place.  With exact numbers any nonzero is an
acceptable pivot, so the order aims purely at sparsity.
"""

from __future__ import annotations

import copy
import heapq
from collections import deque

from gmpy2 import divexact as _divexact
from gmpy2 import gcd as _gcd
from gmpy2 import lcm as _lcm
from gmpy2 import mpq, mpz

ZERO = mpq(0)
ONE = mpq(1)
ONE_Z = mpz(1)

#: Solves scale their vector by the numerator ``D`` of ``det B`` once it has more
#: bits than this (see :meth:`EtaBasis._set_scale`) ...
SCALE_BITS = 64
#: ... unless the last ftran's result had denominators under this many bits
#: (short fractions are cheap as they are) ...
SCALE_MIN_SEEN = 128
#: ... or ``D`` is over this many times as long as them (``det B`` multiplies the
#: determinants of a basis's independent blocks, while ``B^-1``'s denominators
#: only need their least common multiple: SCSD8's bases reach ``D`` of 4,000 bits
#: with results of 100 to 400, and scaling there made the cold solve 40% slower)
SCALE_RATIO = 6
#: ... or ``D`` is longer than this.  Nested structure can make ``D`` enormous
#: while most entries stay short (a chain ``1e300 x_i + x_(i+1) <= b_i`` of 400
#: rows: ``D`` of 400,000 bits, and the final division of every entry by it cost
#: 3.5 times the unscaled solve); the Netlib bases reach at most 8,480 bits.
SCALE_MAX_BITS = 16_384
#: ... or the last measured result's mean denominator was under this many tenths
#: of its longest (see EtaBasis._saw)
SCALE_SPREAD = 6


class EtaBasis:
    def __init__(self, m: int, signs: list[int]) -> None:
        self.m = m
        self.signs = list(signs)  # B0 diagonal
        self.etas: list[tuple[int, mpq, list[tuple[int, mpq]]]] = []  # (p, w_p, other entries)
        self.eta_nonzeros = 0
        #: etas added by pivots since the file was last built (reinversion's own do not count)
        self.updates = 0
        self.det = mpq(-1 if sum(1 for x in signs if x < 0) % 2 else 1)
        #: the longest denominator (bits) in the last ftran's result, or None
        self.seen: int | None = None
        #: whether that result's denominators were nested (see SCALE_SPREAD)
        self.nested = False
        self.scale: mpz | None = None  # the D of the next solve, or None
        self._set_scale()

    # -- the scale of the solves ------------------------------------------
    # ``B^-1 = adj(B) / det(B)``, so the entries of ``B^-1 a`` and ``c^T B^-1``
    # share long denominators built from ``det B``: every operation of a solve
    # in ``mpq`` then meets two long denominators and pays for their gcd (about
    # 11 us at 3,000 bits, against 1 us for a product of integers).  So the
    # solves work on ``D v`` instead of ``v``, with ``D`` the numerator of
    # ``det B``: the entries they build are then (nearly always) integers, or
    # carry only the short denominators of the factors, and each result is
    # divided by ``D`` once at the end.  This is exact whatever ``D`` is (the
    # solves are linear); ``D`` only decides how short the numbers stay.  On
    # STAIR's optimal basis ftran took 272 ms for six columns unscaled and
    # 86 ms scaled, on GROW7's 14.8 and 7.7 ms.
    #
    # Whether to scale at all is decided from the sizes (exactness never depends
    # on it): ``D`` must be long, and the last result's denominators long and
    # not far shorter than ``D`` (see SCALE_MIN_SEEN and SCALE_RATIO).
    def _set_scale(self) -> None:
        d = abs(self.det.numerator)
        bits, seen = d.bit_length(), self.seen
        if bits <= SCALE_BITS or bits > SCALE_MAX_BITS or self.nested or (
                seen is not None and (seen < SCALE_MIN_SEEN or bits > SCALE_RATIO * seen)):
            self.scale = None
        else:
            self.scale = d

    def take_sizes(self, seen: int | None, nested: bool = False) -> None:
        """Start from the sizes an earlier basis of the same solve measured (a
        refactorisation's first solves are scaled as the last ones were)."""
        self.seen, self.nested = seen, nested
        self._set_scale()

    def _saw(self, x: dict[int, mpq]) -> dict[int, mpq]:
        """Note the longest denominator of an ftran's result (and return it)."""
        if x and (self.scale is not None or self.det.numerator.bit_length() > SCALE_BITS):
            bits = [v.denominator.bit_length() for v in x.values()]
            self.seen = top = max(bits)
            # nested rather than shared denominators: most entries far shorter than
            # the longest (a chain of rows: the mean is half the longest, against
            # 0.9-0.95 of it on GROW7 and STAIR), and scaling makes them all long
            self.nested = 10 * sum(bits) < SCALE_SPREAD * top * len(bits)
            self._set_scale()
        return x

    # -- solves --------------------------------------------------------
    def ftran(self, col: list[tuple[int, mpq]]) -> dict[int, mpq]:
        signs, d = self.signs, self.scale
        v: dict[int, mpq] = {}
        for i, a in col:
            v[i] = a if signs[i] > 0 else -a
        if d is None:
            return self._saw(self._etas_forward(v))
        return self._saw(_down(self._etas_forward(_up(v, d)), d))

    def _etas_forward(self, v: dict[int, mpq]) -> dict[int, mpq]:
        """Apply E1^-1 ... Ek^-1 to ``v`` in place (the updates, in order)."""
        for p, wp, rest in self.etas:
            vp = v.get(p)
            if not vp:
                continue
            vp = vp / wp
            v[p] = vp
            _subtract(v, rest, vp)
        return v

    def _etas_backward(self, cb: dict[int, mpq]) -> list[mpq]:
        """c^T Ek^-1 ... E1^-1 as a dense list by position (the updates, reversed)."""
        u = [ZERO] * self.m
        for p, c in cb.items():
            u[p] = c
        for p, wp, rest in reversed(self.etas):
            s = u[p]
            for i, wi in rest:
                ui = u[i]
                if ui:
                    s -= ui * wi
            u[p] = s / wp if s else ZERO
        return u

    def btran_scaled(self, cb: dict[int, mpq]) -> tuple[list[mpq], mpz | None]:
        """``(D c^T B^-1, D)``, or ``(c^T B^-1, None)`` when the basis is not scaled."""
        d = self.scale
        u = self._etas_backward(cb if d is None else _up(cb, d))
        signs = self.signs
        return [x if signs[i] > 0 else -x for i, x in enumerate(u)], d

    def btran_unit(self, p: int) -> tuple[dict[int, mpq], mpz | None]:
        """:meth:`btran_scaled` of the unit vector ``e_p``: ``(D rho, D)`` or
        ``(rho, None)`` for the row ``rho = e_p^T B^-1``, as its nonzero entries
        by position in increasing order (:class:`LUBasis` finds them by what the
        unit vector reaches in the factors)."""
        w, d = self.btran_scaled({p: ONE})
        return {i: v for i, v in enumerate(w) if v}, d

    def btran(self, cb: dict[int, mpq]) -> list[mpq]:
        w, d = self.btran_scaled(cb)
        return w if d is None else [x / d if x else ZERO for x in w]

    def ftran_scaled(self, col) -> tuple[dict[int, mpq], mpz | None]:
        """``(D B^-1 a, D)``, or ``(B^-1 a, None)``; here always the latter
        (:class:`FTBasis` returns the scaled form between refactorisations)."""
        return self.ftran(col), None

    def replace(self, p: int, w: dict[int, mpq], col=None, scale: mpz | None = None) -> None:
        """Record that position ``p`` now holds the column whose ftran is ``w``
        (``col``, the column itself, is used by :class:`FTBasis` only; ``scale``:
        ``w`` is ``D B^-1 a`` from :meth:`ftran_scaled`)."""
        if scale is not None:
            w = _down(w, scale)
        self._replaced(w[p])
        wp = w[p]
        rest = [(i, wi) for i, wi in sorted(w.items()) if i != p]
        self.etas.append((p, wp, rest))
        self.eta_nonzeros += len(rest) + 1
        self.updates += 1

    def _replaced(self, alpha_p: mpq) -> None:
        # B' = B E with E the identity but column p = alpha, so det B' = alpha_p det B
        self.det *= alpha_p
        self._set_scale()


#: a back-substitution goes by the columns its vector reaches when they are at
#: most 1 / SPARSE_SOLVE_SHARE of U's columns (see _back_substitute)
SPARSE_SOLVE_SHARE = 8


def _back_substitute(ucols, v: dict[int, mpq], by_name=None, order=None) -> dict[int, mpq]:
    """``x`` with ``U x = v`` for U given by columns in elimination order,
    ``[(r_k, u_kk, entries above the diagonal by row)]`` (``v`` is used up).
    The kernel of :meth:`LUBasis._upper` (U itself) and of
    :meth:`LUBasis._upper_scaled` (U with its rows made integers).

    With ``by_name`` and ``order`` (:meth:`LUBasis._name_maps`), the columns that
    ``v`` can reach are found first (a column's value feeds the rows of its
    entries, whose columns come earlier), and when they are few only they are
    visited, latest first: the values are the same, found in the same order,
    and a sparse vector costs nothing for the columns it never meets (a
    network's ftran reaches a tenth of U or less)."""
    if by_name is not None:
        limit = len(ucols) // SPARSE_SOLVE_SHARE
        seen = set(v)
        stack = list(seen)
        while stack and len(seen) <= limit:
            above = by_name[stack.pop()][2]
            for i in (above if type(above) is dict else [i for i, _ in above]):
                if i not in seen:
                    seen.add(i)
                    stack.append(i)
        if len(seen) <= limit:
            w = v
            x: dict[int, mpq] = {}
            get = w.get
            for r in sorted(seen, key=order.__getitem__, reverse=True):
                t = get(r)
                if not t:
                    continue
                _, ukk, above = by_name[r]
                t = t / ukk
                x[r] = t
                for i, e in (above.items() if type(above) is dict else above):
                    w[i] = get(i, ZERO) - e * t
            return x
    # the vector dense, by row: U has a column for every row, so the loop below
    # visits every row anyway, and a list entry costs less than a dictionary's
    # (no lookup with a default, no removal of the entries that become zero)
    w = [ZERO] * len(ucols)
    for i, a in v.items():
        w[i] = a
    x = {}
    for r, ukk, above in reversed(ucols):
        t = w[r]
        if not t:
            continue
        t = t / ukk
        x[r] = t
        for i, e in (above.items() if type(above) is dict else above):
            w[i] -= e * t
    return x


def _subtract(v: dict[int, mpq], entries, t: mpq) -> None:
    """``v -= t e`` in place for the sparse ``e`` given as (index, value) pairs,
    dropping the entries that become zero."""
    for i, e in entries:
        nv = v.get(i, ZERO) - e * t
        if nv:
            v[i] = nv
        else:
            v.pop(i, None)


def _up(v: dict[int, mpq], d: mpz) -> dict[int, mpq]:
    return {i: a * d for i, a in v.items()}


def _down(v: dict[int, mpq], d: mpz) -> dict[int, mpq]:
    return {i: a / d for i, a in v.items()}


def reinvert(
    m: int,
    head: list[int],
    cols: list[list[tuple[int, mpq]]],
    unit_row: dict[int, tuple[int, int]],
) -> tuple[EtaBasis, list[int]]:
    """Rebuild a short eta file for the basic columns ``head``.

    ``unit_row`` maps a column that is a signed unit vector to (row, sign).
    Returns the new factorisation and the new position -> column list.
    """
    signs = [-1] * m
    new_head = [-1] * m
    others = []
    for c in head:
        if c in unit_row:
            r, s = unit_row[c]
            signs[r] = s
            new_head[r] = c
        else:
            others.append(c)
    basis = EtaBasis(m, signs)
    free = [new_head[i] == -1 for i in range(m)]
    # remaining nonzeros of each row among the columns still to place
    row_count = [0] * m
    for c in others:
        for i, _ in cols[c]:
            row_count[i] += 1
    others.sort(key=lambda c: (len(cols[c]), c))
    for c in others:
        w = basis.ftran(cols[c])
        best = -1
        for i, wi in w.items():
            if wi and free[i] and (best < 0 or (row_count[i], i) < (row_count[best], best)):
                best = i
        if best < 0:  # pragma: no cover - impossible for a nonsingular basis
            raise ArithmeticError("singular basis during reinversion")
        for i, _ in cols[c]:
            row_count[i] -= 1
        basis.replace(best, w)
        free[best] = False
        new_head[best] = c
    basis.updates = 0
    return basis, new_head


class LUBasis(EtaBasis):
    """An exact sparse LU factorisation of the basis, with eta updates on top.

    ``B`` is factored by Gaussian elimination with Markowitz ordering: at each
    step the pivot is a nonzero ``a_rc`` of the remaining submatrix that keeps
    ``(row count - 1) * (column count - 1)`` smallest, so little fill is made.
    In exact arithmetic every nonzero is an acceptable pivot (there is no
    rounding to guard against), so sparsity is the only aim.

    Step k (pivot row ``r_k``, column ``c_k``) records the multipliers
    ``l_ik = a_i,ck / a_rk,ck`` (the row operations of L) and the pivot row
    (a row of U).  Then, with the pivot row taken as the *position* of the
    basic column ``c_k``:

        ftran:  v = a;  for k = 1..m: v_i -= l_ik v_rk;  then back-substitute U
        btran:  w^T U = c^T (forward, by the columns of U);  then
                for k = m..1: w_rk -= sum_i l_ik w_i

    Pivots made after the factorisation are kept as etas, exactly as in
    :class:`EtaBasis`, and applied after (ftran) or before (btran) the LU part.
    """

    def __init__(self, m: int, lsteps, ucols, pivots, fsrc=None) -> None:
        super().__init__(m, [1] * m)
        self.lsteps = lsteps  # [(r_k, [(i, l_ik), ...])] in elimination order
        self.ucols = ucols  # [(r_k, u_kk, [(r_j, u_jk) for j < k])] in elimination order
        # the same with row r multiplied by rowden[r] (integers where the nucleus was
        # eliminated on integer rows), for the scaled back-substitution; built by the
        # first one from what the elimination recorded (fsrc), or never
        self.fcols = None
        self.rowden = None
        self._fsrc = fsrc
        # the factors by rows, for the transposed solves (made by the first one)
        self._urows: list[dict[int, mpq]] | None = None
        # the rows of _urows still shared with the basis this one was copied from
        # (see fresh_copy): each is copied before its first change; None when
        # every row is this basis's own
        self._urows_shared: set[int] | None = None
        self._lrows = None
        self._lstep = None  # the step that pivoted on each row of L (see _lower_t_reach)
        # U's columns by name (pivot row), the integer copy's, and their order (see
        # _name_maps); made when first needed, again after the columns are rebuilt
        self._names = None
        self.pivots = pivots
        # the short copies made of these factors, by the copy's rule (see
        # shadow.ShortFactors.of): one dictionary, shared with every fresh_copy,
        # whose factors are these same lists until its first update
        self.short_copies: dict = {}
        #: nonzeros of L and U (the diagonal included): the cost of one solve with the factors
        self.lu_nonzeros = sum(len(ls) for _, ls in lsteps) + sum(len(above) + 1 for _, _, above in ucols)
        # L is unit triangular and the positions only permute, so |det B| = prod |u_kk|
        # (the sign is not kept: only the numerator's size is used)
        det = mpq(1)
        for _, ukk, _ in ucols:
            det *= ukk
        self.det = det
        self._set_scale()

    def fresh_copy(self) -> "LUBasis":
        """A copy of this factorisation to pivot on independently of it.

        Only for a basis not yet updated.  The factors are shared: an update
        never changes ``lsteps`` or the lists of ``ucols`` in place (the first
        one replaces them, see :meth:`FTBasis._to_dicts`), and the rows of L
        are only read; U's rows, which an update keeps in step in place, and
        the lists of updates are the copy's own.  So several solves that start
        from one basis (the probes of allocation ranges) factor it once.
        """
        if self.etas or getattr(self, "rsteps", None) or getattr(self, "_dicts", False):
            raise ValueError("only a basis not yet updated can be copied")
        twin = copy.copy(self)
        twin.signs = list(self.signs)
        twin.etas = []
        if self._urows is not None:
            # U's rows shared, each copied before this copy's first change to it
            # (an update changes the rows of the columns it moves: a few of m; a
            # generated 1,000-row network's range probes had copied every row,
            # 0.5 ms a probe)
            twin._urows = list(self._urows)
            twin._urows_shared = set(range(self.m))
        else:
            twin._urows_shared = None
        return twin

    def make_rows(self) -> None:
        """Make the factors' rows now (what the first transposed solve would),
        so that copies made after this share them (see :meth:`fresh_copy`)."""
        if self._urows is None:
            self._urows = _rows_of_upper(self.m, self.ucols)
        if self._lrows is None:
            self._lrows = _rows_of_lower(self.m, self.lsteps)

    # -- kernels, shared with FTBasis (a column's ``above`` entries are a list
    # here and a dictionary by row there once it has been updated) ---------
    def _lower(self, col) -> dict[int, mpq]:
        """``L^-1 a`` by position: the row operations of the elimination, in order."""
        v: dict[int, mpq] = {}
        for i, a in col:
            v[i] = a
        for r, ls in self.lsteps:
            t = v.get(r)
            if t:
                _subtract(v, ls, t)
        return v

    def _upper(self, v: dict[int, mpq]) -> dict[int, mpq]:
        """``U^-1 v`` by back-substitution (``v`` is used up)."""
        names = self._name_maps()
        return _back_substitute(self.ucols, v, names[0], names[2])

    def _name_maps(self):
        """``(U's columns by name, the integer copy's or None, order, next)``: the
        name of a column is its pivot row; ``order`` grows along U's columns (an
        update moves a column to the end with the next number, see FTBasis)."""
        names = self._names
        if names is None:
            ucols, fc = self.ucols, self.fcols
            names = self._names = ({e[0]: e for e in ucols}, None if fc is None else {e[0]: e for e in fc},
                                   {e[0]: i for i, e in enumerate(ucols)}, len(ucols))
        return names

    def _upper_scaled(self, v: dict[int, mpq]) -> dict[int, mpq]:
        """``U^-1 v`` for a scaled solve (``v`` is used up), on U's rows made integers.

        Multiplying row r of ``U x = v`` by ``d_r`` (``rowden``) changes nothing
        in ``x``: back-substitution on ``d_r U_r. x = d_r v_r`` gives the same
        values.  But in a scaled solve the entries of ``x`` (``D B^-1 a``) are
        short fractions, and so is every partial sum ``w_r = d_r v_r - ...``
        (each is ``d_r U_r. x`` over the columns still to come, integers times
        short fractions); so every product and difference below meets only short
        denominators, where U's own entries (ratios of minors, long over long)
        cost a gcd of long numbers each.  Only the division by ``d_r u_kk``, once
        per nonzero of ``x``, and the first ``d_r v_r`` meet a long one.
        """
        fc = self.fcols
        if fc is None:
            if self._fsrc is None:
                return self._upper(v)
            order, scale, uint = self._fsrc
            self._fsrc = None
            self.fcols, self.rowden = _row_scaled(self.m, order, self.ucols, scale, uint)
            self._names = None  # (now with the integer copy's columns)
            fc = self.fcols
        den = self.rowden
        w: dict[int, mpq] = {}
        for r, a in v.items():
            dr = den[r]
            w[r] = a if dr == 1 else a * dr
        names = self._name_maps()
        return _back_substitute(fc, w, names[1], names[2])

    # The transposed solves go by the rows of the factors, so that a zero of the
    # vector costs nothing.  A btran starts from a unit vector (a row of B^-1) or
    # from the costs of the basic columns, and its vector stays sparse far into
    # the solve: on D6CUBE's first 2,500 pivots, 3.6% of the products the column
    # form looked at in U and 27% in L had a nonzero factor.  The rows are made
    # at the first transposed solve of a factorisation (an update keeps U's rows
    # in step, see FTBasis.replace).
    def _upper_t(self, u: list[mpq]) -> list[mpq]:
        """``w`` with ``w^T U = u^T`` (``u`` is used up).

        Column by column of U in elimination order, ``w_r = (u_r - sum_j w_rj
        u_rj,r) / u_rr`` over the rows ``r_j`` pivoted before; here each ``w_r``,
        once known and nonzero, is taken at once out of ``u`` at the later
        columns of its row (``u_c -= w_r u_r,c``), so ``u_r`` holds the whole
        sum when its own column comes.
        """
        rows = self._urows
        if rows is None:
            rows = self._urows = _rows_of_upper(self.m, self.ucols)
        w = [ZERO] * self.m
        for r, ukk, _ in self.ucols:
            s = u[r]
            if s:
                t = w[r] = s / ukk
                for c, uu in rows[r].items():
                    u[c] -= t * uu
        return w

    def _lower_t(self, w: list[mpq]) -> list[mpq]:
        """``w^T L^-1``: the row operations undone in reverse (in place).

        Step k took ``l_ik`` times its pivot row ``r_k`` from each row ``i``, so
        undone in reverse it makes ``w_rk -= sum_i l_ik w_i``.  Each ``w_i`` is
        final when the steps after the one that pivoted on row ``i`` are undone
        (or from the start, for a row no step pivoted on with multipliers); from
        then it is taken into every ``w_rk`` it meets, by the row of L.
        """
        lr = self._lrows
        if lr is None:
            lr = self._lrows = _rows_of_lower(self.m, self.lsteps)
        rows, first = lr
        for i in first:
            wi = w[i]
            if wi:
                for r, l in rows[i]:
                    w[r] -= l * wi
        for r, _ in reversed(self.lsteps):
            wr = w[r]
            if wr:
                for rk, l in rows[r]:
                    w[rk] -= l * wr
        return w

    # A row of B^-1 by what it reaches.  On a network the row of a unit vector
    # holds a few nonzeros of a thousand (55 on average over the 2,887 rows of
    # the generated 1,000-row network's cold solve), and the dense solves above
    # pay for every position all the same, as does each reader of the row.
    # The rows reached are found first, as in _back_substitute: ``w_r`` can be
    # nonzero only if ``r`` is ``p`` or a later column of U with an entry in
    # the row of a column reached before (``u_c -= w_r u_rc``); then, through
    # L's rows, ``w_rk`` only if a reached row ``i`` has a multiplier of step
    # k.  The same values come out: the same products and differences, in an
    # order that respects every dependency (and exact sums do not depend on it).
    def btran_unit(self, p: int) -> tuple[dict[int, mpq], mpz | None]:
        if self.etas:
            return EtaBasis.btran_unit(self, p)
        d = self.scale
        u = {p: ONE if d is None else ONE * d}
        w = self._upper_t_reach(u)
        if w is None:  # reaches much of U: the dense solve
            return EtaBasis.btran_unit(self, p)
        for q, zs in reversed(getattr(self, "rsteps", ())):  # FTBasis's row etas, reversed
            wq = w.get(q)
            if wq:
                for rj, z in zs:
                    w[rj] = w.get(rj, ZERO) - z * wq
        w = self._lower_t_reach(w)
        return {i: w[i] for i in sorted(w) if w[i]}, d

    def _upper_t_reach(self, u: dict[int, mpq]) -> dict[int, mpq] | None:
        """:meth:`_upper_t` for a sparse ``u`` (used up), visiting only the columns
        it reaches; None when those pass ``1 / SPARSE_SOLVE_SHARE`` of U."""
        rows = self._urows
        if rows is None:
            rows = self._urows = _rows_of_upper(self.m, self.ucols)
        by_name, _, order, _ = self._name_maps()
        limit = len(self.ucols) // SPARSE_SOLVE_SHARE
        seen = set(u)
        stack = list(seen)
        while stack:
            for c in rows[stack.pop()]:
                if c not in seen:
                    seen.add(c)
                    stack.append(c)
            if len(seen) > limit:
                return None
        w: dict[int, mpq] = {}
        get = u.get
        for r in sorted(seen, key=order.__getitem__):
            s = get(r)
            if s:
                t = w[r] = s / by_name[r][1]
                for c, uu in rows[r].items():
                    u[c] = get(c, ZERO) - t * uu
        return w

    def _lower_t_reach(self, w: dict[int, mpq]) -> dict[int, mpq]:
        """:meth:`_lower_t` for a sparse ``w`` (in place), visiting only the rows it
        reaches through L; by the dense list when they pass ``1 / SPARSE_SOLVE_SHARE``
        of the rows."""
        lr = self._lrows
        if lr is None:
            lr = self._lrows = _rows_of_lower(self.m, self.lsteps)
        rows = lr[0]
        step = self._lstep
        if step is None:
            step = self._lstep = {r: k for k, (r, _) in enumerate(self.lsteps)}
        limit = self.m // SPARSE_SOLVE_SHARE
        seen = set(w)
        stack = [i for i in seen if rows[i]]
        while stack:
            for r, _ in rows[stack.pop()]:
                if r not in seen:
                    seen.add(r)
                    if rows[r]:
                        stack.append(r)
            if len(seen) > limit:
                dense = [ZERO] * self.m
                for i, v in w.items():
                    dense[i] = v
                self._lower_t(dense)
                return {i: v for i, v in enumerate(dense) if v}
        # a row no step pivoted on is final from the start; a pivoted row once the
        # steps after its own are undone: the latest steps first
        late = step.get
        for i in sorted((i for i in seen if rows[i]), key=lambda i: -late(i, len(step))):
            wi = w.get(i)
            if wi:
                for r, l in rows[i]:
                    w[r] = w.get(r, ZERO) - l * wi
        return w

    def ftran(self, col):
        d = self.scale
        if d is None:
            return self._saw(self._etas_forward(self._upper(self._lower(col))))
        return self._saw(_down(self._etas_forward(self._upper_scaled(_up(self._lower(col), d))), d))

    def btran_scaled(self, cb):
        d = self.scale
        return self._lower_t(self._upper_t(self._etas_backward(cb if d is None else _up(cb, d)))), d


class FTBasis(LUBasis):
    """The sparse LU with Forrest-Tomlin updates instead of eta columns.

    An eta stores ``alpha = B^-1 a_q``, whose exact entries carry the long
    denominators of the whole basis; here ``U`` is kept and the entering
    column's *spike* ``s = R L^-1 a_q`` replaces the leaving column of ``U``
    (``R``: the row etas so far), which is far shorter (on GROW7 21 nonzeros
    and 10,500 bits against 102 and 187,000 for the eta).  With the pivot row
    ``p`` of the leaving column ``k``: the spike goes to the end of the column
    order, and row ``p`` to the end of the row order, where its entries in the
    columns after ``k`` would break the triangle; they are removed by a row
    eta ``v_p -= sum_j z_j v_(r_j)`` over the later pivot rows ``r_j``, whose
    multipliers solve ``z^T U_trail = (row p of U_trail)`` (one forward pass,
    as in btran), and the new diagonal is ``(R_new s)_p``.  So

        ftran:  v = L^-1 a;  the row etas in order;  back-substitute U
        btran:  w^T U = c^T (forward);  the row etas reversed, each
                ``w_(r_j) -= z_j w_p``;  then L as in :class:`LUBasis`.
    """

    def __init__(self, m: int, lsteps, ucols, pivots, fsrc=None) -> None:
        super().__init__(m, lsteps, ucols, pivots, fsrc)
        self.rsteps: list[tuple[int, list[tuple[int, mpq]]]] = []  # row etas, in order
        self._rdicts: list[dict[int, mpq]] = []  # their multipliers by row (see _spike)
        self._last = None
        # Until the first update this is the plain LU (its solves, its lists: a warm
        # start that needs no pivot pays nothing more).  The first update turns each
        # column's entries above the diagonal into a dictionary by row, so that an
        # update finds row p in a column without reading the whole column.
        self._dicts = False

    def fresh_copy(self) -> "FTBasis":
        twin = LUBasis.fresh_copy(self)
        twin.rsteps = []
        twin._rdicts = []
        twin._last = None
        return twin

    def _to_dicts(self) -> None:
        self.ucols = [(r, ukk, dict(above)) for r, ukk, above in self.ucols]
        self._fsrc = None  # the integer copy is built before the first update or not at all
        if self.fcols is not None:
            self.fcols = [(r, ukk, dict(above)) for r, ukk, above in self.fcols]
        self._names = None  # (new tuples)
        self._dicts = True

    def _spike(self, col) -> dict[int, mpq]:
        """``R L^-1 a`` by position."""
        v = self._lower(col)
        # (each row eta's sum over the entries its multipliers and v share, from
        # the shorter side: on a network a row eta holds about 40 multipliers
        # against 19 entries of v)
        for (p, _), zd in zip(self.rsteps, self._rdicts):
            t = _less_z(v.get(p, ZERO), zd, v)
            if t:
                v[p] = t
            else:
                v.pop(p, None)
        return v

    def ftran(self, col):
        if not self._dicts:
            return LUBasis.ftran(self, col)
        v = self._spike(col)
        # kept for replace(): the simplex updates with the column it last solved for
        self._last = (col, dict(v))
        d = self.scale
        return self._saw(self._upper(v) if d is None else _down(self._upper_scaled(_up(v, d)), d))

    def ftran_scaled(self, col):
        # Until the first update (the first ftran after each factorisation) the
        # result is divided in full, and its denominators decide the scale
        # (EtaBasis._saw); after it, a scaled result is handed back as it is.
        if not self._dicts:
            return LUBasis.ftran(self, col), None
        v = self._spike(col)
        self._last = (col, dict(v))
        d = self.scale
        if d is None:
            return self._saw(self._upper(v)), None
        return self._upper_scaled(_up(v, d)), d

    def btran_scaled(self, cb):
        if not self._dicts:
            return LUBasis.btran_scaled(self, cb)
        d = self.scale
        u = [ZERO] * self.m
        for p, c in cb.items():
            u[p] = c if d is None else c * d
        w = self._upper_t(u)
        for p, zs in reversed(self.rsteps):
            wp = w[p]
            if wp:
                for rj, z in zs:
                    w[rj] -= z * wp
        return self._lower_t(w), d

    def _clear_row(self, p: int, urows, by_name, fc_by_name, stamps) -> dict[int, mpq]:
        """The multipliers ``z`` (by pivot row) that clear row p from the columns after
        its own, found from U's rows: a column is looked at only if it has an entry in
        row p or in the row of a column whose multiplier is nonzero (any other gets
        ``t = 0`` and changes nothing), in U's column order (``stamps``), so ``z`` is
        the one the scan of every later column makes, in the same order.  Row p's
        entries leave those columns (and the integer copy's) on the way."""
        z: dict[int, mpq] = {}
        first = urows[p]
        heap = [(stamps[c], c) for c in first]
        heapq.heapify(heap)
        queued = set(first)
        while heap:
            c = heapq.heappop(heap)[1]
            _, ujj, above = by_name[c]
            t = above.pop(p, None)  # row p leaves this column: R_new makes that entry zero
            if t is None:
                t = ZERO  # (reached through z)
            elif fc_by_name is not None:
                del fc_by_name[c][2][p]
            if z:
                t = _less_z(t, z, above)
            if t:
                z[c] = t / ujj
                for c2 in urows[c]:  # the later columns with an entry in row c
                    if c2 not in queued:
                        queued.add(c2)
                        heapq.heappush(heap, (stamps[c2], c2))
        return z

    def replace(self, p: int, w: dict[int, mpq], col=None, scale=None) -> None:
        if col is None:
            raise ValueError("a Forrest-Tomlin update needs the entering column")
        if scale is None:
            self._replaced(w[p])
        else:
            # a scaled ftran's own denominators are not measured; the pivot's, which
            # is divided anyway, can only raise the last measure, while D grows
            # by alpha_p's numerator at each update, so a D that outgrows the
            # results still ends the scaling (an unscaled ftran measures them all)
            alpha_p = w[p] / scale
            self.seen = max(self.seen or 0, alpha_p.denominator.bit_length())
            self._replaced(alpha_p)
        if not self._dicts:
            self._to_dicts()
        last = self._last
        spike = last[1] if last is not None and last[0] is col else self._spike(col)
        self._last = None
        ucols, fc = self.ucols, self.fcols
        urows = self._urows
        if urows is not None:
            by_name, fc_by_name, stamps, _ = self._name_maps()
            k = ucols.index(by_name[p])
            z = self._clear_row(p, urows, by_name, fc_by_name, stamps)
        else:
            k = next(i for i, (r, _, _) in enumerate(ucols) if r == p)
            # multipliers z (by pivot row) that clear row p from the columns after k:
            # column j's entry in row p, less what the earlier multipliers took, over u_jj
            z = {}
            for j in range(k + 1, len(ucols)):
                r, ujj, above = ucols[j]
                t = above.pop(p, None)  # row p leaves this column: R_new makes that entry zero
                if fc is not None and t is not None:
                    del fc[j][2][p]
                if t is None:
                    if not z:
                        continue
                    t = ZERO
                if z:
                    t = _less_z(t, z, above)
                if t:
                    z[r] = t / ujj
        d = spike.get(p, ZERO)
        for rj, zj in z.items():
            sj = spike.get(rj)
            if sj:
                d -= zj * sj
        if not d:
            raise ArithmeticError("singular basis after an update")
        urows = self._urows
        if urows is not None:
            # U's rows in step: row p has left every later column (above), the
            # column it pivoted goes, and the spike comes in its place, named p again
            shared = self._urows_shared
            urows[p] = {}
            if shared:
                shared.discard(p)
                for ri in ucols[k][2]:
                    if ri in shared:  # (still the original's row: copied first)
                        shared.discard(ri)
                        urows[ri] = dict(urows[ri])
                    del urows[ri][p]
            else:
                for ri in ucols[k][2]:
                    del urows[ri][p]
        del ucols[k]
        ucols.append((p, d, {i: v for i, v in sorted(spike.items()) if i != p and v}))
        if urows is not None:
            shared = self._urows_shared
            for i, v in ucols[-1][2].items():
                if shared and i in shared:
                    shared.discard(i)
                    urows[i] = dict(urows[i])
                urows[i][p] = v
        if fc is not None:
            # the spike's rows scaled as the rest of U's (row p keeps its d_p)
            den = self.rowden
            del fc[k]
            fc.append((p, d if den[p] == 1 else d * den[p],
                       {i: (v if den[i] == 1 else v * den[i]) for i, v in ucols[-1][2].items()}))
        names = self._names
        if names is not None:  # column p is now the last
            by_name, fc_by_name, stamps, last = names
            by_name[p] = ucols[-1]
            if fc_by_name is not None:
                fc_by_name[p] = fc[-1]
            stamps[p] = last
            self._names = (by_name, fc_by_name, stamps, last + 1)
        if z:
            self.rsteps.append((p, list(z.items())))
            self._rdicts.append(z)
        self.eta_nonzeros += len(z) + len(ucols[-1][2]) + 1
        self.updates += 1


def _less_z(t: mpq, z: dict[int, mpq], above: dict[int, mpq]) -> mpq:
    """``t - sum_i z_i u_i`` over the rows ``i`` in both ``z`` and the column ``above``."""
    if len(z) < len(above):
        for ri, zi in z.items():
            u = above.get(ri)
            if u is not None:
                t -= zi * u
    else:
        for ri, u in above.items():
            zi = z.get(ri)
            if zi is not None:
                t -= zi * u
    return t


def _rows_of_upper(m: int, ucols) -> list[dict[int, mpq]]:
    """U's entries above the diagonal by row: ``rows[r_j][r_k] = u_rj,ck``, each
    column named by its pivot row (unique, and kept by a Forrest-Tomlin update)."""
    rows: list[dict[int, mpq]] = [{} for _ in range(m)]
    for r, _, above in ucols:
        for rj, u in (above.items() if type(above) is dict else above):
            rows[rj][r] = u
    return rows


def _rows_of_lower(m: int, lsteps):
    """L's multipliers by row, ``rows[i] = [(r_k, l_ik), ...]``, and the rows no
    step pivoted on (their values are final before any step is undone)."""
    rows: list[list] = [[] for _ in range(m)]
    pivoted = [False] * m
    for r, ls in lsteps:
        pivoted[r] = True
        for i, l in ls:
            rows[i].append((r, l))
    return rows, [i for i in range(m) if not pivoted[i] and rows[i]]


class LongNumbers(Exception):
    """Raised by :func:`factor_lu` when asked to give up on long numbers."""


def factor_ft(m, head, cols, unit_row, integer_rows=None, give_up=None):
    """:func:`factor_lu`, as an :class:`FTBasis` (Forrest-Tomlin updates on top)."""
    lu, new_head = factor_lu(m, head, cols, unit_row, integer_rows, give_up)
    return FTBasis(m, lu.lsteps, lu.ucols, lu.pivots, lu._fsrc), new_head


def factor_lu(
    m: int,
    head: list[int],
    cols: list[list[tuple[int, mpq]]],
    unit_row: dict[int, tuple[int, int]],
    integer_rows: bool | None = None,
    give_up: int | None = None,
) -> tuple[LUBasis, list[int]]:
    """Factor the basis of columns ``head``; return it and the position -> column list.

    ``integer_rows``: eliminate the nucleus on integer rows (True), on fractions
    (False), or as :func:`_integer_rows` decides (None).  The factors are exact
    either way; only the pivot order and the cost can differ.

    ``give_up``: raise :class:`LongNumbers` before eliminating the nucleus (what
    the singletons leave) if its entries, written as fractions, hold this many
    bits or more in all (the caller has another way for such bases, see
    :meth:`Simplex._setup_warm`).

    Raises ArithmeticError when the columns are linearly dependent.
    """
    rows: list[dict[int, mpq]] = [{} for _ in range(m)]  # active submatrix by rows: {col: value}
    colrows: dict[int, set[int]] = {}  # active rows of each column
    row_alive = [True] * m
    ucols_by_col: dict[int, list] = {}  # entries of U above the diagonal, by column
    pivot_of_col: dict[int, tuple[int, mpq]] = {}
    order: list[int] = []  # columns in elimination order
    lsteps = []

    def retire(r: int, c: int, piv: mpq) -> None:
        """Record pivot (r, c) and take its row and column out of the active submatrix."""
        pivot_of_col[c] = (r, piv)
        order.append(c)
        row_alive[r] = False
        rows[r] = {}
        remaining.discard(c)
        del colrows[c]

    # Singletons first (the triangular part, which in practice is most of a
    # basis).  A column with one nonzero (every basic logical) is its own pivot
    # with no elimination and no fill: its row becomes a row of U and is retired.
    # These are taken before the active submatrix is built, so the entries of
    # the other columns in retired rows go straight to U.  (Two such columns in
    # one row are parallel: the basis is singular.)
    others = []
    for c in head:
        col = cols[c]
        if len(col) == 1 and col[0][1]:
            r, piv = col[0]
            if not row_alive[r]:
                raise ArithmeticError("singular basis")
            row_alive[r] = False
            pivot_of_col[c] = (r, piv)
            order.append(c)
            ucols_by_col[c] = []
        else:
            others.append(c)
    for c in others:
        rs = set()
        above = []
        for i, a in cols[c]:
            if not a:
                continue
            if row_alive[i]:
                ri = rows[i]
                if c in ri:  # a repeated row (the form never makes one): sum the entries
                    a += ri[c]
                    if not a:
                        del ri[c]
                        rs.discard(i)
                        continue
                ri[c] = a
                rs.add(i)
            else:
                above.append((i, a))
        colrows[c] = rs
        ucols_by_col[c] = above
    remaining = set(others)
    # Retiring a row may leave other columns with one nonzero in the active
    # submatrix; these are taken in turn, until none is left.
    queue = deque(c for c in others if len(colrows[c]) == 1)
    while queue:
        c = queue.popleft()
        if c not in remaining:
            continue
        rs = colrows[c]
        if len(rs) != 1:
            continue  # no nonzero left (singular: the Markowitz loop below says so)
        (r,) = rs
        piv = rows[r][c]
        for cj, val in rows[r].items():
            if cj != c:
                ucols_by_col[cj].append((r, val))
                crs = colrows[cj]
                crs.discard(r)
                if len(crs) == 1:
                    queue.append(cj)
        retire(r, c, piv)
    # Then rows with one nonzero: pivoting there needs multipliers (the column's
    # other entries) but makes no fill, since the pivot row has nothing else; the
    # rows that lose their entry in the column may become singletons in turn.
    # (Neither kind of step can make a new column singleton: a row singleton's
    # row has no other column to leave.)
    queue = deque(i for i in range(m) if row_alive[i] and len(rows[i]) == 1)
    while queue:
        r = queue.popleft()
        if not row_alive[r] or len(rows[r]) != 1:
            continue
        ((c, piv),) = rows[r].items()
        ls = []
        for i in sorted(colrows[c]):
            if i == r:
                continue
            ri = rows[i]
            ls.append((i, ri.pop(c) / piv))
            if len(ri) == 1:
                queue.append(i)
        if ls:
            lsteps.append((r, ls))
        retire(r, c, piv)
    # The nucleus (what the singletons leave) is eliminated on rows of fractions
    # while its numbers are short, and on integer rows once a multiplier's
    # denominator is longer than INT_ROWS_BITS, if each row's denominators share
    # a short multiple (see _integer_rows); integer_rows=True: integer rows
    # throughout.
    if give_up is not None:
        size = 0
        for i, ri in enumerate(rows):
            if ri and row_alive[i]:
                for v in ri.values():
                    size += v.numerator.bit_length() + v.denominator.bit_length()
        if size >= give_up:
            raise LongNumbers(f"a nucleus of {len(remaining)} columns and {size} bits")
    scale = _integer_rows(rows, row_alive, force=True) if integer_rows else None
    ints = scale is not None
    may_switch = integer_rows is None
    # the rows of U from integer rows, scaled to integers: {column: {row: d_r u_rc}}
    uint: dict[int, dict[int, mpz]] = {}
    # a lazy heap of (column count, column): stale entries are skipped when popped
    heap = [(len(colrows[c]), c) for c in remaining]
    heapq.heapify(heap)
    while remaining:
        best = None
        best_cost = None
        # look at the sparsest columns first; a few candidates are enough
        cand_cols = []
        while heap and len(cand_cols) < 4:
            cnt, c = heapq.heappop(heap)
            if c in remaining and cnt == len(colrows[c]) and c not in cand_cols:
                cand_cols.append(c)
        for c in cand_cols:
            heapq.heappush(heap, (len(colrows[c]), c))
        best_fill = -1
        for c in cand_cols:
            cc = len(colrows[c])
            if cc == 0:
                raise ArithmeticError("singular basis")
            for i in sorted(colrows[c]):
                # fill first; among equal fill, the pivot with the shortest numbers,
                # since every multiplier and updated entry is divided by it (on
                # integer rows, the shortest integer: it multiplies the other rows)
                ri = rows[i]
                fill = (len(ri) - 1) * (cc - 1)
                if fill > best_fill >= 0:
                    continue
                v = ri[c]
                cost = (fill, v.bit_length() if ints else v.numerator.bit_length() + v.denominator.bit_length())
                if best_cost is None or cost < best_cost:
                    best, best_cost, best_fill = (i, c), cost, fill
        r, c = best
        prow = rows[r]
        if ints:
            piv, ls, touched = _eliminate_integer(r, c, rows, colrows, scale, ucols_by_col, uint)
        else:
            piv, ls, touched, longest = _eliminate_fraction(r, c, rows, colrows, ucols_by_col)
            if may_switch and longest > INT_ROWS_BITS:
                may_switch = False  # one try: the rows stay fractions if it fails
                scale = _integer_rows(rows, row_alive)
                ints = scale is not None
        if ls:  # a step with no multipliers changes nothing in either solve
            lsteps.append((r, ls))
        # retire the pivot row and column
        for cj in prow:
            if cj != c:
                colrows[cj].discard(r)
                touched.add(cj)
        retire(r, c, piv)
        for cj in touched:
            if cj in remaining:
                heapq.heappush(heap, (len(colrows[cj]), cj))
    # U columns in elimination order: entries above the diagonal are those from
    # pivot rows eliminated before this column's own pivot
    position = {c: pivot_of_col[c][0] for c in order}
    ucols = []
    for c in order:
        r, piv = pivot_of_col[c]
        ucols.append((r, piv, ucols_by_col[c]))
    new_head = [-1] * m
    for c, r in position.items():
        new_head[r] = c
    return LUBasis(m, lsteps, ucols, position, (order, scale, uint) if ints else None), new_head


def _row_scaled(m, order, ucols, scale, uint):
    """U with each row ``r`` multiplied by a multiple ``d_r`` of its denominators,
    by column as ``ucols``; and the ``d_r`` by row (see :meth:`LUBasis._upper_scaled`).

    A row of U made from an integer row ``s_r R_r`` is ``n_r R_r / d_r``
    (``s_r = n_r / d_r``), and its integers ``n_r R_r`` were recorded during
    the elimination (``uint``, by column then row).  The other rows (the
    model's own entries, or rows eliminated on fractions before the switch):
    ``d_r`` is the least common multiple of their denominators, or 1 as soon as
    that is long (past ``INT_ROWS_SLACK`` + twice the longest so far; the
    multiple is not pursued further, so its cost stays bounded), and then the
    row stays as it is.
    """
    rowden: list = [None] * m
    for r, s in scale.items():
        rowden[r] = s.denominator
    lcms: dict[int, mpz] = {}
    tops: dict[int, int] = {}

    def meet(r: int, v: mpq) -> None:
        d = v.denominator
        if d != 1:
            lcm = lcms[r] = _lcm(lcms.get(r, ONE_Z), d)
            top = tops[r] = max(tops.get(r, 0), d.bit_length())
            if lcm.bit_length() > INT_ROWS_SLACK + 2 * top:
                rowden[r] = ONE_Z  # given up: this row stays as it is

    for r, ukk, above in ucols:
        if rowden[r] is None:
            meet(r, ukk)
        for rj, u in above:
            if rowden[rj] is None:
                meet(rj, u)
    for r in range(m):
        if rowden[r] is None:
            d = lcms.get(r, ONE_Z)
            rowden[r] = d if d.bit_length() <= INT_ROWS_SLACK + 2 * tops.get(r, 0) else ONE_Z
    fcols = []
    for c, (r, ukk, above) in zip(order, ucols):
        rec = uint.get(c, {})
        row = []
        for rj, u in above:
            v = rec.get(rj)
            if v is None:
                dj = rowden[rj]
                v = u if dj == 1 else u * dj
            row.append((rj, v))
        v = rec.get(r)
        if v is None:
            v = ukk if rowden[r] == 1 else ukk * rowden[r]
        fcols.append((r, v, row))
    return fcols, rowden


#: the nucleus is eliminated on fractions until a multiplier's denominator has
#: more bits than this, and on integer rows from there.  On short numbers the
#: fractions are cheaper: the bases of DEGEN2's and BANDM's cold solves took
#: twice as long on integer rows throughout.  On long ones the integer rows are:
#: STAIR's optimal basis took 81 ms against 120 ms on fractions, PILOT4's 46
#: against 58, and the 66 bases of STAIR's cold solve 1.0 s against 1.4 s (at
#: 256 bits BANDM's switched too, and were no faster; at 1,024, STAIR's optimal
#: basis switched late and took 100 ms)
INT_ROWS_BITS = 512
#: a row becomes an integer row only if the least common multiple of its
#: denominators has at most INT_ROWS_SLACK + 2 x (the longest one's) bits
INT_ROWS_SLACK = 64


def _integer_rows(rows: list[dict], row_alive: list[bool], force: bool = False) -> dict[int, mpq] | None:
    """Turn the active rows into primitive integer rows, in place, and return
    each row's scale (true row ``i`` = ``scale[i] * rows[i]``); or leave them as
    they are and return None.

    Why: every entry of a Schur complement of a rational matrix is a ratio of
    minors, so the entries of one row share long denominators, and in ``mpq``
    each update ``a_ij - l_i a_rj`` pays two gcds of long numbers.  On integer
    rows the same step is ``R_i <- (u R_i - v R_r)`` with ``u/v`` the pivot over
    ``R_ic`` in lowest terms, followed by dividing out the row's content (one
    gcd over the row): products and exact divisions of integers, with no
    per-entry gcd.  On STAIR's optimal basis the factorisation took 113 ms on
    fractions and 60 ms on integer rows; on PILOT4's, 48 and 34 ms.  On short
    numbers the extra passes over each row cost more than the gcds they save,
    hence INT_ROWS_BITS.

    When: multiplying each row by the least common multiple ``L_i`` of its
    denominators gives an integer matrix, every later entry of which is a ratio
    of its minors, and a primitive row holds at most those minors: no number is
    longer than the numerators the fractions would carry, given each ``L_i``
    short.  Rows whose entries share their denominators (decimal data, or the
    rows of a Schur complement) qualify.  Denominators with many different
    prime factors (``1/3, 1/7, 1/11, ...`` in one row) would make ``L_i`` the
    product of them all, and with it every entry of the row; then all rows stay
    fractions (``INT_ROWS_SLACK``; ``force`` turns them to integers all the
    same, for tests).
    """
    live = [i for i, ri in enumerate(rows) if ri and row_alive[i]]
    lcms = []
    for i in live:
        dens = [v.denominator for v in rows[i].values()]
        limit = INT_ROWS_SLACK + 2 * max(d.bit_length() for d in dens)
        lcm = ONE_Z
        for d in dens:
            if d != 1:
                lcm = _lcm(lcm, d)
                if lcm.bit_length() > limit and not force:  # given up early: no lcm grows past this
                    return None
        lcms.append(lcm)
    scale: dict[int, mpq] = {}
    for i, lcm in zip(live, lcms):
        ri = rows[i]
        r = {c: v.numerator * (lcm // v.denominator) for c, v in ri.items()}
        g = _gcd(*r.values())
        rows[i] = r if g == 1 else {c: _divexact(v, g) for c, v in r.items()}
        scale[i] = mpq(g, lcm)
    return scale


def _eliminate_fraction(r, c, rows, colrows, ucols_by_col):
    """One elimination step on rows of fractions; returns (pivot, multipliers,
    columns whose counts changed, the longest multiplier's denominator in bits).
    The pivot row becomes a row of U."""
    prow = rows[r]
    piv = prow[c]
    for cj, val in prow.items():
        if cj != c:
            ucols_by_col[cj].append((r, val))
    touched: set[int] = set()
    ls = []
    longest = 0
    for i in sorted(colrows[c]):
        if i == r:
            continue
        ri = rows[i]
        l = ri.pop(c) / piv
        ls.append((i, l))
        bits = l.denominator.bit_length()
        if bits > longest:
            longest = bits
        for cj, val in prow.items():
            if cj == c:
                continue
            nv = ri.get(cj, ZERO) - l * val
            if nv:
                if cj not in ri:
                    colrows[cj].add(i)
                    touched.add(cj)
                ri[cj] = nv
            elif cj in ri:
                del ri[cj]
                colrows[cj].discard(i)
                touched.add(cj)
    return piv, ls, touched, longest


def _eliminate_integer(r, c, rows, colrows, scale, ucols_by_col, uint):
    """One elimination step on primitive integer rows (see :func:`_integer_rows`).

    Row ``i`` is ``s_i R_i`` and the pivot row ``s_r R_r``.  The multiplier is
    ``l = s_i R_ic / (s_r R_rc)``, and with ``g = gcd(R_rc, R_ic)``,
    ``u = R_rc / g``, ``v = R_ic / g``:

        s_i R_i - l s_r R_r = (s_i / u) (u R_i - v R_r),

    whose entry in column c is ``(u R_ic - v R_rc) = 0``.  The new integer row
    is then divided by its content ``h`` (and ``s_i`` multiplied by it), which
    keeps it primitive and so no longer than the minors it stands for.
    """
    prow = rows[r]
    sp = scale[r]
    rpc = prow[c]
    piv = sp * rpc
    n = sp.numerator  # row r of U is (n R_r) / (the denominator of s_r): keep both forms
    uint.setdefault(c, {})[r] = n * rpc
    pitems = []
    for cj, val in prow.items():
        if cj != c:
            ucols_by_col[cj].append((r, sp * val))
            uint.setdefault(cj, {})[r] = n * val
            pitems.append((cj, val))
    touched: set[int] = set()
    ls = []
    for i in sorted(colrows[c]):
        if i == r:
            continue
        ri = rows[i]
        ric = ri.pop(c)
        si = scale[i]
        ls.append((i, (si * ric) / piv))
        g = _gcd(rpc, ric)
        u, v = _divexact(rpc, g), _divexact(ric, g)
        if u != 1:
            ri = {cj: x * u for cj, x in ri.items()}
            si = si / u
        for cj, val in pitems:
            nv = ri.get(cj, 0) - v * val
            if nv:
                if cj not in ri:
                    colrows[cj].add(i)
                    touched.add(cj)
                ri[cj] = nv
            elif cj in ri:
                del ri[cj]
                colrows[cj].discard(i)
                touched.add(cj)
        if ri:
            h = _gcd(*ri.values())
            if h != 1:
                ri = {cj: _divexact(x, h) for cj, x in ri.items()}
                si = si * h
        rows[i] = ri
        scale[i] = si
    return piv, ls, touched
