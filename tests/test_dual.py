"""Phase 1 by the dual simplex (exactlp.solver.dual).

Checked against outside references where there are any: the primal two-phase
method of this package (same status and objective), and every certificate by
the independent verifier; the Farkas multipliers of a small model and the
rounding of the weights are derived by hand below.
"""

from __future__ import annotations

import contextlib
from fractions import Fraction as F

import pytest
from gmpy2 import mpq, mpz
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import exactlp
from exactlp.io import model_from_text
from exactlp.solver import dual as dual_module
from exactlp.solver import simplex as simplex_module
from exactlp.solver import rows as rows_module
from exactlp.solver import whole as whole_module
from exactlp.solver.events import Pivot, Start

from .conftest import needs_netlib
from .helpers import always_scaled, calls_recorded, network as _network, solve_verified, sympy_solve
from .models import FLIPS, KNOWN
from .strategies import lp_models


def _events(model, **kw):
    events: list = []
    r = exactlp.solve(model, listener=events.append, warm_start=False, **kw)
    return r, events


def _rules(events) -> set[str]:
    return {e.rule for e in events if isinstance(e, Pivot)}


@pytest.fixture
def recheck(monkeypatch):
    """Recompute reduced costs after every pivot, and keep the steepest-edge
    weights exact (no rounding) so that they can be compared with the true
    weighted squared lengths of the rows of B^-1 before every choice of a
    leaving row."""
    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)
    monkeypatch.setattr(dual_module, "_round", lambda n, d: mpq(n, d))
    checked = {"rows": 0}
    plain = dual_module.DualPhase._dual_leaving

    def leaving(self, bland):
        for p, c in enumerate(self.head):
            rho = self.basis.btran({p: mpq(1)})
            g = self._row_g  # the rows' weights (powers of 4, from the row scaling)
            assert self.dual_weights[c] == sum((g[k] * v * v for k, v in enumerate(rho)), mpq(0)), "weight drifted"
            checked["rows"] += 1
        return plain(self, bland)

    monkeypatch.setattr(dual_module.DualPhase, "_dual_leaving", leaving)
    return checked


DUAL_FEASIBLE = """
minimize: 3 a + 2 b + 4 c
variables:
  a: {lower: 0}
  b: {lower: 0, upper: 30}
  c: {lower: 0}
constraints:
  r1: a + b + c >= 10
  r2: 2 a - b >= 4
  r3: b + 3 c >= 9
  r4: a + c <= 40
"""


def test_the_dual_phase_ends_as_phase_one_with_its_own_pivots():
    # the dual simplex's phase is phase 1 (it reaches a feasible basis): its end
    # is logged as phase 1's, with no infeasibility left and its three pivots;
    # phase 2 then finds the basis optimal with none.  Optimum 191/7, as SymPy's
    # exact LP routines give it
    from exactlp.solver.events import PhaseEnd

    from .helpers import sympy_solve

    m = model_from_text(DUAL_FEASIBLE)
    r, events = _events(m)
    assert [e for e in events if isinstance(e, PhaseEnd)] == [PhaseEnd(1, F(0), 3), PhaseEnd(2, F(191, 7), 0)]
    assert [e.phase for e in events if isinstance(e, Pivot)] == [1, 1, 1] and _rules(events) == {"dual"}
    assert (r.pivots_phase1, r.pivots_phase2) == (3, 0) and sympy_solve(m) == ("optimal", F(191, 7))


def test_a_dual_feasible_start_goes_by_the_dual_simplex(recheck):
    m = model_from_text(DUAL_FEASIBLE)
    r, events = _events(m)
    # the reference: the primal two-phase method of this package, same model
    r2 = exactlp.solve(m, warm_start=False, pricing="bland")
    assert r.status is r2.status is exactlp.Status.OPTIMAL
    assert r.objective == r2.objective == F(191, 7)
    assert type(r.objective) is F
    # by hand: a = 29/7, b = 30/7, c = 11/7 make r1, r2 and r3 tight (70/7 = 10,
    # 58/7 - 30/7 = 4, 30/7 + 33/7 = 9); the duals 13/7, 4/7, 5/7, 0 satisfy the dual
    # rows exactly (a: 13/7 + 8/7 = 3, b: 13/7 - 4/7 + 5/7 = 2, c: 13/7 + 15/7 = 4)
    # and give 10 (13/7) + 4 (4/7) + 9 (5/7) = 191/7: no gap.  SymPy's lpmin agrees.
    assert dict(r.primal) == {"a": F(29, 7), "b": F(30, 7), "c": F(11, 7)}
    assert dict(r.duals) == {"r1": F(13, 7), "r2": F(4, 7), "r3": F(5, 7), "r4": F(0)}
    assert sympy_solve(m) == ("optimal", F(191, 7))
    start = next(e for e in events if isinstance(e, Start))
    assert start.phase == 1 and start.artificial_rows == ()
    assert start.objective == 10 + 4 + 9  # the rows' shortfalls at x = 0
    # The first pivot by hand: every weight is 1 at the slack basis, so the largest
    # shortfall leaves, r1 (delta = -10, s = -1).  rho = -e_1, so alpha_1j = -1 for
    # a, b and c, and s alpha = 1 > 0 for each: the ratios d_j / 1 are the costs
    # 3, 2 and 4, and b enters with dual step 2.  It rises by theta = -10 / -1 = 10,
    # leaving 2a - b = -10, 14 short of 4; r3 = 10 and r4 = 0 are within their bounds.
    first = next(e for e in events if isinstance(e, Pivot))
    assert (first.entering, first.leaving, first.leaving_bound) == (("b", "variable"), ("r1", "slack"), "lower")
    assert (first.reduced_cost, first.ratio, first.step, first.direction) == (2, 2, 10, 1)
    assert first.objective == 14 and not first.degenerate and first.phase == 1
    assert all(e.ratio >= 0 and e.step > 0 for e in events if isinstance(e, Pivot))
    assert _rules(events) == {"dual"}
    assert r.pivots_phase1 > 0 and r.pivots_phase2 == 0
    assert recheck["rows"] > 0
    solve_verified(m, warm_start=False)


INFEASIBLE = """
minimize: x + y
variables:
  x: {lower: 0}
  y: {lower: 0}
constraints:
  r: x + y <= -1
"""


def test_infeasibility_found_by_the_dual_ratio_test_has_the_hand_derived_farkas_multipliers():
    # Slack basis B = [-1], s = x + y = 0 > U = -1: delta = 1, rho = -1, and both
    # columns have alpha = rho . a_j = -1, so neither can lower s: no entering
    # column.  y = rho = -1 on the row, and mu = -A^T y = (1, 1) on the bounds:
    # -1 * U + 1 * 0 + 1 * 0 = 1 > 0, the Farkas contradiction.
    m = model_from_text(INFEASIBLE)
    r, events = _events(m)
    assert r.status is exactlp.Status.INFEASIBLE
    assert dict(r.farkas_rows) == {"r": F(-1)}
    assert dict(r.farkas_bounds) == {"x": F(1), "y": F(1)}
    assert all(type(v) is F for v in (*r.farkas_rows.values(), *r.farkas_bounds.values()))
    assert r.pivots_phase1 == 0
    solve_verified(m, warm_start=False)


def test_a_cost_that_cannot_start_dual_feasible_keeps_the_primal_method():
    # pasture-like column: maximised (cost -17 when minimising) with no upper bound
    m = model_from_text("""
maximize: 17 p + q
variables:
  p: {lower: 0}
  q: {lower: 0, upper: 5}
constraints:
  cap: p + q <= 12
  least: p >= 2
""")
    r, events = _events(m)
    assert r.status is exactlp.Status.OPTIMAL and r.objective == 17 * 12
    assert not any(rule.startswith("dual") for rule in _rules(events))
    start = next(e for e in events if isinstance(e, Start))
    assert start.artificial_rows == ("least",)


