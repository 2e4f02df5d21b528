"""The dual phase's reduced costs kept whole over one common denominator
(exactlp/solver/whole.py): the same values, choices, flips and pivots as the
list of ``mpq`` they stand for.  The references are the list's own loops
(``Simplex._update_reduced_costs``, ``DualPhase._dual_entering``) and, for whole
solves, the audit log with the whole form turned off."""

from __future__ import annotations

import contextlib
import heapq
import io
from fractions import Fraction as F

import pytest
from gmpy2 import mpq
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import exactlp
from exactlp.io import model_from_text
from exactlp.solver import dual as dual_module
from exactlp.solver import rows as rows_module
from exactlp.solver import simplex as simplex_module
from exactlp.solver import whole

from .helpers import calls_recorded, network, solve_verified
from .test_dual import rows_both_ways

np = pytest.importorskip("numpy")


def test_the_column_states_are_the_pivot_loops_own():
    codes = ("BASIC", "AT_LOWER", "AT_UPPER", "AT_ZERO")
    assert [getattr(whole, c) for c in codes] == [getattr(simplex_module, c) for c in codes]


def test_whole_costs_read_as_the_list_they_stand_for():
    d = [mpq(3, 10), None, mpq(-7, 4), mpq(0), mpq(5)]
    w = whole.WholeCosts.of(d)
    assert (w.q, w.num.tolist(), w.live.tolist()) == (20, [6, 0, -35, 0, 100], [True, False, True, True, True])
    assert w.num.dtype == np.int64
    assert [w[j] for j in range(5)] == d and w == d and list(w) == d and len(w) == 5
    assert type(w[0]) is type(mpq(1)) and w[1] is None
    assert w.tolist() == d and not (w == d[:4])
    # long denominators or numerators stay a list (None: the caller keeps d)
    assert whole.WholeCosts.of([mpq(1, 2**whole.DEN_BITS + 1)]) is None
    assert whole.WholeCosts.of([mpq(2**whole.NUM_BITS)]) is None
    assert whole.WholeCosts.of([mpq(2**whole.NUM_BITS - 1)]) is not None


def test_a_row_is_arrays_only_when_every_entry_is_a_whole_64_bit_number():
    cols, v, keys = whole.row_arrays({4: 2, 1: -3, 9: 2**62})
    assert (cols.tolist(), v.tolist(), keys) == ([4, 1, 9], [2, -3, 2**62], [4, 1, 9])
    assert cols.dtype == v.dtype == np.int64
    # a fraction, an integer-valued mpq, or a number past 64 bits: None (numpy
    # would cut mpq(3, 2) to 1 if it were let through)
    for bad in ({1: 2, 2: mpq(3, 2)}, {1: 2, 2: mpq(4)}, {1: 2, 2: 2**63}, {1: 2**64}, {1: -(2**63) - 1}):
        assert whole.row_arrays(bad) is None, bad
    cols, v, keys = whole.row_arrays({})
    assert (cols.dtype, v.dtype, keys) == (np.int64, np.int64, [])


_UNITS = [1, 2, 3, 5, 7, 8, 9, 15, 16, 17, 31, 33, 1024]


@st.composite
def rows_and_costs(draw):
    """A tableau row (whole entries), reduced costs over one denominator with
    zero and fixed ones, and column states, with magnitudes that straddle
    powers of two."""
    n = draw(st.integers(1, 16), label="columns")
    q = draw(st.sampled_from([1, 2, 3, 10, 12, 1024, 3**20]), label="Q")
    state = draw(st.lists(st.sampled_from([0, 1, 2, 3]), min_size=n, max_size=n), label="state")
    d = []
    for j in range(n):
        kind = draw(st.sampled_from(["value", "value", "value", "zero", "fixed"]))
        if state[j] == 0 or kind == "fixed":
            d.append(None)
        elif kind == "zero" or state[j] == 3:
            d.append(mpq(0))
        else:
            mag = mpq(draw(st.sampled_from(_UNITS)) * draw(st.sampled_from([1, 1, 4, 2**30])), q)
            d.append(mag if state[j] == 1 else -mag)
    row = {}
    for j in range(n):
        if state[j] != 0 and draw(st.booleans()):
            row[j] = draw(st.sampled_from(_UNITS + [2**40 - 1, 2**40])) * draw(st.sampled_from([1, -1]))
    return state, d, row


