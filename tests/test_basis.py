"""The exact basis factorisations: one table of random bases runs over all of them.

The product-form reinversion, the sparse LU with eta updates (its nucleus
eliminated on integer rows or on fractions) and the sparse LU with
Forrest-Tomlin updates must give identical exact solves (ftran and btran),
also after a run of updates, and the same optimum when the solver uses any.
"""

import random
from fractions import Fraction
from functools import partial

import pytest
from gmpy2 import mpq, mpz

import exactlp
import exactlp.solver.basis as basis_module
import exactlp.solver.simplex as simplex
from exactlp.solver.basis import factor_ft, factor_lu, reinvert

from .conftest import NETLIB, needs_netlib, netlib_table
from .helpers import always_scaled, never_scaled
from .models import KNOWN, klee_minty

def factor_ft_with_rows(m, head, cols, unit_row, **kw):
    """:func:`factor_ft` with U's rows made at once, so that every Forrest-Tomlin
    update clears its row through them (``FTBasis._clear_row``) instead of
    scanning every later column (what an update does before any btran)."""
    basis, new_head = factor_ft(m, head, cols, unit_row, **kw)
    basis.make_rows()
    return basis, new_head


FACTORS = {
    "eta-file": reinvert,
    "sparse-lu": factor_lu,  # the nucleus on integer rows once its numbers are long (here never)
    "sparse-lu-fractions": partial(factor_lu, integer_rows=False),
    "sparse-lu-integers": partial(factor_lu, integer_rows=True),
    "sparse-lu-ft": factor_ft,
    "sparse-lu-ft-integers": partial(factor_ft, integer_rows=True),
    "sparse-lu-ft-rows": factor_ft_with_rows,
    "sparse-lu-ft-integers-rows": partial(factor_ft_with_rows, integer_rows=True),
}


def random_bases(count=200, seed=7):
    rng = random.Random(seed)
    out = []
    while len(out) < count:
        m = rng.randint(1, 8)
        n = m + rng.randint(0, 5)
        cols = []
        for _ in range(n):
            col = [(i, mpq(rng.randint(-4, 4), rng.randint(1, 3))) for i in range(m) if rng.random() < 0.45]
            cols.append([(i, a) for i, a in col if a])
        cols += [[(i, mpq(-1))] for i in range(m)]
        unit = {n + i: (i, -1) for i in range(m)}
        out.append((m, cols, unit, rng.sample(range(len(cols)), m)))
    return out


def dense_solve(m, cols, head, rhs):
    """B x = rhs by Gauss-Jordan in Fractions (independent of both factorisations)."""
    from fractions import Fraction as F

    q = lambda v: F(int(v.numerator), int(v.denominator))  # noqa: E731
    M = [[F(0)] * m + [q(rhs.get(i, mpq(0)))] for i in range(m)]
    for k, c in enumerate(head):
        for i, a in cols[c]:
            M[i][k] = F(int(a.numerator), int(a.denominator))
    for c in range(m):
        p = next((r for r in range(c, m) if M[r][c] != 0), None)
        if p is None:
            return None
        M[c], M[p] = M[p], M[c]
        M[c] = [v / M[c][c] for v in M[c]]
        for r in range(m):
            if r != c and M[r][c]:
                M[r] = [a - M[r][c] * b for a, b in zip(M[r], M[c])]
    return [M[i][m] for i in range(m)]


@pytest.fixture(params=["scaled when long", "always scaled"])
def scale_bits(request, monkeypatch):
    """The solves scale by ``det B``'s numerator past SCALE_BITS; 0 scales every solve."""
    if request.param == "always scaled":
        always_scaled(monkeypatch)
    return basis_module.SCALE_BITS


def dense_det(m, cols, head):
    from fractions import Fraction as F

    M = [[F(0)] * m for _ in range(m)]
    for k, c in enumerate(head):
        for i, a in cols[c]:
            M[i][k] += F(int(a.numerator), int(a.denominator))
    det = F(1)
    for c in range(m):
        p = next((r for r in range(c, m) if M[r][c] != 0), None)
        if p is None:
            return F(0)
        if p != c:
            M[c], M[p] = M[p], M[c]
            det = -det
        det *= M[c][c]
        for r in range(c + 1, m):
            if M[r][c]:
                f = M[r][c] / M[c][c]
                M[r] = [a - f * b for a, b in zip(M[r], M[c])]
    return det