@settings(max_examples=150, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(model=lp_models(max_vars=6, max_rows=6))
def test_dual_and_primal_agree_on_random_models(recheck, model):
    r = solve_verified(model, warm_start=False)
    again = exactlp.solve(model, warm_start=False, pricing="bland")
    assert r.status is again.status
    assert r.objective == again.objective


@settings(max_examples=60, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(model=lp_models(max_vars=6, max_rows=6))
def test_dual_phase_with_every_solve_scaled(recheck, monkeypatch, model):
    always_scaled(monkeypatch)
    r = solve_verified(model, warm_start=False)
    again = exactlp.solve(model, warm_start=False, pricing="bland")
    assert r.status is again.status and r.objective == again.objective


def test_bland_as_the_last_resort_of_the_dual(monkeypatch):
    # every degenerate dual pivot past the first hands over to Bland's choice
    monkeypatch.setattr(simplex_module, "GUARD_RUN_FACTOR", 0)
    seen: set[str] = set()
    for text in [DUAL_FEASIBLE, INFEASIBLE] + [k[1] for k in KNOWN if "crossed" not in k[0]]:
        m = model_from_text(text)
        r, events = _events(m)
        seen |= _rules(events)
        again = exactlp.solve(m, warm_start=False, pricing="bland")
        assert r.status is again.status and r.objective == again.objective
        solve_verified(m, warm_start=False)
    assert "dual bland (last resort)" in seen


def _covering(seed: int) -> str:
    """A small covering model (invented numbers): costs of 0, 1 or 2 on
    ``x >= 0`` and rows ``... >= b``, so the slack basis is dual feasible and
    the dual phase starts; the zero costs make many of its pivots degenerate."""
    import random

    from .models import drawn_text

    rng = random.Random(seed)
    n, m = rng.randint(3, 6), rng.randint(3, 6)
    return drawn_text(rng, n, m, lambda: rng.choice([0, 0, 1, 2]), lambda: rng.choice([1, 1, 2]), ">=",
                      lambda: rng.randint(1, 3))


@pytest.mark.parametrize("guard", [0, 1, 2])
def test_bland_takes_over_after_exactly_the_guard_run_of_degenerate_dual_pivots(monkeypatch, guard):
    # GUARD_RUN_FACTOR (m + 1) = guard: a dual pivot is Bland's choice exactly
    # when more than `guard` degenerate dual pivots come right before it (a
    # pivot with a nonzero dual step ends the run and hands back), read from
    # the log's own flags; every outcome the same as Bland's rule throughout,
    # and every leaving row, Bland's included, the one a scan of the rows picks
    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)  # (Bland's choice against a scan too)
    seen = {"bland": 0, "run_without_bland": 0}
    for seed in range(100):
        m = model_from_text(_covering(seed))
        monkeypatch.setattr(simplex_module, "GUARD_RUN_FACTOR", F(guard, len(m.constraints) + 1))
        r, events = _events(m)
        run = 0
        for e in (e for e in events if isinstance(e, Pivot) and e.rule.startswith("dual")):
            assert (e.rule == "dual bland (last resort)") == (run > guard), (seed, e)
            seen["bland"] += run > guard
            seen["run_without_bland"] += 0 < run <= guard
            run = run + 1 if e.degenerate else 0
        assert r.objective == exactlp.solve(m, warm_start=False, pricing="bland").objective
    assert seen["bland"] >= 4 and (guard == 0 or seen["run_without_bland"] >= 10), seen


@pytest.mark.parametrize("budget", [1, 2, 3])
def test_the_dual_phase_makes_exactly_its_budget_of_pivots_before_giving_way(monkeypatch, budget):
    # DUAL_LIMIT_FACTOR (m + columns) = budget: a dual phase that needs more
    # pivots makes exactly `budget` of them, then the primal method starts
    # again from the slack basis and reaches the same optimum
    m = model_from_text(DUAL_FEASIBLE)
    _, events = _events(m)
    needed = sum(1 for e in events if isinstance(e, Pivot) and e.rule.startswith("dual"))
    assert needed == 3
    ncols = len(m.variables) + len(m.constraints)  # (the slack basis: one logical a row)
    monkeypatch.setattr(dual_module, "DUAL_LIMIT_FACTOR", F(budget, len(m.constraints) + ncols))
    r, events = _events(m)
    dual = [e for e in events if isinstance(e, Pivot) and e.rule.startswith("dual")]
    starts = [e for e in events if isinstance(e, Start)]
    if budget < needed:
        assert len(dual) == budget and len(starts) == 2 and starts[1].artificial_rows
    else:
        assert len(dual) == needed and len(starts) == 1
    assert r.objective == exactlp.solve(m, warm_start=False, pricing="bland").objective


def test_the_dual_phase_gives_way_to_the_primal_method_when_its_budget_runs_out(monkeypatch):
    monkeypatch.setattr(dual_module, "DUAL_LIMIT_FACTOR", 0)
    m = model_from_text(DUAL_FEASIBLE)
    r, events = _events(m)
    starts = [e for e in events if isinstance(e, Start)]
    # the dual phase's start, then the primal method's own from the slack basis
    assert len(starts) == 2 and starts[0].artificial_rows == () and starts[1].artificial_rows
    assert not any(rule.startswith("dual") for rule in _rules(events))
    assert r.objective == exactlp.solve(m, warm_start=False, pricing="bland").objective
    solve_verified(m, warm_start=False)


def test_weights_are_rounded_towards_zero_to_64_bits():
    r = dual_module._round
    # 1/3 = 0.0101...b: the first 64 significant bits are 0x5555...5 (64 bits) over 2^64
    assert r(1, 3) == mpq(0x5555555555555555, 2**64)
    assert r(-1, 3) == -r(1, 3)
    assert r(0, 7) == 0 and type(r(0, 7)) is type(mpq(0))
    assert r(2**100, 1) == 2**100  # exact: fewer bits than kept
    # whole numbers around 2^64, where the exponent of what is kept passes 0: up
    # to 65 bits they stay exact, past that the low bits go (truncated), and
    # the result is whole, never a fraction
    for n, want in ((2**63 + 1, 2**63 + 1), (2**64 + 1, 2**64 + 1), (2**65 + 3, 2**65 + 2), (2**66 + 7, 2**66 + 4)):
        assert r(n, 1) == want and r(n, 1).denominator == 1, n
    for n, d in ((10**40 + 1, 3), (7, 10**30), (2**64 + 1, 1), (123456789, 987654321)):
        v, exact = r(n, d), mpq(n, d)
        ulp = mpq(2) ** (n.bit_length() - d.bit_length() - 64)
        assert 0 <= exact - v < ulp, (n, d)




def test_bound_flips_by_hand():
    # Slack start: r = 0, delta = -5.  alpha = -1 for every column, so s alpha = 1
    # and the ratios are the costs 1, 2, 3.  The dual objective rises at rate 5;
    # passing x1's ratio (flipping it to 1) lowers the rate by 1 (to 4), passing
    # x2's by 1 more (to 3), and x3's would take 10: x3 enters.  After the flips
    # r = 2, delta = -3, so x3 rises by 3: x = (1, 1, 3), objective 1 + 2 + 9 = 12.
    m = model_from_text(FLIPS)
    r, events = _events(m)
    assert r.status is exactlp.Status.OPTIMAL and r.objective == 12
    assert dict(r.primal) == {"x1": 1, "x2": 1, "x3": 3}
    assert (r.pivots_phase1, r.pivots_phase2, r.bound_flips) == (1, 0, 2)
    (piv,) = [e for e in events if isinstance(e, Pivot)]
    assert piv.flipped == ((("x1", "variable"), "upper"), (("x2", "variable"), "upper"))
    assert (piv.entering, piv.ratio, piv.step, piv.objective) == (("x3", "variable"), 3, 3, 0)
    solve_verified(m, warm_start=False)


def test_without_bound_flips_the_same_optimum_takes_more_pivots(monkeypatch):
    monkeypatch.setattr(dual_module, "BOUND_FLIPS", False)
    r, events = _events(model_from_text(FLIPS))
    assert r.objective == 12 and r.bound_flips == 0 and r.pivots_phase1 + r.pivots_phase2 == 3
    assert all(e.flipped == () for e in events if isinstance(e, Pivot))


def test_infeasibility_after_every_candidate_is_flipped():
    # as above without x3: passing x1 and x2 leaves the rate at 3 > 0 and no column
    # to enter; after the flips r = 2 < 5.  y = 1 on r, mu = -A^T y = (-1, -1):
    # 1 * 5 + (-1) * 1 + (-1) * 1 = 3 > 0.
    m = model_from_text("""
minimize: x1 + 2 x2
variables:
  x1: {lower: 0, upper: 1}
  x2: {lower: 0, upper: 1}
constraints:
  r: x1 + x2 >= 5
""")
    r, _ = _events(m)
    assert r.status is exactlp.Status.INFEASIBLE
    assert dict(r.farkas_rows) == {"r": F(1)}
    assert dict(r.farkas_bounds) == {"x1": F(-1), "x2": F(-1)}
    assert r.bound_flips == 2
    solve_verified(m, warm_start=False)


def test_the_log_records_the_flips(tmp_path):
    import json

    from exactlp.audit import AuditLog

    m = model_from_text(FLIPS)
    path = tmp_path / "flips.log.jsonl"
    with open(path, "w") as fh:
        exactlp.solve(m, warm_start=False, listener=AuditLog(fh, m, {}))
    (rec,) = [json.loads(x) for x in path.read_text().splitlines() if '"pivot"' in x]
    assert rec["flipped"] == [{"name": "x1", "kind": "variable", "to": "upper"},
                              {"name": "x2", "kind": "variable", "to": "upper"}]
    assert rec["rule"] == "dual" and rec["ratio"] == "3"


def test_limits_stop_the_dual_phase_without_a_certificate():
    m = model_from_text(DUAL_FEASIBLE)
    r = exactlp.solve(m, warm_start=False, iteration_limit=1)
    assert r.status is exactlp.Status.ITERATION_LIMIT and not r.status.is_proven
    assert r.pivots_phase1 == 1 and r.objective is None
    calls = iter(range(100))
    r = exactlp.solve(m, warm_start=False, should_stop=lambda: next(calls) >= 1)
    assert r.status is exactlp.Status.INTERRUPTED and r.pivots_phase1 == 1


def test_the_tableau_of_a_dual_pivot_is_the_basis_inverse_times_the_columns():
    m = model_from_text(DUAL_FEASIBLE)
    _, events = _events(m, tableau=True)
    pivots = [e for e in events if isinstance(e, Pivot)]
    assert pivots and all(e.rule == "dual" for e in pivots)
    checked = 0
    for e in pivots:
        tab = e.tableau
        cols = [tuple(c) for c in tab["columns"]]
        for p, b in enumerate(tab["basis"]):  # each basic column is a unit column of the tableau
            j = cols.index(tuple(b))
            assert [row[j] for row in tab["rows"]] == [F(int(i == p)) for i in range(len(tab["rows"]))]
        # the leaving row's entry in the entering column is the pivot, and moving the
        # entering column by the logged step puts the leaving value on its bound
        q = cols.index(e.entering)
        p = [tuple(b) for b in tab["basis"]].index(e.leaving)
        name, kind = e.leaving
        item = next(c for c in (m.constraints if kind == "slack" else m.variables) if c.name == name)
        bound = item.lower if e.leaving_bound == "lower" else item.upper
        if not e.flipped:
            assert e.step == abs((tab["values"][p] - bound) / tab["rows"][p][q])
            checked += 1
    assert checked


def test_same_model_same_log_byte_for_byte(tmp_path):
    from exactlp.audit import AuditLog

    m = model_from_text(FLIPS)
    texts = []
    for k in range(2):
        path = tmp_path / f"{k}.jsonl"
        with open(path, "w") as fh:
            exactlp.solve(m, warm_start=False, listener=AuditLog(fh, m, {}))
        texts.append(path.read_bytes())
    assert texts[0] == texts[1] and b'"flipped"' in texts[0]


def test_the_column_states_are_the_pivot_loops_own():
    codes = ("BASIC", "AT_LOWER", "AT_UPPER", "AT_ZERO")
    assert [getattr(dual_module, c) for c in codes] == [getattr(simplex_module, c) for c in codes]
    assert rows_module.BASIC == simplex_module.BASIC


def test_the_plain_dual_ratio_test_skips_only_what_cannot_win():
    # reference: every ratio computed, the smallest taken, ties to the largest |a_j|
    # then the lowest column (Bland: the lowest column); values straddle powers of
    # two, where a skip at 2^1 or 2^2 instead of 2^4 would pick wrongly
    import random

    class Fake(dual_module.DualPhase):  # only the column states are read
        def __init__(self, state):
            self.state = state

    rng = random.Random(20261203)
    # (3/2 has bit lengths 2 - 2 = 0 and 16/15 has 5 - 4 = 1, yet 16/15 is the smaller)
    picks = [mpq(1), mpq(2), mpq(3), mpq(4), mpq(7, 2), mpq(15, 4), mpq(17, 4), mpq(31, 8), mpq(33, 8),
             mpq(1, 3), mpq(5, 7), mpq(0), mpq(16), mpq(63, 4), mpq(3, 2), mpq(16, 15), mpq(32, 31)]
    seen_ties = 0
    for _ in range(400):
        n = rng.randint(1, 9)
        state = [rng.choice([1, 2, 3]) for _ in range(n)]  # lower, upper, free
        d, row = [], {}
        for j in range(n):
            mag = rng.choice(picks)
            d.append(mag if state[j] == 1 else -mag if state[j] == 2 else mpq(0))
            if rng.random() < 0.8:
                row[j] = rng.choice([1, -1, 2, -3, mpq(1, 2), mpq(-5, 4), mpq(7, 8), 4])
        order = list(row)
        rng.shuffle(order)  # (the loop's rows come in any order)
        row = {j: row[j] for j in order}
        s = rng.choice([1, -1])
        fake = Fake(state)
        for bland in (False, True):
            cands = []
            for j, v in row.items():
                a = v if s > 0 else -v
                if (state[j] == 1 and a <= 0) or (state[j] == 2 and a >= 0):
                    continue
                cands.append((d[j] / a, -abs(a), j))
            if not cands:
                want = -1
            elif bland:
                t0 = min(c[0] for c in cands)
                want = min(j for t, _, j in cands if t == t0)
            else:
                want = min(cands)[2]
                seen_ties += sum(1 for c in cands if c[0] == min(cands)[0]) > 1
            got = dual_module.DualPhase._dual_entering_plain(fake, row, d, s, bland)
            assert got == want, (state, d, row, s, bland)
    assert seen_ties > 20
    # the edges of the rule, by hand: 16/15 < 3/2 with bit lengths 1 against 0, and
    # (16/15) / (15/32) = 2.28 < (15/8) / (8/15) = 3.52 with bit lengths 3 against 0
    fake = Fake([1, 1])
    assert dual_module.DualPhase._dual_entering_plain(fake, {0: 1, 1: 1}, [mpq(3, 2), mpq(16, 15)], 1, False) == 1
    assert dual_module.DualPhase._dual_entering_plain(
        fake, {0: mpq(8, 15), 1: mpq(15, 32)}, [mpq(15, 8), mpq(16, 15)], 1, False) == 1
    # a whole |a_j| = N lies in [2^(bits N - 1), 2^bits N), so its estimate is bits N
    # - 1; read one higher, the whole entry 66 (e = 2 - 7 = -5 for 13/4 over 66)
    # would pass over 13/4 (e = -1 over 8/63), whose ratio 32/819 is the smaller
    # (found by a search over small values; one lower cannot mislead, by that
    # tighter upper bound)
    for bland in (False, True):
        assert dual_module.DualPhase._dual_entering_plain(
            fake, {0: 66, 1: mpq(13, 4)}, [mpq(13, 4), mpq(8, 63)], 1, bland) == 1


def _numpy_row(sums: dict, escale: dict, by_limbs: bool = False):
    """A :class:`rows.NumpyRow` as numpy's sums make one: the entries ``sums[j] /
    escale[j]`` (an ``int`` where the scale is 1) and the same as arrays (the
    sums as Python integers, as the limbs give them, with ``by_limbs``)."""
    np = pytest.importorskip("numpy")
    row = rows_module.NumpyRow()
    cols = sorted(sums)
    for j in cols:
        row[j] = sums[j] if escale[j] == 1 else mpq(sums[j], escale[j])
    row.cols = np.array(cols, dtype=np.int64)
    row.sums = np.array([sums[j] for j in cols], dtype=object if by_limbs else np.int64)
    row.den_bits = (None if all(escale[j] == 1 for j in cols) else
                    np.array([escale[j].bit_length() - 1 for j in cols], dtype=np.int64))
    return row


# |d_j| and the row's integers straddle powers of two, where a filter at 2^1 or 2^2
# instead of 2^4 (or a bit length off by one) would pass over the winner
_MAGNITUDES = [mpq(1), mpq(2), mpq(3), mpq(4), mpq(7, 2), mpq(15, 4), mpq(17, 4), mpq(31, 8), mpq(33, 8),
               mpq(1, 3), mpq(5, 7), mpq(16), mpq(63, 4), mpq(3, 2), mpq(16, 15), mpq(32, 31), mpq(2**40 + 1, 3)]
_SUMS = [1, 2, 3, 4, 5, 7, 8, 9, 15, 16, 17, 31, 33, 2**40 - 1, 2**40, 2**62 - 1]


@settings(max_examples=400, deadline=None, derandomize=True)
@given(data=st.data())
def test_the_ratio_test_by_arrays_chooses_as_the_plain_test(data):
    # the arrays' filter (DualPhase._ratio_candidates) hands the plain test a part
    # of the row; the choice must be the one over the whole row, with and without
    # Bland's rule, for every sign of the row, zero and fixed reduced costs,
    # fractional scales e_j, and columns that are not candidates at all
    class Fake(dual_module.DualPhase):  # only the column states are read
        def __init__(self, state):
            self.state = state

    n = data.draw(st.integers(1, 14), label="columns")
    state = data.draw(st.lists(st.sampled_from([0, 1, 2, 3]), min_size=n, max_size=n), label="state")
    d, sums, escale = [], {}, {}
    for j in range(n):
        kind = data.draw(st.sampled_from(["value", "value", "zero", "fixed"]))
        if state[j] == 0 or kind == "fixed":
            d.append(None)  # basic or fixed
        elif kind == "zero" or state[j] == 3:
            d.append(mpq(0))
        else:
            mag = data.draw(st.sampled_from(_MAGNITUDES))
            d.append(mag if state[j] == 1 else -mag)
        if state[j] != 0 and data.draw(st.booleans()):
            sums[j] = data.draw(st.sampled_from(_SUMS)) * data.draw(st.sampled_from([1, -1]))
            escale[j] = data.draw(st.sampled_from([1, 1, 2, 3, 5, 8, 1024]))
    by_limbs = data.draw(st.booleans(), label="by limbs")
    if by_limbs and data.draw(st.booleans()):  # (past 64 bits, as only limbs give)
        sums = {j: v * 2**100 + (v > 0) - (v < 0) for j, v in sums.items()}
    row = _numpy_row(sums, escale, by_limbs)
    s = data.draw(st.sampled_from([1, -1]))
    fake = Fake(state)
    saved = dual_module.ARRAY_RATIO_MIN
    dual_module.ARRAY_RATIO_MIN = 0
    try:
        for bland in (False, True):
            want = dual_module.DualPhase._dual_entering_plain(fake, dict(row), d, s, bland)
            part = dual_module.DualPhase._ratio_candidates(fake, row, d, s)
            assert part.items() <= row.items()
            assert dual_module.DualPhase._dual_entering_plain(fake, row, d, s, bland) == want
            assert dual_module.DualPhase._dual_entering_plain(fake, part, d, s, bland) == want
            assert (want < 0) == (not part)
    finally:
        dual_module.ARRAY_RATIO_MIN = saved


def test_the_ratio_test_by_arrays_keeps_every_zero_ratio():
    # three candidates with d_j = 0 (ratio 0): Bland's rule takes the lowest
    # column, whose |a_j| is the smallest; the other rule the largest |a_j|.  A
    # filter by e_j = bits d_j - bits a_j would have kept the largest |a_j| only.
    class Fake(dual_module.DualPhase):
        def __init__(self, state):
            self.state = state

    fake = Fake([1, 1, 1, 1])
    row = _numpy_row({0: 1, 1: 2**20, 2: 2**40, 3: 5}, {0: 1, 1: 1, 2: 1, 3: 1})
    d = [mpq(0), mpq(0), mpq(0), mpq(1, 1000)]
    assert dual_module.DualPhase._ratio_candidates(fake, row, d, 1) == {0: 1, 1: 2**20, 2: 2**40}
    assert dual_module.DualPhase._dual_entering_plain(fake, row, d, 1, True) == 0
    assert dual_module.DualPhase._dual_entering_plain(fake, row, d, 1, False) == 2
    # the edges of the filter: a window of 2^3 instead of 2^4 loses (128/7) / 7 =
    # 2.61 (e = 5 - 2 = 3) to (127/64) / (32/63) = 3.91 (e = 0 - 0); found by a
    # search over small values, a window of 2^2 loses (65/4) / (31/2) = 65/62 to
    # (63/8) / (33/5) = 105/88, and bit lengths that leave out the scale e_j = 15
    # lose (65/2) / 15 = 13/6 to (127/64) / (4/15) = 1905/256
    for (d0, n0, e0), (d1, n1, e1) in [((mpq(127, 64), 32, 63), (mpq(128, 7), 7, 1)),
                                       ((mpq(63, 8), 33, 5), (mpq(65, 4), 31, 2)),
                                       ((mpq(127, 64), 4, 15), (mpq(65, 2), 15, 1))]:
        row = _numpy_row({0: n0, 1: n1}, {0: e0, 1: e1})
        assert d1 / row[1] < d0 / row[0]
        assert list(dual_module.DualPhase._ratio_candidates(Fake([1, 1]), row, [d0, d1], 1)) == [0, 1]
        assert dual_module.DualPhase._dual_entering_plain(Fake([1, 1]), row, [d0, d1], 1, False) == 1
    # no candidate: every entry has the wrong sign for its bound, or is fixed
    assert dual_module.DualPhase._ratio_candidates(Fake([2, 2, 1, 1]), row, [mpq(-1), mpq(-1), None, None], 1) == {}




@pytest.mark.parametrize("by_limbs", [False, True])
def test_entry_bits_bound_each_entry_as_documented(by_limbs):
    # rows.entry_bits gives b with |N| in [2^b, 2^(b+1)) for a whole entry N, and
    # |N / e| in (2^(b-1), 2^(b+1)) for N / e: each bound checked in Fractions,
    # at the powers of two and one either side of them.  (Both readers compare
    # only differences of b within a row, so a b off by the same amount for every
    # entry chose as before: no other test could see it.)
    sums = {0: 1, 1: -1, 2: 2, 3: 3, 4: -4, 5: 7, 6: 8, 7: 2**40 - 1, 8: -(2**40), 9: 2**40 + 1, 10: 2**62 - 1}
    for escale in ({j: 1 for j in sums}, {j: (1, 2, 3, 4, 7, 8, 9, 2**20 - 1, 2**20, 2**20 + 1, 5)[j] for j in sums}):
        row = _numpy_row(sums, escale, by_limbs)
        bits = rows_module.entry_bits(row).tolist()
        assert [type(b) for b in bits] == [int] * len(sums)
        for j, b in zip(sorted(sums), bits):
            v = abs(F(sums[j], escale[j]))
            if escale[j] == 1 and row.den_bits is None:
                assert F(2) ** b <= v < F(2) ** (b + 1), (j, b)
            else:
                assert F(2) ** (b - 1) < v < F(2) ** (b + 1), (j, b)
        assert bits[:7] == ([0, 0, 1, 1, 2, 2, 3] if escale[0] == escale[1] else [0, -1, 0, -1, 0, -1, 0])
        at = row.cols.tolist().index(5), row.cols.tolist().index(8)
        assert rows_module.entry_bits(row, list(at)).tolist() == [bits[5], bits[8]]
@contextlib.contextmanager
def rows_both_ways():
    """Make every tableau row by numpy's sums (NUMPY_ROW_NONZEROS = 0) and check
    each against the Python loops' row and the row summed over the columns met
    (SPARSE_ROW_SHARE = 0) for the same basis; yields the counts.  (Patched and
    restored here, per use: a hypothesis example runs many times within one
    test function, so a fixture's patch would pile up.)"""
    pytest.importorskip("numpy")
    original = simplex_module.Simplex._tableau_row
    threshold = rows_module.NUMPY_ROW_NONZEROS
    share = rows_module.SPARSE_ROW_SHARE
    seen = {"rows": 0, "by_numpy": 0}

    def both(self, p, arrays=False):
        rows_module.SPARSE_ROW_SHARE = 10**9  # (every row meets a column: never by the columns met)
        fast = original(self, p, arrays)
        used = self._np_rows_cache is not None and self._np_rows_cache[1] is not None
        saved = self._np_rows_cache
        self._np_rows_cache = (len(self.cols), None)  # the loops, for the same basis
        slow = original(self, p)
        self._np_rows_cache = saved
        rows_module.SPARSE_ROW_SHARE = 0  # every row by the columns met
        met = original(self, p)
        rows_module.SPARSE_ROW_SHARE = share
        assert fast == slow == met
        row = fast[0]
        if type(row) in (rows_module.NumpyRow, rows_module.ArrayRow) and row.cols is not None:  # its arrays are its entries
            escale = self._int_rows()[1]
            assert row.cols.tolist() == sorted(row)
            assert [mpq(v, escale[j]) for j, v in zip(row.cols.tolist(), row.sums.tolist())] == \
                [row[j] for j in row.cols.tolist()]
            assert (row.den_bits is None and all(escale[j] == 1 for j in row)) or \
                row.den_bits.tolist() == [escale[j].bit_length() - 1 for j in row.cols.tolist()]
        assert all(type(v) in (int, type(mpq(0))) for v in fast[0].values())
        # a whole entry is an int in each form, a fraction an mpq (the devex update reads either)
        kinds = {j: type(v) for j, v in fast[0].items()}
        assert kinds == {j: type(v) for j, v in slow[0].items()} == {j: type(v) for j, v in met[0].items()}
        seen["rows"] += 1
        seen["by_numpy"] += used
        return fast

    rows_module.NUMPY_ROW_NONZEROS = 0
    simplex_module.Simplex._tableau_row = both
    try:
        yield seen
    finally:
        simplex_module.Simplex._tableau_row = original
        rows_module.NUMPY_ROW_NONZEROS = threshold
        rows_module.SPARSE_ROW_SHARE = share


@settings(max_examples=80, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(model=lp_models(max_vars=6, max_rows=6))
def test_tableau_rows_by_numpy_are_the_loops_rows(model):
    with rows_both_ways() as seen:
        r = solve_verified(model, warm_start=False)
        assert r.status is exactlp.solve(model, warm_start=False, pricing="bland").status
    assert seen["by_numpy"] == seen["rows"]


def _log_text(model) -> str:
    import io

    from exactlp.audit import AuditLog

    fh = io.StringIO()
    exactlp.solve(model, warm_start=False, listener=AuditLog(fh, model, {}))
    return fh.getvalue()


@contextlib.contextmanager
def ratio_by_arrays(on: bool):
    """Every tableau row by numpy's sums, and the dual ratio test filtered by its
    arrays (``on``) or run over the whole row."""
    pytest.importorskip("numpy")
    saved = (rows_module.NUMPY_ROW_NONZEROS, rows_module.SPARSE_ROW_SHARE, dual_module.ARRAY_RATIO_MIN,
             whole_module.WHOLE_COSTS)
    rows_module.NUMPY_ROW_NONZEROS, rows_module.SPARSE_ROW_SHARE = 0, 10**9  # (never by the columns met)
    dual_module.ARRAY_RATIO_MIN = 0 if on else 10**9
    whole_module.WHOLE_COSTS = False  # (the list of mpq, whose filter this is: see test_whole.py)
    try:
        yield
    finally:
        (rows_module.NUMPY_ROW_NONZEROS, rows_module.SPARSE_ROW_SHARE, dual_module.ARRAY_RATIO_MIN,
         whole_module.WHOLE_COSTS) = saved


@st.composite
def covering_models(draw):
    """Models whose slack basis is dual feasible and not primal feasible, with
    no column that has two bounds: minimise ``c^T x``, ``c >= 0``, ``x >= 0`` (a
    free column now and then, with no cost), rows ``a_i x >= b_i``, ``b_i > 0``,
    and a few ``<=`` rows; the start goes by the dual phase without flips."""
    n = draw(st.integers(2, 9), label="columns")
    m = draw(st.integers(2, 7), label="rows")
    coef = st.sampled_from([0, 0, 1, 1, 2, 3, -1, F(1, 2), F(3, 4), F(5, 3), 7, 16, F(1, 16)])
    free = [draw(st.booleans()) and draw(st.booleans()) for _ in range(n)]
    cost = [0 if free[j] else draw(st.sampled_from([0, 1, 2, 3, F(1, 3), F(5, 2), 8]), label="cost")
            for j in range(n)]
    lines = ["minimize: " + " + ".join(f"{c} x{j}" for j, c in enumerate(cost)),
             "variables:"] + [f"  x{j}: free" if free[j] else f"  x{j}: {{lower: 0}}" for j in range(n)]
    lines.append("constraints:")
    for i in range(m):
        terms = [(draw(coef), j) for j in range(n)]
        terms = [(a, j) for a, j in terms if a] or [(1, i % n)]
        sense = ">=" if i < 2 or draw(st.booleans()) else "<="
        rhs = draw(st.sampled_from([1, 2, 5, F(7, 2), 10, 33])) * (1 if sense == ">=" else 4)
        text = f"{terms[0][0]} x{terms[0][1]}" + "".join(
            f" {'-' if a < 0 else '+'} {abs(a)} x{j}" for a, j in terms[1:])
        lines.append(f"  r{i}: {text} {sense} {rhs}")
    return model_from_text("\n".join(lines) + "\n")


@pytest.mark.parametrize("limb_bits", [None, 3])  # (3: the rows by limbs, their sums Python integers)
@settings(max_examples=120, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(model=covering_models())
def test_the_ratio_test_by_arrays_takes_the_same_pivots(model, limb_bits):
    with ratio_by_arrays(False):
        want = _log_text(model)
    with contextlib.ExitStack() as stack:
        stack.enter_context(ratio_by_arrays(True))
        if limb_bits is not None:
            stack.enter_context(limbs_of(limb_bits))
        calls = stack.enter_context(calls_recorded(dual_module.DualPhase, "_ratio_candidates"))
        got = _log_text(model)
        solve_verified(model, warm_start=False)
    assert got == want
    _FILTERED.append(bool(calls))


_FILTERED: list[bool] = []


def test_the_ratio_test_by_arrays_ran_on_most_covering_models():
    # (the property test above, run again here to count: the filter must have
    # had rows to filter, or that test checks nothing)
    _FILTERED.clear()
    test_the_ratio_test_by_arrays_takes_the_same_pivots(limb_bits=None)
    assert sum(_FILTERED) >= len(_FILTERED) // 2, (sum(_FILTERED), len(_FILTERED))


@needs_netlib
@pytest.mark.parametrize("name", ["BEACONFD", "SCSD1", "SCORPION"])  # (dual pivots, no bound to flip)
def test_the_ratio_test_by_arrays_takes_the_same_pivots_on_netlib(name):
    from exactlp.io import read_mps

    from .conftest import NETLIB, netlib_table

    m = read_mps(NETLIB / netlib_table()[name]["file"])
    with ratio_by_arrays(False):
        want = _log_text(m)
    with ratio_by_arrays(True), calls_recorded(dual_module.DualPhase, "_ratio_candidates") as calls:
        got = _log_text(m)
    assert got == want and '"rule":"dual"' in got.replace(" ", "")
    assert calls, "the arrays' filter never ran"


def test_tableau_rows_by_numpy_on_the_bound_flip_model():
    with rows_both_ways() as seen:
        r = solve_verified(model_from_text(FLIPS), warm_start=False)
    assert r.status is exactlp.Status.OPTIMAL and seen["rows"] >= 1 and seen["by_numpy"] == seen["rows"]


def test_the_matrix_copies_are_made_once_until_the_columns_change(monkeypatch):
    # rows.py keeps five copies of A (by columns as integers or fractions, by rows
    # as integers or fractions, numpy's sums), each keyed by the number of columns:
    # read again, the same object; once a column is added (as phase 1 adds its
    # artificials), made again with it.  A key read the wrong way round gave the
    # same values, made afresh on every tableau row, and no other test saw it.
    pytest.importorskip("numpy")
    monkeypatch.setattr(rows_module, "NUMPY_ROW_NONZEROS", 0)
    from exactlp.solver.form import build_form

    sx = simplex_module.Simplex(build_form(model_from_text(FLIPS)), pricing="guarded")
    makers = ("_frac_cols", "_int_cols", "_int_rows", "_rows", "_np_rows")
    first = {name: getattr(sx, name)() for name in makers}
    assert first["_np_rows"] is not None
    for name in makers:
        assert getattr(sx, name)() is first[name], name
    n = len(sx.cols)
    sx.cols.append([(0, mpq(1, 3))])
    again = {name: getattr(sx, name)() for name in makers}
    for name in makers:
        assert again[name] is not first[name], name
        assert getattr(sx, name)() is again[name], name
    assert len(again["_frac_cols"]) == len(again["_int_cols"]) == len(again["_int_rows"][1]) == n + 1
    assert again["_int_cols"][n] == (3, None, [(0, 1)]) and again["_int_rows"][1][n] == 3
    assert again["_frac_cols"][n] == (None, None, [(0, mpq(1, 3))])
    assert again["_rows"][0][-1] == (n, mpq(1, 3)) and again["_int_rows"][0][0][0][-1] == n  # (3 * 1/3 = 1: a +1 entry)
    assert n not in first["_np_rows"]([mpq(1)] + [mpq(0)] * (sx.m - 1), None)
    assert again["_np_rows"]([mpq(1)] + [mpq(0)] * (sx.m - 1), None)[n] == mpq(1, 3)


@pytest.mark.parametrize("top", [1, 3, 5, 6, 7, 1000])
def test_limbs_at_the_widest_digit_the_column_sums_allow(monkeypatch, top):
    # the largest column sum of |e_j a_ij| is `top`; R goes by numpy's 64-bit
    # sums as it is while max |R_i| <= (2^63 - 1) // top, and past that by limbs
    # whose digits are below 2^b with 2^b <= that quotient, so a digit times a
    # column stays in 64 bits.  R = +-(2^183 - 1) has every digit 2^b - 1, the
    # largest: one bit more (2^b past the quotient, as when top is not a power
    # of two) wraps the sums, and the entries come out wrong; so does a quotient
    # one too large (R one past it, times 3, is 2^63 + 1), and for top = 1 one
    # that lets R = 2^63 into 64 bits.
    pytest.importorskip("numpy")
    monkeypatch.setattr(rows_module, "NUMPY_ROW_NONZEROS", 0)
    from exactlp.solver.form import build_form

    sx = simplex_module.Simplex(build_form(model_from_text(
        f"minimize: x1 + x2\nvariables:\n  x1: {{}}\n  x2: {{}}\nconstraints:\n  r0: {top} x1 + x2 >= 1\n")))
    fast = sx._np_rows()
    limit = (2**63 - 1) // top
    for r0 in (2**183 - 1, -(2**183 - 1), 2**125 - 1, limit, -limit, limit + 1, -(limit + 1), 2**63):
        got = fast([mpq(r0)], None)
        assert type(got) is rows_module.NumpyRow and got == {0: top * r0, 1: r0, 2: -r0}
        assert got.sums.tolist() == [top * r0, r0, -r0]
        if abs(r0) <= limit:  # (within 64 bits: the arrays-only row, with nothing dropped)
            lazy = fast([mpq(r0)], None, True)
            assert type(lazy) is rows_module.ArrayRow and lazy.cols.tolist() == [0, 1, 2] and dict(lazy) == got


def test_a_column_kept_in_fractions_beside_whole_ones_joins_numpys_row(monkeypatch):
    # x3's denominators are nine primes near 2^10, whose multiple is past the
    # bound of _int_cols: x3 stays in fractions and is summed apart, after
    # numpy's sums of the whole columns (the row then a plain NumpyRow with no
    # arrays, not the arrays-only ArrayRow, which could not take the entry)
    pytest.importorskip("numpy")
    monkeypatch.setattr(rows_module, "NUMPY_ROW_NONZEROS", 0)
    monkeypatch.setattr(rows_module, "SPARSE_ROW_SHARE", 10**9)  # (never by the columns met)
    from exactlp.solver.form import build_form

    primes = [1009, 1013, 1019, 1021, 1031, 1033, 1039, 1049, 1051]
    text = "minimize: x1 + x2 + x3\nvariables:\n  x1: {}\n  x2: {}\n  x3: {}\nconstraints:\n"
    text += "".join(f"  r{i}: {i + 1} x1 - x2 + 1/{p} x3 >= {i}\n" for i, p in enumerate(primes))
    sx = simplex_module.Simplex(build_form(model_from_text(text)))
    assert [j for j, _ in sx._int_rows()[2]] == [2]
    for p in range(len(primes)):
        got, scale = sx._tableau_row(p)
        assert type(got) is rows_module.NumpyRow and got.cols is None
        # B = -I (the slack basis: each row's logical), so row p of B^-1 A is -A's row p
        assert got == {0: -(p + 1), 1: 1, 2: mpq(-1, primes[p])} and scale is None
        lazy, _ = sx._tableau_row(p, arrays=True)
        assert lazy == got and type(lazy) is rows_module.NumpyRow


def test_tableau_row_sums_past_64_bits_go_by_limbs_then_by_the_loops(monkeypatch):
    # a multiplier of 2^70 in a row: max |R| times the column sums is past 2^63,
    # so R is cut into limbs, each summed in 64 bits, and the sums put together
    # in Python integers; past ROW_LIMBS_MOST limbs (2^400 here) the function
    # declines (None) and the loops make the row
    pytest.importorskip("numpy")
    monkeypatch.setattr(rows_module, "NUMPY_ROW_NONZEROS", 0)
    from exactlp.solver.form import build_form

    m = model_from_text(FLIPS)
    sx = simplex_module.Simplex(build_form(m), pricing="guarded")
    fast = sx._np_rows()
    assert fast is not None
    rows, escale, _ = sx._int_rows()
    plus, minus, other = rows[0]
    for r0 in (2**70, -(2**70) + 12345, 3**100):
        want: dict = {}
        for j in plus:
            want[j] = want.get(j, 0) + r0
        for j in minus:
            want[j] = want.get(j, 0) - r0
        for j, a in other:
            want[j] = want.get(j, 0) + r0 * a
        want = {j: (v if escale[j] == 1 else mpq(v, escale[j])) for j, v in want.items() if v}
        want.pop(sx.head[0], None)
        got = fast([mpq(r0)] + [mpq(0)] * (sx.m - 1), sx.head[0])
        assert got == want and got and all(type(v) in (int, type(mpq(0))) for v in got.values())
    assert fast([mpq(2**400)] + [mpq(0)] * (sx.m - 1), sx.head[0]) is None
    assert fast([mpq(0)] * sx.m, sx.head[0]) == {}


@pytest.mark.parametrize("coefs, built", [
    ([2**60] + [1] * 7, True),  # longest column times largest entry 2^63: summed in Python
    ([2**61, 3], True),  # summed in 64 bits
    ([2**61 + 1, 2**61 + 1], False),  # 2^62 + 2, summed in 64 bits
    ([2**61 + 1] * 4, False),  # 2^63 + 4: would wrap round in 64 bits, summed in Python
    ([2**62], False),
    ([2**64 + 1], False)])  # (past 64 bits: not put in an array at all)
def test_numpys_sums_are_built_only_when_every_column_sum_fits(monkeypatch, coefs, built):
    # numpy's sums are exact when max |R_i| times the largest column sum of
    # |e_j a_ij| is below 2^63 (_np_rows), so that column sum must itself be
    # exact: here column x holds ``coefs`` and y short integers, and x's sum
    # decides whether the sums are built (under 2^62) or the loops make the rows
    pytest.importorskip("numpy")
    monkeypatch.setattr(rows_module, "NUMPY_ROW_NONZEROS", 0)
    from exactlp.solver.form import build_form

    rows = [f"  r{i}: {c} x + {i + 1} y >= {i + 1}" for i, c in enumerate(coefs)]
    m = model_from_text("minimize: x + y\nvariables: {x: {lower: 0}, y: {lower: 0}}\nconstraints:\n"
                        + "\n".join(rows) + "\n")
    sx = simplex_module.Simplex(build_form(m), pricing="guarded")
    fast = sx._np_rows()
    assert (fast is not None) is built
    if built:
        irows, escale, _ = sx._int_rows()
        r = [3, -5, 7, 11, -13, 17, 19, -23][:len(coefs)]
        want: dict = {}
        for i, (plus, minus, other) in enumerate(irows):
            for j in plus:
                want[j] = want.get(j, 0) + r[i]
            for j in minus:
                want[j] = want.get(j, 0) - r[i]
            for j, a in other:
                want[j] = want.get(j, 0) + r[i] * a
        want = {j: (v if escale[j] == 1 else mpq(v, escale[j])) for j, v in want.items() if v}
        assert fast(r, -1) == want and want[0] == sum(a * b for a, b in zip(r, coefs))


@pytest.mark.parametrize("bits", [3, 17])
@settings(max_examples=40, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(model=lp_models(max_vars=6, max_rows=6))
def test_tableau_rows_by_limbs_are_the_loops_rows(bits, model):
    # every row whose R passes 2^bits goes through the limbs (so most rows take
    # several), against the loops' row for the same basis
    with rows_both_ways() as seen, limbs_of(bits) as cut:
        solve_verified(model, warm_start=False)
    assert seen["by_numpy"] == seen["rows"] and cut["rows"] <= seen["rows"]


@needs_netlib
@pytest.mark.parametrize("name", ["SC50A", "KB2", "SHARE2B"])
def test_tableau_rows_by_limbs_on_netlib(name):
    from exactlp.io import read_mps

    from .conftest import NETLIB, netlib_table

    m = read_mps(NETLIB / netlib_table()[name]["file"])
    with rows_both_ways() as seen, limbs_of(5) as cut:
        r = solve_verified(m, warm_start=False)
    assert r.status is exactlp.Status.OPTIMAL
    assert seen["rows"] == seen["by_numpy"] and cut["rows"] >= 10 and cut["limbs"] > cut["rows"]


@contextlib.contextmanager
def limbs_of(bits: int):
    """Limbs of ``bits`` bits, as many as a row needs; yields how many rows went
    by limbs and how many limbs they took (read off R as the function sees it)."""
    saved = rows_module.ROW_LIMB_BITS, rows_module.ROW_LIMBS_MOST, simplex_module.Simplex._np_rows
    cut = {"rows": 0, "limbs": 0}
    original = simplex_module.Simplex._np_rows

    def counting(self):
        fn = original(self)
        if fn is None:
            return None

        def wrapped(big, drop):
            longest = int(max(big, key=abs, default=0).__abs__())
            if longest >> bits:
                cut["rows"] += 1
                cut["limbs"] += -(-longest.bit_length() // bits)
            return fn(big, drop)
        return wrapped

    rows_module.ROW_LIMB_BITS, rows_module.ROW_LIMBS_MOST = bits, 10**6
    simplex_module.Simplex._np_rows = counting
    try:
        yield cut
    finally:
        rows_module.ROW_LIMB_BITS, rows_module.ROW_LIMBS_MOST, simplex_module.Simplex._np_rows = saved


@pytest.mark.parametrize("slack, share", [(64, 4), (0, 0), (64, 10**9)])
def test_kept_leaving_keys_choose_as_a_full_scan_on_a_network(monkeypatch, slack, share):
    # check_updates compares, before every dual pivot, the row chosen from the
    # kept keys and their sum of |delta| with a scan of every row
    # (DualPhase._dual_leaving_scan, _infeasibility_sum); a network is where the
    # keys matter: many rows outside their bounds, a few touched a pivot.  The
    # keys' heap is rebuilt now and then (every pivot or so with no slack), and
    # set aside when many rows moved (always with a share of 10**9, never with 0)
    from .helpers import scipy_solve

    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)
    monkeypatch.setattr(dual_module, "LEAVE_HEAP_SLACK", slack)
    monkeypatch.setattr(dual_module, "LEAVE_SCAN_SHARE", share)
    rebuilt, aside, back = [], [], []
    refresh = dual_module.DualPhase._leaving_refresh

    def counting(self):
        before = len(self._leave_heap) if self._leave_heap is not None else None
        keys = refresh(self)
        aside.append(self._leave_heap is None)
        back.append(before is None and self._leave_heap is not None)  # rebuilt after a scan
        rebuilt.append(before is not None and self._leave_heap is not None
                       and len(self._leave_heap) == len(keys) < before)
        return keys

    monkeypatch.setattr(dual_module.DualPhase, "_leaving_refresh", counting)
    m = _network(30, 45)
    r, events = _events(m)
    pivots = [e for e in events if isinstance(e, Pivot)]
    assert _rules(events) == {"dual"} and len(pivots) == r.pivots_phase1 > 50
    assert sum(len(e.flipped) for e in pivots) == r.bound_flips > 0
    assert type(r.objective) is F
    solve_verified(m, warm_start=False)
    status, obj = scipy_solve(m)  # scipy's HiGHS, in double precision
    assert status == "optimal" and abs(float(r.objective) - obj) <= 1e-9 * abs(obj)
    if share == 10**9:
        assert all(aside)  # every choice by the scan of the keys
    elif share == 0:
        assert not any(aside) and sum(rebuilt) >= 60  # the rebuilt heap chose as the scan too
    else:  # the default: set aside now and then, and rebuilt after
        assert 0 < sum(aside) < len(aside) and sum(back) >= 10


@pytest.mark.parametrize("slack, share", [(64, 4), (0, 0), (64, 10**9)])
def test_equal_leaving_scores_go_to_the_larger_violation(monkeypatch, slack, share):
    # (invented numbers) the slack basis is dual feasible, and three rows are
    # outside their bounds, each in a column of its own: r0 by 5, r1 by
    # 1 + 2^-80 and r2 by 1.  Their weights are 1, and each score is delta^2
    # rounded to WEIGHT_BITS = 64 bits: 25, then 1 and 1, a tie that goes to
    # the larger |delta| (r1), whichever way the kept keys choose: the heap
    # filled by pushes (share 0: never set aside), the heap rebuilt from the
    # keys after the first choice's scan (the default), or a scan of the keys
    # (a share of 10**9).  The first pivot touches r0 alone, so the tie is
    # still there for the second.  Optimum: a, b, c at their rows' bounds.
    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)
    monkeypatch.setattr(dual_module, "LEAVE_HEAP_SLACK", slack)
    monkeypatch.setattr(dual_module, "LEAVE_SCAN_SHARE", share)
    used = {"pushed": 0, "rebuilt": 0, "scan": 0}
    refresh = dual_module.DualPhase._leaving_refresh

    def watching(self):
        before = self._leave_heap
        keys = refresh(self)
        after = self._leave_heap
        if after is None:
            used["scan"] += 1
        elif before is None:
            used["rebuilt"] += 1
        else:
            used["pushed"] += 1
        return keys

    monkeypatch.setattr(dual_module.DualPhase, "_leaving_refresh", watching)
    big = 2**80
    fill = [f"f{k}" for k in range(8)]
    m = model_from_text(
        "minimize: a + b + c + " + " + ".join(fill) + "\nvariables: {"
        + ", ".join(f"{v}: {{}}" for v in ["a", "b", "c"] + fill) + "}\nconstraints:\n"
        f"  r0: a >= 5\n  r1: b >= {big + 1}/{big}\n  r2: c >= 1\n"
        + "".join(f"  s{k}: f{k} <= 10\n" for k in range(8)))
    r, events = _events(m)
    assert [e.leaving for e in events if isinstance(e, Pivot)] == [("r0", "slack"), ("r1", "slack"), ("r2", "slack")]
    assert r.objective == 7 + F(1, big) and type(r.objective) is F
    assert r.primal == {"a": 5, "b": 1 + F(1, big), "c": 1, **{v: 0 for v in fill}}
    if share == 10**9:
        assert used["pushed"] == used["rebuilt"] == 0
    elif share == 0:
        assert used["scan"] == 0 and used["pushed"] >= 2
    else:
        assert used["scan"] == 1 and used["rebuilt"] == 1 and used["pushed"] >= 1
    solve_verified(m, warm_start=False)


def _dense_dual_feasible(m: int, n: int, seed: int):
    """A dense model with fractional entries whose slack basis is dual feasible:
    minimise positive costs over ``x >= 0`` subject to ``>=`` rows (invented numbers)."""
    import random

    rnd = random.Random(seed)
    frac = lambda: f"{rnd.randint(1, 40)}/{rnd.randint(1, 13)}"  # noqa: E731
    cols = [f"x{j}" for j in range(n)]
    lines = ["minimize: " + " + ".join(f"{frac()} {c}" for c in cols), "variables:"]
    lines += [f"  {c}: {{}}" for c in cols] + ["constraints:"]
    for i in range(m):
        terms = " + ".join(f"{frac()} {c}" for c in cols if rnd.random() < 0.6) or cols[0]
        lines.append(f"  r{i}: {terms} >= {rnd.randint(5, 90)}")
    return model_from_text("\n".join(lines) + "\n")


@pytest.mark.parametrize("scaled, floors_raised", [(False, False), (True, False), (False, True)])
def test_weights_on_integers_are_the_weights_in_fractions(monkeypatch, scaled, floors_raised):
    # DualPhase._weights_on_integers against the loop in fractions through
    # _round that it replaces (WEIGHTS_ON_INTEGERS off): the same weight of every
    # column, value and type, at every choice of a leaving row, so the same
    # pivots; on a network with bound flips and on a small model, with the solves
    # unscaled and scaled, and with the floors of a third of the columns raised
    # fourfold (still powers of two times the true floor), so that more updated
    # weights fall below their floor and are put back to it; tau exact in both
    # (the short copies are compared with it in the tests below)
    monkeypatch.setattr(dual_module, "TAU_SHORT", False)
    if scaled:
        always_scaled(monkeypatch)
    if floors_raised:
        floor = dual_module.DualPhase._beta_floor
        monkeypatch.setattr(dual_module.DualPhase, "_beta_floor",
                            lambda self, c: floor(self, c) * 4 if c % 3 == 0 else floor(self, c))
    seen = {}
    leaving = dual_module.DualPhase._dual_leaving
    weights = dual_module.DualPhase._weights_on_integers
    at_floor = []

    def recording(self, bland):
        seen[dual_module.WEIGHTS_ON_INTEGERS].append([(type(w), w) for w in self.dual_weights])
        return leaving(self, bland)

    def counting(self, alpha, p, *rest):
        weights(self, alpha, p, *rest)
        at_floor.extend(self.dual_weights[self.head[i]] == self._beta_floor(self.head[i])
                        for i in alpha if i != p)

    monkeypatch.setattr(dual_module.DualPhase, "_dual_leaving", recording)
    monkeypatch.setattr(dual_module.DualPhase, "_weights_on_integers", counting)
    rounded = []
    for m in (_network(20, 30), model_from_text(DUAL_FEASIBLE), _dense_dual_feasible(30, 40, seed=7)):
        runs = []
        for on in (True, False):
            monkeypatch.setattr(dual_module, "WEIGHTS_ON_INTEGERS", on)
            seen[on] = []
            runs.append(_events(m))
        assert runs[0][1] == runs[1][1] and runs[0][0].objective == runs[1][0].objective
        assert len(seen[True]) > 3 and seen[True] == seen[False]
        rounded.append(any(w.denominator.bit_length() > 60 for record in seen[True] for _, w in record))
    # (the network's weights are short, as its entries are +-1; the others'
    # were rounded, their exact values being longer)
    assert rounded == [False, True, True]
    assert len(at_floor) > 700
    assert (sum(at_floor) >= 20) if floors_raised else (sum(at_floor) < 10)


def test_rows_by_the_columns_met_keep_the_dual_path():
    # the tableau row summed over the columns rho meets (SPARSE_ROW_SHARE), for
    # every row, for none, and as the rule picks: the same pivots and optimum
    share = rows_module.SPARSE_ROW_SHARE
    m = _network(30, 45)
    runs = []
    try:
        for s in (0, share, 10**9):
            rows_module.SPARSE_ROW_SHARE = s
            runs.append(_events(m))
    finally:
        rows_module.SPARSE_ROW_SHARE = share
    (r0, e0), (r1, e1), (r2, e2) = runs
    assert e0 == e1 == e2 and r0.objective == r1.objective == r2.objective
    assert r0.pivots_phase1 > 50 and r0.status is exactlp.Status.OPTIMAL


def test_the_dual_ratio_test_with_flips_divides_lazily_and_chooses_as_in_full():
    # reference: every ratio divided, the groups of equal ratios taken in order and
    # passed while the rate stays positive and every member is boxed (the rule of
    # DualPhase._dual_entering's docstring, written out with nothing skipped);
    # ratios straddle powers of two, where a bound off by one would misorder them
    import heapq
    import random

    class Fake(dual_module.DualPhase):  # column states and bounds only
        def __init__(self, state, lower, upper):
            self.state, self.lower, self.upper, self._boxed = state, lower, upper, True

    def reference(fake, row, d, s, slope):
        cands = []
        for j, v in row.items():
            a = v if s > 0 else -v
            st = fake.state[j]
            if d[j] is None or not a or (st == 1 and a <= 0) or (st == 2 and a >= 0):
                continue
            t = abs(d[j] / a)
            cands.append((t, -abs(a), j))
        if not cands:
            return -1, []
        heapq.heapify(cands)
        flips = []
        while cands:
            first = heapq.heappop(cands)
            group = [first]
            while cands and cands[0][0] == first[0]:
                group.append(heapq.heappop(cands))
            if any(fake.lower[j] is None or fake.upper[j] is None for _, _, j in group):
                return first[2], flips
            drop = sum((-na * (fake.upper[j] - fake.lower[j]) for _, na, j in group), mpq(0))
            if slope - drop <= 0:
                return first[2], flips
            slope -= drop
            flips.extend(j for _, _, j in group)
        return -1, flips

    rng = random.Random(20261204)
    picks = [mpq(1), mpq(2), mpq(3), mpq(4), mpq(7, 2), mpq(15, 4), mpq(17, 4), mpq(31, 8), mpq(33, 8),
             mpq(1, 3), mpq(5, 7), mpq(0), mpq(16), mpq(63, 4), mpq(3, 2), mpq(16, 15), mpq(32, 31),
             mpq(2**70 + 1, 3), mpq(1, 2**40)]
    counts = {"flips": 0, "none": 0, "long": 0}
    for _ in range(1000):
        n = rng.randint(1, 40)
        state = [rng.choice([1] * 6 + [2] * 3 + [3]) for _ in range(n)]  # lower, upper, free
        lower = [mpq(0) if st != 3 else None for st in state]
        upper = [rng.choice([mpq(1), mpq(5, 2), mpq(1, 8), mpq(1, 64)] * 3 + [None]) if st != 3 else None
                 for st in state]
        for j in range(n):
            if state[j] == 2 and upper[j] is None:
                upper[j] = mpq(3)
        d, row = [], {}
        for j in range(n):
            mag = rng.choice(picks)
            d.append(mag if state[j] == 1 else -mag if state[j] == 2 else mpq(0))
            if rng.random() < 0.85:
                row[j] = rng.choice([1, -1, 2, -3, mpq(1, 2), mpq(-5, 4), mpq(7, 8), 4, 2**65, mpq(-1, 2**33)])
        s = rng.choice([1, -1])
        slope = rng.choice([mpq(1, 4), mpq(1), mpq(6), mpq(40), mpq(10**6), mpq(2**80)])
        fake = Fake(state, lower, upper)
        want = reference(fake, row, d, s, slope)
        got = dual_module.DualPhase._dual_entering(fake, row, d, s, False, slope)
        assert got == want, (state, lower, upper, d, row, s, slope)
        # under Bland's choice nothing is flipped: the least ratio, ties to the lowest column
        ratios = {}
        for j, v in row.items():
            a = v if s > 0 else -v
            if d[j] is not None and a and not (state[j] == 1 and a <= 0) and not (state[j] == 2 and a >= 0):
                ratios[j] = abs(d[j] / a)
        least = min(ratios.values(), default=None)
        bland = min((j for j, t in ratios.items() if t == least), default=-1)
        assert dual_module.DualPhase._dual_entering(fake, row, d, s, True, slope) == (bland, [])
        counts["flips"] += bool(want[1])
        counts["none"] += want[0] == -1
        counts["long"] += len(want[1]) >= 3
    assert counts["flips"] > 100 and counts["long"] > 40 and counts["none"] > 20
    # exact values pass a group while any rate is left, however little: column 0
    # (ratio 1, span 1) leaves 2^-70 of the rate 1 + 2^-70, so it is flipped and
    # column 1 (ratio 2, no upper bound) enters; a rate left of exactly 0 stops
    fake = Fake([1, 1], [mpq(0), mpq(0)], [mpq(1), None])
    row, d = {0: 1, 1: 1}, [mpq(1), mpq(2)]
    assert dual_module.DualPhase._dual_entering(fake, row, d, 1, False, 1 + mpq(1, 2**70)) == (1, [0])
    assert dual_module.DualPhase._dual_entering(fake, row, d, 1, False, mpq(1)) == (0, [])


def test_fixed_point_is_the_floor_of_the_exact_value():
    # shadow.fixed: floor(x 2^SHIFT), derived by hand
    from exactlp.solver import shadow

    one = 1 << shadow.SHIFT
    assert shadow.fixed(1, 3) == one // 3 and type(shadow.fixed(1, 3)) is int
    assert type(shadow.fixed(mpz(1), mpz(3))) is type(mpz(0))  # (from an mpq's parts)
    assert shadow.fixed(-1, 3) == -(one // 3) - 1  # the floor, not towards zero
    assert shadow.fixed(1, -3) == shadow.fixed(-1, 3)
    assert shadow.fixed(mpq(7, 2).numerator, mpq(7, 2).denominator) == 7 * one // 2
    assert shadow.fixed(-3, 2 << shadow.SHIFT) == -2  # floor(-3/2), past the last place
    assert shadow.fixed(80, 1) == 80 * one


def _tau_checked(monkeypatch):
    """Make a short copy for every LU factorisation (TAU_SHORT_BITS 0), and at
    every dual pivot that uses one compare its ``tau`` with the exact ftran's;
    returns the list of (largest error, largest |tau_i|) per pivot and of the
    copies' eta counts."""
    from exactlp.solver import shadow

    monkeypatch.setattr(dual_module, "TAU_SHORT_BITS", 0)
    seen: list = []
    solve = shadow.ShortFactors.solve

    def checking(self, v):
        got = solve(self, dict(v))
        unit = mpq(1, 1 << shadow.SHIFT)
        exact = self.basis.ftran([(i, a * unit) for i, a in sorted(v.items())])
        err = max((abs(mpq(got.get(i, 0)) * unit - exact.get(i, mpq(0))) for i in set(got) | set(exact)),
                  default=mpq(0))
        seen.append((err, max((abs(t) for t in exact.values()), default=mpq(0)), len(self.etas)))
        assert all(type(t) in (int, type(mpz(0))) for t in got.values())  # integers, no float
        return got

    monkeypatch.setattr(shadow.ShortFactors, "solve", checking)
    return seen


def _two_blocks():
    """An exact LU of a basis of two independent 2 x 2 blocks (invented entries):
    columns 0 and 1 touch rows 0 and 1 only, columns 2 and 3 rows 2 and 3 only;
    returns the factorisation, its position -> column list and the columns."""
    from exactlp.solver.basis import factor_lu

    cols = [[(0, mpq(3)), (1, mpq(5, 7))], [(0, mpq(2, 9)), (1, mpq(11))],
            [(2, mpq(13, 4)), (3, mpq(1))], [(2, mpq(6)), (3, mpq(17, 3))]]
    cols += [[(i, mpq(-1))] for i in range(4)]
    unit = {4 + i: (i, -1) for i in range(4)}
    basis, head = factor_lu(4, [0, 1, 2, 3], cols, unit)
    return basis, head, cols


def test_short_copy_measures_every_entry_of_the_factors():
    # ShortFactors.of copies the factors when their entries average min_bits
    # bits or more, numerator and denominator together, over every entry of L's
    # steps and of U's columns, the diagonal included (the count is the basis's
    # own lu_nonzeros, kept apart); exactly at the average a copy is made, one
    # bit above it none.  A one-entry basis 5/3 holds 3 + 2 bits.
    from exactlp.solver import shadow
    from exactlp.solver.basis import factor_lu

    basis, _, _ = _two_blocks()
    entries = [x for _, steps in basis.lsteps for _, x in steps]
    entries += [u for _, ukk, above in basis.ucols for u in [ukk] + [x for _, x in above]]
    bits = sum(x.numerator.bit_length() + x.denominator.bit_length() for x in entries)
    assert len(entries) == basis.lu_nonzeros and any(basis.lsteps[k][1] for k in range(len(basis.lsteps)))
    short = shadow.ShortFactors.of(basis, 0)
    assert short.size == (bits, basis.lu_nonzeros) and short.etas == [] and short.updates == 0
    average = bits // basis.lu_nonzeros  # (rounded down: the average is not whole here)
    assert bits % basis.lu_nonzeros and shadow.ShortFactors.of(basis, average).size == (bits, basis.lu_nonzeros)
    assert shadow.ShortFactors.of(basis, average + 1) is None
    one, _ = factor_lu(1, [0], [[(0, mpq(5, 3))], [(0, mpq(-1))]], {1: (0, -1)})
    assert shadow.ShortFactors.of(one, 5).size == (5, 1)
    assert shadow.ShortFactors.of(one, 6) is None
    made = shadow.ShortFactors(one, [], [], size=(12, 4))
    assert made.long_enough(3) and not made.long_enough(4)


def test_short_solves_keep_the_blocks_apart():
    # B^-1 of a block-diagonal basis is block diagonal: a vector on one block's
    # rows solves to that block's positions only, in both directions, and so
    # after an eta on that block; no unit of 2^-SHIFT leaks into the other
    # block (each result a dictionary of the nonzero entries only).  The values
    # are the exact solves' to within 2^-300 (each operation loses at most
    # one unit of 2^-SHIFT = 2^-320)
    from exactlp.solver import shadow

    basis, head, cols = _two_blocks()
    short = shadow.ShortFactors.of(basis, 0)
    one, unit = 1 << shadow.SHIFT, mpq(1, 1 << shadow.SHIFT)
    first = {p for p, c in enumerate(head) if c in (0, 1)}
    near = lambda got, exact: all(abs(mpq(got.get(i, 0)) * unit - exact.get(i, 0)) < mpq(1, 1 << 300)  # noqa: E731
                                  for i in set(got) | set(exact))

    def check() -> None:
        got = short.solve({1: one})  # the unit vector of row 1
        assert got and set(got) <= first and near(got, basis.ftran([(1, mpq(1))]))
        p = min(first)
        back = short.solve_t({p: one})  # row p of B^-1, by row
        assert back and set(back) <= {0, 1}
        assert near(back, dict(enumerate(basis.btran({p: mpq(1)}))))
        assert short.solve({}) == {} and short.solve_t({}) == {}

    check()
    col = [(0, mpq(1, 2)), (1, mpq(4))]  # a column of the first block enters
    alpha = basis.ftran(col)
    p = min(first)
    ap = alpha[p]
    short.add_eta(p, shadow.fixed(ap.denominator, ap.numerator),
                  [(i, shadow.fixed(a.numerator * ap.denominator, a.denominator * ap.numerator))
                   for i, a in alpha.items() if i != p])
    basis.replace(p, alpha, col)
    assert short.updates == basis.updates == 1 and len(short.etas) == 1
    check()


def test_short_copy_is_made_once_for_a_factorisation_and_its_fresh_copies():
    # the probes of allocation ranges each pivot on a fresh copy of one basis:
    # the fixed-point factors are made once and shared, each copy with its own
    # etas; a basis whose lists are not those the copy was made from (L's or
    # U's) gets a copy of its own, made from its lists; an updated basis gets none
    from exactlp.solver import shadow

    basis, _, _ = _two_blocks()
    twin = basis.fresh_copy()
    a, b = shadow.ShortFactors.of(basis, 0), shadow.ShortFactors.of(twin, 0)
    assert a.lsteps is b.lsteps and a.ucols is b.ucols and a.etas is not b.etas
    assert a.basis is basis and b.basis is twin
    for name in ("lsteps", "ucols"):
        other = basis.fresh_copy()
        setattr(other, name, list(getattr(other, name)))  # the same entries, other lists
        c = shadow.ShortFactors.of(other, 0)
        assert c.lsteps is not a.lsteps and c.lsteps == a.lsteps and c.ucols == a.ucols
        again = shadow.ShortFactors.of(basis, 0)  # (one kept at a time: made again for these)
        assert again.lsteps is not c.lsteps and again.lsteps == c.lsteps
    col = [(0, mpq(1, 2)), (1, mpq(4))]
    alpha = twin.ftran(col)
    twin.replace(min(alpha), alpha, col)
    assert shadow.ShortFactors.of(twin, 0) is None


def test_short_tau_is_the_exact_tau_to_many_bits(monkeypatch):
    # shadow.ShortFactors against the exact ftran of the same vector, from
    # the basis it copies: the LU's solve and each pivot's eta after it.  The
    # input is already rounded to 2^-SHIFT; each operation loses at most one
    # unit of 2^-SHIFT, so the error stays far under the 64 bits kept
    always_scaled(monkeypatch)
    seen = _tau_checked(monkeypatch)
    for m in (_dense_dual_feasible(30, 40, seed=7), _network(20, 30)):
        r = solve_verified(m, warm_start=False)
        assert r.status is exactlp.Status.OPTIMAL
    assert len(seen) > 40 and max(e for _, _, e in seen) >= 5  # copies followed several pivots
    for err, top, _ in seen:
        assert err <= (1 + top) / 2**120


@pytest.mark.parametrize("short", [True, False])
def test_short_tau_keeps_the_choices(monkeypatch, short):
    # the weights from the short tau and from the exact one, at every choice of
    # a leaving row: the same kept weights (64 bits of an error under 2^-120),
    # so the same pivots and optimum; without a copy (TAU_SHORT off) too
    monkeypatch.setattr(dual_module, "TAU_SHORT_BITS", 0)
    used = []
    for m in (_dense_dual_feasible(60, 80, seed=3), _network(20, 30)):
        (r, events), (r0, events0) = _short_then_exact(monkeypatch, m, short, used)
        assert events == events0 and r.objective == r0.objective and type(r.objective) is F
    assert (sum(used) > 40) if short else not used


def _short_then_exact(monkeypatch, model, short: bool, used: list):
    """Solve ``model`` with TAU_SHORT set to ``short``, then with it off; ``used``
    gets, at each dual pivot of the first solve, whether a short copy served."""
    plain = dual_module.DualPhase._short_factors

    def counting(self, *a):
        got = plain(self, *a)
        if not a:  # (the dual weights' calls; the primal's steering names its rule)
            used.append(got is not None)
        return got

    runs = []
    for on in (short, False):
        monkeypatch.setattr(dual_module, "TAU_SHORT", on)
        monkeypatch.setattr(dual_module.DualPhase, "_short_factors", counting if on else plain)
        runs.append(_events(model))
    return runs


def test_short_copy_out_of_step_is_not_used(monkeypatch):
    # a copy follows its basis only through the weights' own updates: an update
    # it did not see (here, counted by hand) ends its use until the next
    # factorisation, which makes a new one
    from exactlp.solver import shadow

    monkeypatch.setattr(dual_module, "TAU_SHORT_BITS", 0)
    made = []
    of = shadow.ShortFactors.of

    def making(basis, bits):
        made.append(of(basis, bits))
        return made[-1]

    monkeypatch.setattr(shadow.ShortFactors, "of", making)
    plain = dual_module.DualPhase._short_factors
    dropped = []

    def skewing(self, *a):
        got = plain(self, *a)
        if got is not None and got.updates == 2:
            self.basis.updates += 1  # as if a pivot had bypassed the copy
            dropped.append(plain(self, *a))
            self.basis.updates -= 1
            return None
        return got

    monkeypatch.setattr(dual_module.DualPhase, "_short_factors", skewing)
    r = solve_verified(_network(20, 30), warm_start=False)
    assert r.status is exactlp.Status.OPTIMAL
    assert dropped and all(d is None for d in dropped) and sum(x is not None for x in made) >= 2


@needs_netlib
def test_short_tau_on_a_basis_of_long_numbers():
    # GROW7, whose bases carry numbers of hundreds to thousands of bits: the
    # copies are made at the default rule (entries of 32 bits on average or
    # more) after most factorisations, and the solve takes the same pivots,
    # flips and optimum as with the exact tau
    from exactlp.io import read_mps

    from .conftest import NETLIB, netlib_table

    m = read_mps(NETLIB / netlib_table()["GROW7"]["file"])
    used: list = []
    with pytest.MonkeyPatch.context() as mp:
        runs = _short_then_exact(mp, m, True, used)
    (r, events), (r0, events0) = runs
    assert events == events0 and r.objective == r0.objective and type(r.objective) is F
    assert r.pivots_phase1 == r0.pivots_phase1 > 250 and r.bound_flips == r0.bound_flips > 100
    assert sum(used) > 150 and len(used) == r.pivots_phase1


FALLING = """
minimize: -x1
variables:
  x1: {lower: 0, upper: 10}
constraints:
  cap: x1 <= 4
"""


def test_a_dual_pivot_logs_which_way_its_entering_column_moves():
    # worked by hand: FLIPS's x3 rises from 0 to 3 (direction 1, step 3); here
    # x1 starts at its upper bound 10 (its cost -1 prefers it), the row cap
    # reads 10 > 4, and x1 enters falling by 6 to 4 (direction -1, step 6, the
    # dual step |d_q / alpha_pq| = 1)
    _, events = _events(model_from_text(FLIPS))
    (piv,) = [e for e in events if isinstance(e, Pivot)]
    assert (piv.direction, piv.step) == (1, 3)
    # with r >= 5/2 instead: x1 and x2 are flipped the same way, leaving x3 to
    # rise by 1/2 (a step under 1 is still direction 1)
    _, events = _events(model_from_text(FLIPS.replace(">= 5", ">= 5/2")))
    (piv,) = [e for e in events if isinstance(e, Pivot)]
    assert (piv.direction, piv.step, len(piv.flipped)) == (1, F(1, 2), 2)
    r, events = _events(model_from_text(FALLING))
    (piv,) = [e for e in events if isinstance(e, Pivot)]
    assert (piv.rule, piv.entering, piv.leaving, piv.leaving_bound) == ("dual", ("x1", "variable"), ("cap", "slack"), "upper")
    assert (piv.direction, piv.step, piv.ratio, piv.reduced_cost) == (-1, 6, 1, -1)
    assert r.objective == -4 and dict(r.primal) == {"x1": 4}
    # with cap: 2 x1 <= 8 the pivot is alpha_pq = 2 (the slack's row of B^-1 is
    # -1, times -2): the dual step is |d_q / alpha_pq| = 1/2, x1 still falls by 6
    r, events = _events(model_from_text(FALLING.replace("x1 <= 4", "2 x1 <= 8")))
    (piv,) = [e for e in events if isinstance(e, Pivot)]
    assert (piv.direction, piv.step, piv.ratio, piv.reduced_cost) == (-1, 6, F(1, 2), -1)
    assert r.objective == -4


def test_a_dual_pivots_tableau_shows_reduced_costs_in_the_models_sense():
    # worked by hand: maximise x1 + 2 x2 on 0 <= x <= 10 with cap: x1 + x2 <= 4.
    # Both start at their upper bound 10 (cap reads 20); the dual ratio test
    # passes x1 (ratio 1, flipped to 0: cap reads 10, still over) and x2
    # enters falling by 6 (ratio 2), to the optimum x2 = 4, objective 8.  The
    # tableau before the pivot shows the reduced costs in the model's sense, as
    # the pivot's own reduced_cost does (they were the minimising form's, -1
    # and -2, beside a reduced_cost of 2); a minimising model's are as they are
    text = """
maximize: x1 + 2 x2
variables:
  x1: {lower: 0, upper: 10}
  x2: {lower: 0, upper: 10}
constraints:
  cap: x1 + x2 <= 4
"""
    for sense, sign in (("maximize: x1 + 2 x2", 1), ("minimize: -x1 - 2 x2", -1)):
        r, events = _events(model_from_text(text.replace("maximize: x1 + 2 x2", sense)), tableau=True)
        (piv,) = [e for e in events if isinstance(e, Pivot)]
        assert (piv.rule, piv.entering, piv.reduced_cost, piv.ratio) == ("dual", ("x2", "variable"), 2 * sign, 2)
        assert piv.flipped == ((("x1", "variable"), "lower"),)
        assert piv.tableau["reduced_costs"] == [sign, 2 * sign, None]
        assert all(type(v) is F for v in piv.tableau["reduced_costs"][:2])
        assert r.objective == 8 * sign


def test_a_short_choice_is_refused_exactly_where_the_rule_says():
    # _refused against the rule written out in Fractions, over every state,
    # both signs of the violation, pivots on both sides of 0 and of +-1, and
    # reduced costs of each sign: a candidate moves x_b towards its bound
    # (s alpha_pq > 0 at a lower bound, < 0 at an upper, nonzero if free) with
    # a nonnegative dual step d_q / (s alpha_pq)
    lower, upper, free = dual_module.AT_LOWER, dual_module.AT_UPPER, dual_module.AT_ZERO
    seen = set()
    for state in (lower, upper, free):
        for s in (1, -1):
            for alpha in (F(-3, 2), F(-1, 2), F(0), F(1, 2), F(3, 2)):
                for dq in (F(-2), F(-1, 3), F(0), F(1, 3), F(2)):
                    a = s * alpha
                    moves = a > 0 if state == lower else a < 0 if state == upper else a != 0
                    want = not moves or dq / a < 0
                    got = dual_module._refused(state, s, mpq(alpha), mpq(dq))
                    assert got is want, (state, s, alpha, dq)
                    seen.add((state, moves, want))
    # every state met both a column that moves x_b and one that does not, and
    # a move refused for its dual step
    assert {(st, mv) for st, mv, _ in seen} == {(st, mv) for st in (lower, upper, free) for mv in (True, False)}
    assert all((st, True, True) in seen and (st, True, False) in seen for st in (lower, upper, free))


def test_flips_overshoot_exactly_where_the_leaving_row_reaches_its_bound():
    # _overshot against the rule written out: the violation after the flips is
    # 0 or of the other sign than before them; values on both sides of 0 and
    # of +-1 (a violation under 1 is still a violation)
    for was in (F(-3), F(-1, 2), F(1, 2), F(3)):
        for delta in (F(-5), F(-1), F(-1, 4), F(0), F(1, 4), F(1), F(5)):
            want = delta == 0 or (delta > 0) != (was > 0)
            assert dual_module._overshot(mpq(was), mpq(delta)) is want, (was, delta)


def test_every_number_an_event_carries_is_a_fraction():
    # the listener is public (scripts read it): exact values reach it as
    # Fractions, never as the solver's own mpq, on the dual and primal paths,
    # with the tableau shown
    from dataclasses import fields

    def numbers(v):
        if isinstance(v, (tuple, list)):
            for w in v:
                yield from numbers(w)
        elif isinstance(v, dict):
            for k, w in v.items():
                yield from numbers(k)
                yield from numbers(w)
        elif not isinstance(v, (str, bool, type(None))):
            yield v

    mpq_type = type(mpq(0))
    kinds = set()
    for text in [DUAL_FEASIBLE, INFEASIBLE, FLIPS, FALLING] + [k[1] for k in KNOWN]:
        for tableau in (False, True):
            _, events = _events(model_from_text(text), tableau=tableau)
            for e in events:
                for f in fields(e):
                    for v in numbers(getattr(e, f.name)):
                        assert type(v) is not mpq_type, (e, f.name)
                        assert type(v) in (F, int), (e, f.name, type(v))
                kinds.add(type(e).__name__)
    assert {"Start", "Pivot", "PhaseEnd", "Finish"} <= kinds


def test_weights_on_integers_match_the_rule_in_fractions_on_drawn_values():
    # DualPhase._weights_on_integers called directly, against the update
    # written out in Fractions: for each i != p with alpha_i != 0, c = head[i],
    # r = _round(alpha_i / alpha_p), beta_c + r^2 bp - 2 r t, with t =
    # _round(tau_i / tscale) (or tau_i / 2^SHIFT as it is, from the short
    # copies: tscale None), put back to the floor of c when under it, else
    # rounded to 64 bits.  Values are drawn dyadic (as the kept weights,
    # floors and bp always are) over exponents far apart, so every order of the
    # exponents of the weight, r^2 bp, the tau term and the floor is met, and
    # sums that need 65 or 66 bits before rounding
    import random

    from exactlp.solver import shadow

    rnd = dual_module._round

    class Fake(dual_module.DualPhase):
        def __init__(self, beta, head, floors):
            self.dual_weights, self.head, self._floors = beta, head, floors

        def _beta_floor(self, c):
            return self._floors[c]

    def dyadic(rng, lo, hi):
        m = rng.randint(1, 2**rng.randint(1, 66))
        e = rng.randint(lo, hi)
        return rnd(m, 1) * (mpq(2) ** e)

    rng = random.Random(20261205)
    counts = {"floor": 0, "short": 0, "exact": 0, "no_tau": 0}
    for _ in range(1500):
        m = rng.randint(2, 6)
        head = list(range(10, 10 + m))
        beta = [mpq(0)] * 10 + [dyadic(rng, -90, 20) for _ in range(m)]
        floors = {c: dyadic(rng, -100, 10) for c in head}
        p = rng.randrange(m)
        alpha = {i: mpq(rng.choice([-1, 1]) * rng.randint(1, 10**rng.randint(1, 25)), rng.randint(1, 10**rng.randint(0, 25)))
                 for i in range(m) if rng.random() < 0.8 or i == p}
        if rng.random() < 0.2:
            alpha[rng.randrange(m)] = mpq(0)
            alpha[p] = alpha.get(p) or mpq(3)
        ap = alpha[p]
        apn, apd = (ap.numerator, ap.denominator) if ap > 0 else (-ap.numerator, -ap.denominator)
        bp = dyadic(rng, -80, 10)
        short = rng.random() < 0.4
        tscale = None if short else mpz(rng.randint(1, 10**rng.randint(0, 20)))
        tau = {}
        for i in range(m):
            if rng.random() < 0.7:
                tau[i] = (rng.choice([-1, 1]) * rng.randint(0, 2**rng.randint(1, 400)) if short else
                          mpq(rng.choice([-1, 1]) * rng.randint(1, 10**rng.randint(1, 30)), rng.randint(1, 10**9)))
        want = list(beta)
        for i, a in ((i, a) for i, a in alpha.items() if i != p and a):
            r = rnd(a.numerator * apd, a.denominator * apn)  # alpha_i / alpha_p, rounded
            t = tau.get(i)
            term = 0 if not t else mpq(t, 2**shadow.SHIFT) if short else rnd(t.numerator, t.denominator * tscale)
            new = beta[head[i]] + r * (r * bp - 2 * term)
            counts["floor"] += new < floors[head[i]]
            counts["no_tau"] += not t
            counts["short" if short else "exact"] += bool(t)
            want[head[i]] = floors[head[i]] if new < floors[head[i]] else rnd(new.numerator, new.denominator)
        fake = Fake(list(beta), head, floors)
        fake._weights_on_integers(alpha, p, apn, apd, tau, tscale, bp)
        assert fake.dual_weights == want
        assert all(type(w) is type(mpq(0)) for w in fake.dual_weights[10:])
    assert min(counts.values()) >= 200, counts


@pytest.mark.parametrize("text", [DUAL_FEASIBLE, FLIPS])
def test_tableau_rows_in_fractions_take_the_same_pivots(monkeypatch, text):
    # DUAL_INTS_SLACK far below 0: no row of B^-1 with a fraction in it is put
    # over a common denominator, so every such tableau row is summed in
    # fractions over A's rows (Simplex._row_times_a's path for nested
    # denominators); with check_updates every reduced cost updated from those
    # rows is compared with the one priced afresh, and the pivots, flips and
    # optimum are those of the rows on integers.  (Also a dense model whose
    # rows of B^-1 carry many different denominators)
    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)
    used = 0
    for model in (model_from_text(text), _dense_dual_feasible(12, 16, seed=3)):
        plain, events = _events(model)
        pivots = [(e.entering, e.leaving, e.flipped, e.ratio) for e in events if isinstance(e, Pivot)]
        with monkeypatch.context() as mp:
            mp.setattr(rows_module, "DUAL_INTS_SLACK", -10**6)
            with calls_recorded(simplex_module.Simplex, "_rows", what=lambda got: got) as seen:
                r, events = _events(model)
        used += len(seen)
        assert [(e.entering, e.leaving, e.flipped, e.ratio) for e in events if isinstance(e, Pivot)] == pivots
        assert r.status is plain.status and r.objective == plain.objective and type(r.objective) is F
        solve_verified(model, warm_start=False)
    assert used  # (rows summed in fractions: the dense model's at least)


@pytest.mark.parametrize("power, count", [(61, 4), (60, 8), (61, 2), (60, 3)])
def test_numpy_rows_where_a_columns_sum_reaches_two_to_the_63(power, count):
    # a column of `count` entries 2^power (invented): where their sum of
    # magnitudes is exactly 2^63, one past int64, numpy's reduction would wrap
    # round, so the column sums are taken in Python integers; at 2^62 or more
    # (2 x 2^61 too) the rows go by the loops, since no limb would fit; under
    # 2^62 (3 x 2^60) numpy sums them.
    # Every row, by numpy
    # or not, is the loops' row (rows_both_ways), and the optimum is exact:
    # x0 = 2^-power (each row r_i: 2^power x0 + x_(i+1) >= 1 at cost 1 each)
    pytest.importorskip("numpy")
    big = 2**power
    lines = ["minimize: " + " + ".join(f"x{j}" for j in range(count + 1)), "variables:"]
    lines += [f"  x{j}: {{}}" for j in range(count + 1)] + ["constraints:"]
    lines += [f"  r{i}: {big} x0 + x{i + 1} >= 1" for i in range(count)]
    model = model_from_text("\n".join(lines) + "\n")
    with rows_both_ways() as seen:
        r = solve_verified(model, warm_start=False)
    assert seen["rows"] >= 1 and (seen["by_numpy"] > 0) == (big * count < 2**62)
    assert r.status is exactlp.Status.OPTIMAL and r.objective == F(1, big) and r.primal["x0"] == F(1, big)