class _Fake(dual_module.DualPhase):
    """What the dual ratio test reads: the states and the bounds."""

    def __init__(self, state, lower, upper):
        self.state, self.lower, self.upper = state, lower, upper
        self._boxed = any(lo is not None and hi is not None and lo != hi for lo, hi in zip(lower, upper))


@settings(max_examples=500, deadline=None, derandomize=True)
@given(case=rows_and_costs(), s=st.sampled_from([1, -1]), data=st.data())
def test_the_ratio_test_on_whole_costs_chooses_and_flips_as_on_the_list(case, s, data):
    # the plain test (its least key's candidates) and the test with bound
    # flipping (every candidate by arrays, each d_j read when divided): the
    # entering column and the flips of the list's own test, with and without
    # Bland's choice, every row sign, zero and fixed reduced costs
    state, d, row = case
    n = len(state)
    box = st.sampled_from([(mpq(0), None), (mpq(0), mpq(1)), (mpq(0), mpq(5, 2)), (None, None), (mpq(-3), mpq(2))])
    bounds = [data.draw(box) for _ in range(n)]
    fake = _Fake(state, [b[0] for b in bounds], [b[1] for b in bounds])
    w = whole.WholeCosts.of(d)
    arrays = whole.row_arrays(row)
    saved = whole.BATCH
    try:
        for bland in (False, True):
            for slope in (None, mpq(1, 3), mpq(7), mpq(10**6)):
                want = dual_module.DualPhase._dual_entering(fake, dict(row), d, s, bland, slope)
                for batch in (64, 1, 3):  # (the heap a batch at a time: every refill met)
                    whole.BATCH = batch
                    got = dual_module.DualPhase._dual_entering(fake, dict(row), w, s, bland, slope, arrays=arrays)
                    assert got == want, (bland, slope, batch)
    finally:
        whole.BATCH = saved


def test_the_least_key_keeps_every_tie_and_the_zero_ratios():
    # ratios 3/4 (twice: a tie, to the larger |a_j| then the lower column) and
    # 3/4 + 1/2^30 (a key apart only at its last places); then zero ratios
    w = whole.WholeCosts.of([mpq(3, 4), mpq(6, 4), mpq(3 * 2**28 + 1, 2**30), mpq(5)])
    row = {0: 1, 1: 2, 2: 1, 3: 1}
    sub, dsub = w.least(whole.row_arrays(row), 1, [1, 1, 1, 1])
    assert sub == {0: 1, 1: 2} and dsub == {0: mpq(3, 4), 1: mpq(3, 2)}
    assert dual_module.DualPhase._dual_entering_plain(_Fake([1] * 4, [0] * 4, [None] * 4), sub, dsub, 1, False) == 1
    w = whole.WholeCosts.of([mpq(0), mpq(1, 7), mpq(0)])
    sub, _ = w.least(whole.row_arrays({0: 5, 1: 2**40, 2: -3}), 1, [1, 1, 2])
    assert sub == {0: 5, 2: -3}
    # keys one apart at the finest place (h = 14 for 48-bit numerators): the
    # second is not a tie and does not go on
    w = whole.WholeCosts.of([mpq(2**48 - 2), mpq(2**48 - 1)])
    assert w.least(whole.row_arrays({0: 2**14, 1: 2**14}), 1, [1, 1]) == ({0: 2**14}, {0: mpq(2**48 - 2)})
    # no candidate: wrong signs for their bounds, or fixed
    w = whole.WholeCosts.of([mpq(1), None, mpq(-1)])
    assert w.least(whole.row_arrays({0: -1, 1: 4, 2: 1}), 1, [1, 1, 2]) == ({}, {})