@pytest.mark.parametrize("name", FACTORS)
def test_ftran_matches_an_independent_dense_solve(name, scale_bits):
    factor = FACTORS[name]
    checked = 0
    for m, cols, unit, head in random_bases():
        rhs = {i: mpq(i + 1) for i in range(m)}
        ref = dense_solve(m, cols, head, rhs)
        if ref is None:
            with pytest.raises(ArithmeticError):
                factor(m, head, cols, unit)
            continue
        basis, order = factor(m, head, cols, unit)
        x = basis.ftran(list(rhs.items()))
        got = {order[p]: v for p, v in x.items()}
        from fractions import Fraction as F

        assert {c: F(int(got.get(c, mpq(0)).numerator), int(got.get(c, mpq(0)).denominator)) for c in head} == \
            {c: ref[k] for k, c in enumerate(head)}
        checked += 1
    assert checked > 50


def test_every_factorisation_agrees_after_updates(scale_bits):
    # eta columns (product form, LU + etas) and Forrest-Tomlin updates of the LU
    # must give the same exact ftran and btran after a run of basis changes, and
    # ftran must still match an independent dense solve with the changed basis
    from fractions import Fraction as F

    rng = random.Random(3)
    updated = row_scaled = between = kept_rows = cleared = 0
    for m, cols, unit, head in random_bases():
        try:
            group = [f(m, head, cols, unit) for f in FACTORS.values()]
        except ArithmeticError:
            continue
        for _ in range(6):  # a run of updates on top of each
            q = rng.randrange(len(cols))
            ws = [b.ftran(cols[q]) for b, _ in group]
            if not ws[0]:
                break
            leaving = group[0][1][min(ws[0])]
            ps = [h.index(leaving) for _, h in group]
            if not all(w.get(p) for w, p in zip(ws, ps)):
                break
            for (b, h), w, p in zip(group, ws, ps):
                b.replace(p, w, cols[q])
                h[p] = q
            updated += 1
            # the row etas of an update are the same whether its row was cleared
            # through U's rows or by the scan of every later column
            names = list(FACTORS)
            for plain, rows in (("sparse-lu-ft", "sparse-lu-ft-rows"),
                                ("sparse-lu-ft-integers", "sparse-lu-ft-integers-rows")):
                a, b = group[names.index(plain)][0], group[names.index(rows)][0]
                assert a.rsteps == b.rsteps and a.ucols == b.ucols
                cleared += b._names is not None and bool(b.rsteps)
            # a btran between updates: the factors' rows (made by the first
            # transposed solve) must be kept in step by each update after it
            if rng.random() < 0.6:
                ys = [b.btran({p: mpq(h[p] + 1) for p in range(m)}) for b, h in group]
                assert all(y == ys[0] for y in ys[1:])
                h0 = group[0][1]
                for p, c in enumerate(h0):
                    assert sum((ys[0][i] * a for i, a in cols[c]), mpq(0)) == mpq(c + 1)
                between += 1
        for j in range(len(cols)):
            first, *others = ({h[p]: v for p, v in bb.ftran(cols[j]).items()} for bb, h in group)
            assert all(o == first for o in others)
        heads = [list(h) for _, h in group]
        ys = [b.btran({p: mpq(h[p] + 1) for p in range(m)}) for b, h in group]  # y by row
        assert all(y == ys[0] for y in ys[1:])
        rhs = {i: mpq(2 * i + 1, 3) for i in range(m)}
        ref = dense_solve(m, cols, heads[0], rhs)
        x = {heads[0][p]: v for p, v in group[0][0].ftran(list(rhs.items())).items()}
        assert {c: F(int(x.get(c, mpq(0)).numerator), int(x.get(c, mpq(0)).denominator)) for c in heads[0]} == \
            {c: ref[k] for k, c in enumerate(heads[0])}
        # btran against the definition: y^T a_c = cost of c for every basic column
        y = ys[0]
        for p, c in enumerate(heads[0]):
            assert sum((y[i] * a for i, a in cols[c]), mpq(0)) == mpq(c + 1)
        # the determinant each keeps (the solves' scale is its numerator) is the
        # changed basis's, up to sign
        det = dense_det(m, cols, heads[0])
        for (b, h) in group:
            assert abs(F(int(b.det.numerator), int(b.det.denominator))) == abs(det) != 0
            bits, seen = abs(b.det.numerator).bit_length(), b.seen
            scaled = bits > scale_bits and bits <= basis_module.SCALE_MAX_BITS and not b.nested and (
                seen is None or (seen >= basis_module.SCALE_MIN_SEEN and bits <= basis_module.SCALE_RATIO * seen))
            assert b.scale == (abs(b.det.numerator) if scaled else None)
            row_scaled += check_row_scaled(b)
            if getattr(b, "_urows", None) is not None:  # U's rows, kept in step, are U's rows
                assert b._urows == basis_module._rows_of_upper(m, b.ucols)
                kept_rows += bool(b.updates)
            if getattr(b, "_names", None) is not None:  # U's columns by name, in U's order
                by_name, fc_by_name, stamps, last = b._names
                assert [by_name[e[0]] for e in b.ucols] == b.ucols and len(by_name) == m
                assert sorted(stamps, key=stamps.get) == [e[0] for e in b.ucols] and max(stamps.values()) < last
                if b.fcols is not None:
                    assert [fc_by_name[e[0]] for e in b.fcols] == b.fcols
    # the integer copy of U is built by the first scaled ftran of a factorisation
    # whose nucleus went to integer rows (here only the forced ones)
    assert updated > 300 and between > 150 and kept_rows > 100 and cleared > 100
    if scale_bits == 0:
        assert row_scaled > 50


def check_row_scaled(b):
    """The integer copy of U that scaled ftrans use (LUBasis.fcols) must be U with
    row r multiplied by rowden[r], entry for entry, after any run of updates."""
    fc = getattr(b, "fcols", None)
    if fc is None:
        return False
    den = b.rowden
    assert len(fc) == len(b.ucols)
    for (r, ukk, above), (fr, fkk, fabove) in zip(b.ucols, fc):
        assert fr == r and fkk == ukk * den[r]
        assert dict(fabove) == {rj: u * den[rj] for rj, u in dict(above).items()}
    return True


def test_pivot_path_does_not_depend_on_the_factorisation(monkeypatch):
    # exact arithmetic gives the same numbers whatever the factorisation; the
    # tie-breaks (lowest column, largest |alpha_p|, the lexicographic order of a
    # degenerate run, fixed by column) must not depend on basis positions either,
    # so every factorisation, refactoring at any interval, takes the same pivots
    from exactlp.io import model_from_text
    from exactlp.solver.events import Pivot

    models = [model_from_text(text) for _, text, _, _, _ in KNOWN] + [model_from_text(klee_minty(5))]
    monkeypatch.setattr(simplex, "LEX_AFTER_FACTOR", 0)  # lexicographic ties from the first degenerate pivot
    paths = {}
    for name, factor in FACTORS.items():
        for every in (2, 16):
            # never scaled, or every solve scaled (the ratio test then reads D alpha)
            for scaled in (False, True):
                monkeypatch.setattr(simplex, "FACTOR", factor)
                monkeypatch.setattr(simplex, "REINVERT_EVERY", every)
                monkeypatch.setattr(simplex, "REINVERT_EVERY_SCALED", every)
                monkeypatch.setattr(simplex, "REINVERT_BY_ROWS", False)
                always_scaled(monkeypatch) if scaled else never_scaled(monkeypatch)
                path = []
                for m in models:
                    events = []
                    exactlp.solve(m, warm_start=False, listener=events.append)
                    path.append([(e.entering, e.leaving, e.rule) for e in events if isinstance(e, Pivot)])
                paths[(name, every, scaled)] = path
    first = next(iter(paths.values()))
    assert sum(len(p) for p in first) > 20
    assert all(p == first for p in paths.values())


@pytest.mark.parametrize("name", FACTORS)
def test_solver_reaches_the_same_optimum_with_either(name, monkeypatch):
    monkeypatch.setattr(simplex, "FACTOR", FACTORS[name])
    monkeypatch.setattr(simplex, "REINVERT_EVERY", 3)  # refactor often
    monkeypatch.setattr(simplex, "REINVERT_BY_ROWS", False)
    from exactlp.io import model_from_text

    for _, text, status, objective, _ in KNOWN:
        r = exactlp.solve(model_from_text(text), warm_start=False)
        assert r.status.value == status and (objective is None or r.objective == objective)
    assert exactlp.solve(model_from_text(klee_minty(6)), warm_start=False).objective == 5**6