def test_the_batched_heap_gives_the_candidates_up_as_a_whole_heap_would(monkeypatch):
    # keys with ties across the batch's edge: a batch takes every key up to its
    # cut, the sentinel stands above them all, and the pops come in the order
    # of a heap holding everything
    import random

    rng = random.Random(7)
    monkeypatch.setattr(whole, "BATCH", 4)
    for _ in range(200):
        n = rng.randint(0, 30)
        keys = [rng.randint(-5, 5) for _ in range(n)]
        cols = rng.sample(range(100), n)
        mags = [rng.randint(1, 9) for _ in range(n)]
        want = [(k, j, None, a) for k, j, a in zip(keys, cols, mags)]
        heap = list(want)
        heapq.heapify(heap)
        want = [heapq.heappop(heap) for _ in range(n)]
        pending = whole.BatchedPending(np.array(keys, dtype=np.int64), np.array(cols, dtype=np.int64),
                                       np.array(mags, dtype=np.int64))
        assert sorted(pending.entries()) == sorted(want)
        got = []
        while pending:
            e = heapq.heappop(pending)
            if e[1] < 0:
                assert all(e[0] > g[0] for g in got) and all(e[0] <= k for k in pending.keys.tolist())
                pending.refill()
                continue
            got.append(e)
        assert got == want
        assert len(pending.keys) == 0


def test_the_collected_bounds_are_strict_and_close():
    # K_j with 2^K_j < |t_j| <= 2^(K_j + 4): strict (the heap's need) and no
    # looser than the list's own bit lengths give
    import itertools

    for n_, q, v in itertools.product([1, 2, 3, 4, 7, 8, 2**20 - 1, 2**20], [1, 3, 4, 10, 1024], [1, 2, 3, 5, 8]):
        w = whole.WholeCosts.of([mpq(n_, q)])
        ready = []
        pending = w.collect(whole.row_arrays({0: v}), 1, [1], ready)
        (k, j, dj, a), = pending.entries()
        t = mpq(n_, q) / v
        assert (j, dj, a, ready) == (0, None, v, [])
        assert mpq(2) ** k < t <= mpq(2) ** (k + 4), (n_, q, v, k)


@st.composite
def updates(draw):
    state, d, row = draw(rows_and_costs())
    live = [j for j, x in enumerate(d) if x is not None and state[j] != 0]
    basic = [j for j in range(len(d)) if state[j] == 0]
    if not live or not basic:
        return None
    q = draw(st.sampled_from(live), label="entering")
    row = dict(row)
    row[q] = draw(st.sampled_from([1, -1, 2, 3, 16, -5]))
    b = draw(st.sampled_from(basic), label="leaving")
    scale = draw(st.sampled_from([None, 1, 3, 10, 2**20]))
    alpha = mpq(row[q], 1 if scale is None else scale)
    return d, row, q, b, alpha, scale, draw(st.booleans(), label="b fixed")


@settings(max_examples=500, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.filter_too_much])
@given(case=updates())
def test_the_update_of_whole_costs_is_the_lists(case):
    # the list's update (Simplex._update_reduced_costs, no devex scores) against
    # the arrays': every value, None where the list has None
    if case is None:
        return
    d, row, q, b, alpha, scale, fixed = case

    class Fake(simplex_module.Simplex):
        def __init__(self):
            self.scores = None
            self.lower = [mpq(0)] * len(d)
            self.upper = [mpq(0) if fixed else None] * len(d)

    want = list(d)
    Fake()._update_reduced_costs(want, q, b, 0, alpha, row=(row, scale))
    w = whole.WholeCosts.of(d)
    q0 = w.q
    ok = w.update(whole.row_arrays(row), scale, q, b, d[q] / alpha, fixed)
    _UPDATED.append(ok)
    if not ok:  # (a product past 2^62: nothing changed, the caller goes on with its list)
        assert w.tolist() == d
        return
    assert w.tolist() == want
    # Q: a common denominator, which grows only by what the new values need
    # (a rescaling divides the common factor out)
    from math import lcm

    need = lcm(*(int(x.denominator) for x in want if x is not None))
    assert w.q % need == 0 and lcm(q0, need) % w.q == 0, (w.q, need, q0)