@pytest.mark.parametrize("name", FACTORS)
def test_triangular_parts_and_nucleus(name):
    # rows: r0 = (2, 0, 0, 0) is a row singleton; column c3 = (0, 0, 0, 5) is a
    # column singleton; after both, c1 and c2 leave a 2x2 nucleus in rows 1, 2
    # (by hand: B x = (2, 4, 5, 5) gives x = (1, 1, 1, 1))
    cols = [
        [(0, mpq(2)), (1, mpq(1)), (2, mpq(1)), (3, mpq(1))],
        [(1, mpq(1)), (2, mpq(2))],
        [(1, mpq(2)), (2, mpq(2)), (3, mpq(-1))],
        [(3, mpq(5))],
    ]
    cols += [[(i, mpq(-1))] for i in range(4)]
    unit = {4 + i: (i, -1) for i in range(4)}
    basis, order = FACTORS[name](4, [0, 1, 2, 3], cols, unit)
    x = {order[p]: v for p, v in basis.ftran([(0, mpq(2)), (1, mpq(4)), (2, mpq(5)), (3, mpq(5))]).items()}
    assert x == {0: 1, 1: 1, 2: 1, 3: 1} and all(type(v) is type(mpq(1)) for v in x.values())
    # the row of B^-1 for c0's position: y^T a_c = 1 for c0 and 0 for the others
    y = basis.btran({order.index(0): mpq(1)})
    for k, c in enumerate(order):
        assert sum((y[i] * a for i, a in cols[c]), mpq(0)) == (1 if c == 0 else 0)


@pytest.mark.parametrize("name", FACTORS)
@pytest.mark.parametrize("head", [[2, 3], [0, 2]])
def test_two_singleton_columns_in_one_row_are_singular(name, head):
    # columns 2 and 3 are the logicals of rows 0 and 1; column 0 = (3, 0) lies in
    # row 0 only, like logical 2: head [2, 3] is the identity (nonsingular), head
    # [0, 2] holds two parallel columns (by hand: det [[3, -1], [0, 0]] = 0)
    cols = [[(0, mpq(3))], [(0, mpq(1)), (1, mpq(1))], [(0, mpq(-1))], [(1, mpq(-1))]]
    unit = {2: (0, -1), 3: (1, -1)}
    if head == [2, 3]:
        basis, order = FACTORS[name](2, head, cols, unit)
        assert {order[p]: v for p, v in basis.ftran([(0, mpq(5)), (1, mpq(7))]).items()} == {2: -5, 3: -7}
    else:
        with pytest.raises(ArithmeticError):
            FACTORS[name](2, head, cols, unit)


def test_sparse_lu_sums_a_repeated_row_entry():
    # the form never repeats a row within a column, but the factorisation sums such
    # entries rather than keeping the last: (1/2 + 1/2, 1) is the column (1, 1)
    merged = [[(0, mpq(1)), (1, mpq(1))], [(1, mpq(2))], [(0, mpq(-1))], [(1, mpq(-1))]]
    repeated = [[(0, mpq(1, 2)), (1, mpq(1)), (0, mpq(1, 2))]] + merged[1:]
    unit = {2: (0, -1), 3: (1, -1)}
    rhs = [(0, mpq(3)), (1, mpq(7))]
    results = []
    for cols in (merged, repeated):
        basis, order = factor_lu(2, [0, 1], cols, unit)
        results.append({order[p]: v for p, v in basis.ftran(rhs).items()})
    # by hand: x0 = 3, x0 + 2 x1 = 7 gives x1 = 2
    assert results[0] == results[1] == {0: 3, 1: 2}


@needs_netlib
def test_pivot_path_on_a_degenerate_netlib_problem_does_not_depend_on_the_factorisation(monkeypatch):
    # FORPLAN's cold solve makes long degenerate runs broken by the lexicographic
    # rule, with refactorisations in between that renumber the positions; eta
    # columns and Forrest-Tomlin updates must take the same pivots (they took 348
    # and 409 while the rule's order followed the positions)
    from exactlp.io import read_mps
    from exactlp.solver.events import Pivot

    m = read_mps(NETLIB / netlib_table()["FORPLAN"]["file"])
    paths = []
    # and with every solve scaled, the ratio test and its lexicographic ties reading D alpha
    for factor, scaled in ((factor_lu, False), (factor_ft, False), (factor_ft, True)):
        monkeypatch.setattr(simplex, "FACTOR", factor)
        if scaled:
            always_scaled(monkeypatch)
        events = []
        r = exactlp.solve(m, warm_start=False, listener=events.append)
        assert r.status is exactlp.Status.OPTIMAL
        paths.append([(e.entering, e.leaving, e.rule) for e in events if isinstance(e, Pivot)])
    assert any("lexicographic" in rule for _, _, rule in paths[0])
    assert paths[0] == paths[1] == paths[2]


def test_nested_denominators_turn_the_scaling_off():
    # a chain of rows  1e30 x_i + x_(i+1) = b_i : det B = 10^(30 m), but the
    # entries of B^-1 b have denominators 10^30, 10^60, ... (nested, not
    # shared), and scaling them all by D would make every one long
    m = 8
    cols = [[(j, mpq(10**30))] + ([(j - 1, mpq(1))] if j else []) for j in range(m)]
    cols += [[(i, mpq(-1))] for i in range(m)]
    unit = {m + i: (i, -1) for i in range(m)}
    basis, order = factor_ft(m, list(range(m)), cols, unit)
    assert basis.scale == abs(basis.det.numerator) == 10 ** (30 * m)  # long, nothing seen yet
    x = basis.ftran([(i, mpq(1)) for i in range(m)])
    dens = sorted(v.denominator for v in x.values())
    assert dens[0] == 10**30 and dens[-1] == 10 ** (30 * m)
    assert basis.nested and basis.scale is None
    # a basis whose entries share one long denominator keeps it
    rng = random.Random(5)
    cols = [[(i, mpq(rng.randint(1, 10**6))) for i in range(m)] for _ in range(m)]
    basis, order = factor_ft(m, list(range(m)), cols, {})
    basis.ftran([(i, mpq(1)) for i in range(m)])
    assert not basis.nested and basis.scale == abs(basis.det.numerator)


def test_integer_rows_only_where_the_denominators_share_a_short_multiple():
    from exactlp.solver.basis import _integer_rows

    # decimal data: denominators 2^a 5^b, whose multiple is the longest of them
    rows = [{0: mpq(3, 10), 1: mpq(-7, 4)}, {0: mpq(1, 8), 2: mpq(6, 1)}]
    scale = _integer_rows(rows, [True, True])
    assert scale == {0: mpq(1, 20), 1: mpq(1, 8)}
    assert rows == [{0: 6, 1: -35}, {0: 1, 2: 48}]
    assert all(type(v) is type(mpz(1)) for r in rows for v in r.values())
    # a row of 1/p for the first 30 primes: their multiple has 121 bits against
    # 7 of the longest, past 64 + 2 x 7; the rows stay fractions, untouched
    # (each row is judged by its own denominators)
    primes = [p for p in range(2, 114) if all(p % q for q in range(2, p))][:30]
    rows = [{j: mpq(1, p) for j, p in enumerate(primes)}]
    assert _integer_rows(rows, [True]) is None
    assert rows == [{j: mpq(1, p) for j, p in enumerate(primes)}]


def test_integer_and_fraction_rows_give_the_same_exact_solves():
    # a dense basis whose denominators are products of two primes from 100 to
    # 1,000: each row's common multiple (about 7 x 18 bits) is past 64 + 2 x 20,
    # so the rule keeps fractions, and the integer rows, forced, must still give
    # the same exact solves
    rng = random.Random(11)
    primes = [p for p in range(100, 1000) if all(p % q for q in range(2, p))]
    m = 7
    cols = [[(i, mpq(rng.randint(-9, 9) or 1, rng.choice(primes) * rng.choice(primes))) for i in range(m)]
            for _ in range(m)]
    rhs = [(i, mpq(rng.randint(-5, 5), rng.choice(primes))) for i in range(m)]
    cost = [mpq(rng.randint(-5, 5), 7) for _ in range(m)]  # by column
    by_row = [{c: a for c in range(m) for i, a in cols[c] if i == r} for r in range(m)]
    assert basis_module._integer_rows(by_row, [True] * m) is None  # the rule: fractions
    results = []
    for integer_rows in (None, False, True):
        basis, order = factor_lu(m, list(range(m)), cols, {}, integer_rows=integer_rows)
        x = basis.ftran(rhs)  # by position: order[p] is the column there
        y = basis.btran({p: cost[order[p]] for p in range(m)})  # by row
        results.append(({order[p]: v for p, v in x.items()}, y))
    assert results[0] == results[1] == results[2]
    x = results[0][0]
    expect = dense_solve(m, cols, list(range(m)), dict(rhs))
    assert expect == [Fraction(int(x[j].numerator), int(x[j].denominator)) if j in x else 0 for j in range(m)]