_UPDATED: list[bool] = []


def test_most_of_those_updates_fit():
    # (the property test above, run again to count: most examples must reach
    # the comparison)
    _UPDATED.clear()
    test_the_update_of_whole_costs_is_the_lists()
    assert sum(_UPDATED) >= 0.8 * len(_UPDATED), (sum(_UPDATED), len(_UPDATED))


def test_an_update_that_would_not_fit_changes_nothing():
    d = [mpq(1), mpq(2**40, 3), None]
    w = whole.WholeCosts.of(d)
    before = (w.num.copy(), w.q, w.live.copy())
    # k = Q theta / S = 3 (2^40 / 3) / 1 = 2^40, times the entry 2^30: past 2^62
    assert not w.update(whole.row_arrays({0: 2**30, 1: 1}), None, 1, 2, mpq(2**40, 3), False)
    assert (w.num.tolist(), w.q, w.live.tolist()) == (before[0].tolist(), before[1], before[2].tolist())
    assert w.tolist() == d
    # and just past the bound, where an int64 product would wrap round: k_n = 2^33
    # times the entry 2^30 is 2^63
    d = [mpq(1), mpq(2**33)]
    w = whole.WholeCosts.of(d)
    assert not w.update(whole.row_arrays({0: 2**30, 1: 1}), None, 1, 2, mpq(2**33), False)
    assert w.tolist() == d
    # the leaving column's -theta Q = -k_n S past the bound: 3 (2^39) over a
    # pivot of 2^-23 (the row's scale S = 2^23) is 3 (2^62)
    d = [mpq(1), mpq(3 * 2**39), None]
    w = whole.WholeCosts.of(d)
    assert not w.update(whole.row_arrays({0: 1, 1: 1}), 2**23, 1, 2, mpq(3 * 2**62), False)
    assert w.tolist() == d
    d = [mpq(1), mpq(2**31)]  # (2^61: within the bound, the update is made)
    w = whole.WholeCosts.of(d + [None])
    assert w.update(whole.row_arrays({0: 2**30, 1: 1}), None, 1, 2, mpq(2**31), False)
    assert w.tolist() == [mpq(1 - 2**61), None, mpq(-(2**31))]
    # a step with a denominator: every numerator is first multiplied by k_d, so
    # N_j k_d must stay under the bound too: 2^40 times k_d = 2^23 is 2^63 (the
    # quotient 2^40 / 2^23 would pass), and 2^38 times 2^23 is 2^61, made
    d = [mpq(2**40), mpq(1), None]
    w = whole.WholeCosts.of(d)
    assert not w.update(whole.row_arrays({0: 1, 1: 1}), None, 1, 2, mpq(1, 2**23), False)
    assert w.tolist() == d
    w = whole.WholeCosts.of([mpq(2**38), mpq(1), None])
    assert w.update(whole.row_arrays({0: 1, 1: 1}), None, 1, 2, mpq(1, 2**23), False)
    assert w.tolist() == [mpq(2**38) - mpq(1, 2**23), None, mpq(-1, 2**23)] and w.q == 2**23


@contextlib.contextmanager
def whole_costs(on: bool):
    """The whole form on (for models of any size) or off."""
    saved = whole.WHOLE_COSTS, whole.MIN_COLUMNS
    whole.WHOLE_COSTS, whole.MIN_COLUMNS = on, 0
    try:
        yield
    finally:
        whole.WHOLE_COSTS, whole.MIN_COLUMNS = saved


def _log(model) -> str:
    from exactlp.audit import AuditLog

    fh = io.StringIO()
    exactlp.solve(model, warm_start=False, listener=AuditLog(fh, model, {}))
    return fh.getvalue()