def test_the_nucleus_turns_to_integer_rows_once_its_numbers_are_long():
    # a dense basis of six-decimal entries: the Schur complements' numbers grow
    # by tens of bits a step and pass INT_ROWS_BITS midway; from there the rows
    # are integers, and the solves (scaled, on the integer copy of U) must equal
    # those on fractions throughout
    rng = random.Random(4)
    m = 24
    cols = [[(i, mpq(rng.randint(-10**9, 10**9), 10**6)) for i in range(m)] for _ in range(m)]
    rhs = [(i, mpq(rng.randint(-99, 99), 100)) for i in range(m)]
    results = []
    for integer_rows in (None, False):
        basis, order = factor_ft(m, list(range(m)), cols, {}, integer_rows=integer_rows)
        assert (basis._fsrc is not None) == (integer_rows is None)  # switched midway, or not at all
        assert basis.scale is not None  # long: scaled
        x, d = basis.ftran_scaled(rhs)
        results.append({order[p]: v / d if d else v for p, v in x.items()})
        if integer_rows is None:
            assert basis.fcols is not None and any(den != 1 for den in basis.rowden)
            check_row_scaled(basis)
    assert results[0] == results[1]
    bits = max(v.denominator.bit_length() for v in results[0].values())
    assert bits > 600  # the numbers were long indeed (733 bits here)


def test_row_scaled_copy_gives_up_on_rows_of_many_primes():
    # U's rows that are not integer rows get the least common multiple of their
    # denominators, unless it grows long: a row of 1/p over 30 primes keeps
    # d_r = 1 (stays as it is), a decimal row gets its multiple
    from exactlp.solver.basis import _row_scaled

    primes = [p for p in range(2, 114) if all(p % q for q in range(2, p))][:30]
    m = 32
    ucols = [(0, mpq(1, 2), [])]
    for k, p in enumerate(primes):  # column k + 1: pivot row k + 1, with an entry 1/p in row 0
        ucols.append((k + 1, mpq(1), [(0, mpq(1, p))]))
    ucols.append((31, mpq(3, 10), [(0, mpq(1, 2))]))
    ucols[1] = (1, mpq(7, 4), [(0, mpq(1, 2))])  # row 1: diagonal 7/4
    order = list(range(m))
    fcols, rowden = _row_scaled(m, order, ucols, {}, {})
    assert rowden[0] == 1  # 30 primes: given up
    assert rowden[1] == 4 and rowden[31] == 10 and rowden[5] == 1
    for (r, ukk, above), (fr, fkk, fabove) in zip(ucols, fcols):
        assert fr == r and fkk == ukk * rowden[r]
        assert dict(fabove) == {rj: u * rowden[rj] for rj, u in above}


#: SPARSE_SOLVE_SHARE for the solves by what a vector reaches: 1 always goes by
#: the reach, 10**9 never; 2 and 4 go by it for some vectors and stop part of
#: the way for others (random bases have at most 8 rows)
SHARES = (1, 2, 4, 10**9)


def factored_pairs(name, seed, count=120, copies=2):
    """``(m, cols, [(basis, head), ...])``: ``copies`` copies of the named
    factorisation of each random basis that is not singular."""
    for m, cols, unit, head in random_bases(count, seed=seed):
        try:
            yield m, cols, [FACTORS[name](m, head, cols, unit) for _ in range(copies)]
        except ArithmeticError:
            continue


@pytest.mark.parametrize("name", ["sparse-lu", "sparse-lu-integers", "sparse-lu-ft", "sparse-lu-ft-rows",
                                  "sparse-lu-ft-integers-rows"])
def test_back_substitution_by_the_columns_reached_is_the_full_one(monkeypatch, scale_bits, name):
    # the same ftran (values and the order of its entries) by the columns the
    # vector reaches (SPARSE_SOLVE_SHARE = 1: always), by every column (10**9:
    # never) and either way by the vector (2, 4), on copies of each
    # factorisation taken through the same updates, scaled and unscaled (with
    # every solve scaled, U's integer copy is made, and the unscaled solves that
    # follow must still go by U's own columns); the result also solves B x = a
    # exactly
    rng = random.Random(11)
    compared = 0
    for m, cols, pair in factored_pairs(name, seed=5, copies=len(SHARES)):
        for step in range(7):
            j = rng.randrange(len(cols))
            outs = []
            for (b, h), share in zip(pair, SHARES):
                monkeypatch.setattr(basis_module, "SPARSE_SOLVE_SHARE", share)
                outs.append(list(b.ftran(cols[j]).items()))
                scaled = getattr(b, "ftran_scaled", None)
                if scaled is not None:
                    w, d = scaled(cols[j])
                    outs.append((list(w.items()), d))
            k = len(outs) // len(SHARES)
            assert all(outs[i * k:(i + 1) * k] == outs[:k] for i in range(len(SHARES)))
            x = dict(outs[0])
            h = pair[0][1]
            got = {}
            for p, v in x.items():
                for i, a in cols[h[p]]:
                    got[i] = got.get(i, mpq(0)) + a * v
            assert {i: v for i, v in got.items() if v} == {i: a for i, a in cols[j] if a}
            compared += 1
            if step % 2 == 1 and x:  # an update on both, then go on
                p = min(x)
                if not x[p]:
                    break
                for b, hh in pair:
                    b.replace(p, dict(x) if not hasattr(b, "rsteps") else b.ftran(cols[j]), cols[j])
                    hh[p] = j
    assert compared > 300


@pytest.mark.parametrize("name", FACTORS)
def test_row_of_the_inverse_by_what_it_reaches_is_the_dense_one(monkeypatch, scale_bits, name):
    # btran_unit(p) gives the nonzeros of the dense btran of e_p, in increasing
    # position, by the rows it reaches in U and L (SPARSE_SOLVE_SHARE = 1:
    # always), by the dense solves (10**9: never) and by the reach through U
    # and then densely through L when L's reach passes its share (2, 4), on
    # copies of each factorisation taken through the same updates; and
    # rho B = e_p exactly
    rng = random.Random(13)
    compared = sparse_nonzero = 0
    for m, cols, pair in factored_pairs(name, seed=9, copies=len(SHARES)):
        for step in range(6):
            h = pair[0][1]
            for p in range(m):
                outs = []
                for (b, _), share in zip(pair, SHARES):
                    monkeypatch.setattr(basis_module, "SPARSE_SOLVE_SHARE", share)
                    outs.append(b.btran_unit(p))
                    dense, d = b.btran_scaled({p: mpq(1)})
                    outs.append(({i: v for i, v in enumerate(dense) if v}, d))
                assert all(o == outs[0] for o in outs[1:])
                rho, d = outs[0]
                assert list(rho) == sorted(rho) and all(type(v) is type(mpq(0)) and v for v in rho.values())
                for q, c in enumerate(h):
                    got = sum((rho.get(i, mpq(0)) * a for i, a in cols[c]), mpq(0))
                    assert got == (0 if q != p else (d if d is not None else 1))
                compared += 1
                sparse_nonzero += 0 < len(rho) < m
            j = rng.randrange(len(cols))
            ws = [b.ftran(cols[j]) for b, _ in pair]
            if not ws[0]:
                break
            p = min(ws[0])
            for (b, hh), w in zip(pair, ws):
                b.replace(p, w, cols[j])
                hh[p] = j
    assert compared > 1000 and sparse_nonzero > 200


def test_refactor_interval_grows_with_the_square_root_of_the_rows():
    # 16 updates up to 288 rows, then isqrt(m); scaled solves every 8
    every = simplex.refactor_every
    assert [every(m, False) for m in (1, 100, 288, 289, 400, 1000, 3000, 6071)] == [16, 16, 16, 17, 20, 31, 54, 77]
    assert [every(m, True) for m in (1, 289, 3000)] == [8, 8, 8]