@st.composite
def boxed_covering_models(draw):
    """minimise ``c^T x`` with ``c >= 0`` over rows ``a_i x >= b_i`` (``b_i > 0``)
    and a few ``<=`` rows, most columns with an upper bound: the slack basis is
    dual feasible, so the dual phase runs, and it flips bounds."""
    n = draw(st.integers(2, 9), label="columns")
    m = draw(st.integers(2, 7), label="rows")
    # (whole coefficients but now and then: a column with a fraction has its rows
    # in fractions, and the list of mpq takes over)
    halves = draw(st.integers(0, 5)) == 0
    coef = st.sampled_from([0, 0, 1, 1, 1, 2, 3, -1, 4] + ([F(1, 2)] if halves else []))
    lines = ["minimize: " + " + ".join(f"{draw(st.sampled_from([0, 1, 2, 3, F(1, 10), F(5, 2)]))} x{j}"
                                       for j in range(n)), "variables:"]
    for j in range(n):
        up = draw(st.sampled_from([None, 1, 2, 5, F(7, 2)]))
        lines.append(f"  x{j}: {{lower: 0}}" if up is None else f"  x{j}: {{lower: 0, upper: {up}}}")
    lines.append("constraints:")
    for i in range(m):
        terms = [(a, j) for a, j in ((draw(coef), j) for j in range(n)) if a] or [(1, i % n)]
        sense = ">=" if i < 2 or draw(st.booleans()) else "<="
        rhs = draw(st.sampled_from([1, 2, 3, F(7, 2), 6])) * (1 if sense == ">=" else 4)
        text = f"{terms[0][0]} x{terms[0][1]}" + "".join(
            f" {'-' if a < 0 else '+'} {abs(a)} x{j}" for a, j in terms[1:])
        lines.append(f"  r{i}: {text} {sense} {rhs}")
    return model_from_text("\n".join(lines) + "\n")


_RAN: list[bool] = []


def _logs_both_ways(model, owner, name: str):
    """The audit log with the whole form off and on, and what ``owner.name``
    returned in the second solve, which checks at every pivot that the whole
    reduced costs read as those priced afresh (``check_updates``)."""
    with whole_costs(False):
        want = _log(model)
    saved = simplex_module.Simplex.check_updates
    simplex_module.Simplex.check_updates = True
    try:
        with whole_costs(True), calls_recorded(owner, name, what=lambda got: got) as seen:
            got = _log(model)
    finally:
        simplex_module.Simplex.check_updates = saved
    return want, got, seen