def test_refactoring_by_the_rows_changes_no_pivot_on_a_network(monkeypatch):
    # a 320-row network refactors every 17 updates by its rows and every 16
    # without: the same first 300 pivots and flips, and it did refactor
    from .test_dual import _network
    from exactlp.solver.events import Pivot

    model = _network(120, 200)
    runs, counts = [], []
    reinvert = simplex.Simplex._reinvert
    for by_rows in (True, False):
        monkeypatch.setattr(simplex, "REINVERT_BY_ROWS", by_rows)
        seen = []
        monkeypatch.setattr(simplex.Simplex, "_reinvert", lambda self: (seen.append(self.basis.updates), reinvert(self))[1])
        events = []
        result = exactlp.solve(model, warm_start=False, listener=events.append, iteration_limit=300)
        runs.append(([(e.entering, e.leaving, e.rule) for e in events if isinstance(e, Pivot)],
                     result.status.value, result.pivots_phase1, result.bound_flips))
        counts.append(seen)
    assert runs[0] == runs[1] and len(runs[0][0]) == 300 and runs[0][1] == "iteration_limit"
    assert max(counts[0]) == 17 and max(counts[1]) == 16


@pytest.mark.parametrize("name", ["sparse-lu", "sparse-lu-integers", "sparse-lu-ft", "sparse-lu-ft-rows",
                                  "sparse-lu-ft-integers-rows"])
def test_a_fresh_copys_updates_leave_the_original_as_it_was(monkeypatch, scale_bits, name):
    # fresh_copy shares the factors with its original (the probes of allocation
    # ranges each pivot on a copy of one start): a run of updates on the copy,
    # with U's rows copied before each first change to them, leaves every solve
    # of the original (ftran, each row of B^-1 by what it reaches and densely)
    # exactly as it was before the copy was made, and the copy's own solves
    # are those of a factorisation taken through the same updates on its own
    rng = random.Random(17)
    checked = 0
    for m, cols, (b, h), (alone, ha) in ((m, c, *pair) for m, c, pair in factored_pairs(name, seed=21)):
        if hasattr(b, "make_rows"):
            b.make_rows()

        def solves(basis):
            out = [sorted(basis.ftran(cols[j]).items()) for j in range(len(cols))]
            for share in (1, 10**9):
                monkeypatch.setattr(basis_module, "SPARSE_SOLVE_SHARE", share)
                out += [sorted(basis.btran_unit(p)[0].items()) for p in range(m)]
            return out

        before = solves(b)
        twin, th = b.fresh_copy(), list(h)
        for _ in range(4):
            j = rng.randrange(len(cols))
            w = twin.ftran(cols[j])
            if not w:
                break
            p = min(w)
            twin.replace(p, w, cols[j])
            alone.replace(p, alone.ftran(cols[j]), cols[j])
            th[p] = ha[p] = j
            checked += 1
        assert solves(b) == before and solves(twin) == solves(alone)
    assert checked > 100


def test_a_nucleus_at_the_give_up_size_is_refused_and_one_bit_under_it_is_not():
    # factor_lu(give_up=N) refuses (LongNumbers, with the sizes in its text) a
    # nucleus whose entries hold N bits or more, numerator and denominator
    # together, counted after the singletons are taken: here a full 3 x 3 block
    # has none, so the nucleus is the whole basis (invented entries); a basis of
    # singletons only has an empty nucleus and is never refused
    from exactlp.solver.basis import LongNumbers

    entries = [[mpq(2), mpq(3, 5), mpq(-7, 4)], [mpq(1, 9), mpq(5), mpq(6, 7)], [mpq(-3), mpq(1, 2), mpq(11, 3)]]
    cols = [[(i, entries[i][j]) for i in range(3)] for j in range(3)] + [[(i, mpq(-1))] for i in range(3)]
    unit = {3 + i: (i, -1) for i in range(3)}
    bits = sum(x.numerator.bit_length() + x.denominator.bit_length() for row in entries for x in row)
    assert bits == 41  # by hand: 2+1, 2+3, 3+3, 1+4, 3+1, 3+3, 2+1, 1+2, 4+2
    with pytest.raises(LongNumbers, match=r"^a nucleus of 3 columns and 41 bits$"):
        factor_lu(3, [0, 1, 2], cols, unit, give_up=bits)
    basis, head = factor_lu(3, [0, 1, 2], cols, unit, give_up=bits + 1)
    x = basis.ftran(cols[0])
    assert {head[p]: v for p, v in x.items()} == {0: 1}
    factor_lu(3, [3, 4, 5], cols, unit, give_up=1)  # (slack columns: singletons)