@pytest.mark.parametrize("numpy_rows", [False, True])  # (True: every row by numpy's sums, as ArrayRow)
@settings(max_examples=150, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(model=boxed_covering_models())
def test_a_solve_on_whole_costs_takes_the_lists_pivots(model, numpy_rows):
    # (with numpy_rows, each row is also made by the loops and summed over the
    # columns met, and the three must be equal: see test_dual.rows_both_ways)
    with rows_both_ways() if numpy_rows else contextlib.nullcontext():
        want, got, updates = _logs_both_ways(model, whole.WholeCosts, "update")
        assert got == want
        with whole_costs(True):
            solve_verified(model, warm_start=False)
    _RAN.append(any(updates))


def test_the_whole_costs_ran_on_most_of_those_models():
    # (the property test above, run again to count: the arrays must have had
    # pivots to update, or that test checks nothing)
    _RAN.clear()
    test_a_solve_on_whole_costs_takes_the_lists_pivots(numpy_rows=False)
    assert sum(_RAN) >= len(_RAN) // 2, (sum(_RAN), len(_RAN))
    _RAN.clear()
    made = []
    original = rows_module.ArrayRow.__init__

    def counted(self, *args):
        made.append(1)
        original(self, *args)

    rows_module.ArrayRow.__init__ = counted
    try:
        test_a_solve_on_whole_costs_takes_the_lists_pivots(numpy_rows=True)
    finally:
        rows_module.ArrayRow.__init__ = original
    assert sum(_RAN) >= len(_RAN) // 2 and len(made) >= len(_RAN), (sum(_RAN), len(_RAN), len(made))


def test_an_array_row_reads_as_its_dictionary_and_is_not_one():
    row = rows_module.ArrayRow(np.array([2, 5, 9], dtype=np.int64), np.array([3, -1, 2**40], dtype=np.int64))
    assert not isinstance(row, dict) and len(row) == 3 and row._made is None  # (nothing made yet)
    assert whole.row_arrays(row)[2] == [2, 5, 9] and row._made is None  # (the arrays alone)
    assert dict(row) == {2: 3, 5: -1, 9: 2**40} and list(row) == [2, 5, 9]
    assert row[5] == -1 and type(row[9]) is int and 7 not in row and row.get(7) is None
    assert list(row.items()) == [(2, 3), (5, -1), (9, 2**40)]


def test_a_network_solves_on_whole_costs_with_the_lists_pivots_and_flips():
    # a generated water network (cases/generated): the dual phase with bound
    # flips on every pivot's row, whole throughout (Q = 10: the costs' tenths)
    model = network(40, 60)
    want, got, made = _logs_both_ways(model, whole.WholeCosts, "of")
    assert got == want and '"flipped": [{' in got
    assert len(made) == 1 and made[0] is not None and made[0].q == 10
    r = solve_verified(model, warm_start=False)
    assert r.status is exactlp.Status.OPTIMAL


#: a covering model with two equality rows (invented numbers): their slacks are
#: fixed at 0 and basic at the start, and the dual phase takes them out
EQUAL_ROWS = """
minimize: 2 x0 + 3 x1 + x2 + 4 x3 + x4
variables:
  x0: {lower: 0, upper: 5}
  x1: {lower: 0, upper: 3}
  x2: {lower: 0, upper: 4}
  x3: {lower: 0}
  x4: {lower: 0, upper: 2}
constraints:
  r0: x0 + x1 + x2 + x4 >= 3
  r1: x1 + 2 x3 + x4 = 4
  r2: x0 - x2 + x3 = 2
  r3: x2 + x3 + 3 x4 >= 5
"""


def test_a_fixed_column_leaves_the_whole_costs_as_the_list():
    # a slack fixed at 0 that leaves the basis gets no reduced cost (it can never
    # enter again): the arrays' update is told so and fits, and the log is the
    # list's, with every pivot's whole values checked against those priced
    # afresh (check_updates)
    model = model_from_text(EQUAL_ROWS)
    plain = whole.WholeCosts.update
    fixed: list = []

    def told(self, arrays, scale, q, b, theta, b_fixed):
        ok = plain(self, arrays, scale, q, b, theta, b_fixed)
        fixed.append((b_fixed, ok))
        return ok

    whole.WholeCosts.update = told
    try:
        want, got, _ = _logs_both_ways(model, whole.WholeCosts, "of")
    finally:
        whole.WholeCosts.update = plain
    assert got == want and (True, True) in fixed and (False, True) in fixed
    with whole_costs(True):
        r = solve_verified(model, warm_start=False)
    assert r.status is exactlp.Status.OPTIMAL and type(r.objective) is F


def test_a_small_models_solve_leaves_numpy_unimported():
    # below MIN_COLUMNS the list of mpq stays, and numpy (the float extra's
    # library, 0.1 s to import) is not loaded by a solve: cases/grants.yaml goes
    # by the dual phase, which made whole costs before the threshold
    import subprocess
    import sys

    from .conftest import CASES

    code = ("import sys, exactlp; from exactlp.solver import dual; ran = []; plain = dual.DualPhase._dual_phase\n"
            "def wrapped(self):\n    ran.append(1)\n    return plain(self)\n"
            "dual.DualPhase._dual_phase = wrapped\n"
            f"exactlp.solve(exactlp.load({str(CASES / 'grants.yaml')!r}), warm_start=False)\n"
            "print(len(ran), 'numpy' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.stdout.split() == ["1", "False"], out.stderr
