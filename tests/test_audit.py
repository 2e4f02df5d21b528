"""The audit log (issue 3): structure, exact strings, determinism, and replay."""

from fractions import Fraction as F
import io
import json
import os
import subprocess
import sys

import pytest
from hypothesis import HealthCheck, given, settings

import exactlp
from exactlp.audit import AuditLog, read_log
from exactlp.floatlp import highs_available
from exactlp.io import model_from_text

from .models import KNOWN, klee_minty
from .strategies import lp_models


def solve_logged(model, **kw):
    buf = io.StringIO()
    settings_ = {"pricing": kw.get("pricing", "hybrid")}
    r = exactlp.solve(model, listener=AuditLog(buf, model, settings_), **kw)
    text = buf.getvalue()
    return r, text, [json.loads(line) for line in text.splitlines()]


def test_log_records_and_fields():
    m = model_from_text(KNOWN[0][1])
    r, text, recs = solve_logged(m)
    assert [x["record"] for x in recs][:2] == ["header", "start"]
    assert recs[-1]["record"] == "close"
    h = recs[0]
    assert h["format"] == "exactlp-log/1" and h["tool"] == f"exactlp {exactlp.__version__}"
    assert h["model"]["fingerprint"] == m.fingerprint
    steps = [x for x in recs if x["record"] in ("pivot", "flip")]
    assert len(steps) == r.iterations
    for s in steps:
        assert set(s) >= {"iteration", "phase", "entering", "reduced_cost", "direction", "leaving",
                          "leaving_bound", "ratio", "step", "objective", "degenerate", "rule"}
    assert recs[-1] == {"record": "close", "outcome": "optimal", "objective": "13",
                        "pivots_phase1": 0, "pivots_phase2": r.pivots_phase2, "bound_flips": r.bound_flips}
    assert steps[-1]["objective"] == "13"


def test_an_interrupted_run_closes_its_log_once():
    # the header's text byte for byte (non-ASCII as itself); an interruption
    # writes one closing record with nothing proven; after a normal close, nothing
    from exactlp.audit import plain
    from exactlp.solver.events import Finish

    m = model_from_text("name: R\u00edo\n" + KNOWN[0][1])
    buf = io.StringIO()
    log = AuditLog(buf, m, {"pricing": "guarded"})
    assert buf.getvalue() == (
        '{"format": "exactlp-log/1", "model": {"fingerprint": "' + m.fingerprint + '", "name": "R\u00edo"}, '
        '"record": "header", "settings": {"pricing": "guarded"}, "tool": "exactlp ' + exactlp.__version__ + '"}\n')
    log(("stage", 1, "first"))
    log.close_interrupted("interrupted")
    log.close_interrupted("interrupted")
    lines = [json.loads(x) for x in buf.getvalue().splitlines()]
    assert lines[1:] == [{"record": "stage", "index": 1, "name": "first"},
                         {"record": "close", "outcome": "interrupted", "objective": None,
                          "pivots_phase1": 0, "pivots_phase2": 0, "bound_flips": 0}]
    buf = io.StringIO()
    log = AuditLog(buf, m, {})
    log(Finish("optimal", F(13), 0, 2, 0))
    log.close_interrupted("interrupted")
    assert [json.loads(x)["record"] for x in buf.getvalue().splitlines()] == ["header", "close"]
    assert [plain(v) for v in (None, True, 3, "a", F(-1, 2), (F(1), None))] == [None, True, 3, "a", "-1/2", ["1", None]]


@pytest.mark.parametrize("content, message", [
    ("", "not an exactlp audit log (the first record is not a header)"),
    ('{"record": "start"}\n', "not an exactlp audit log (the first record is not a header)"),
    ('{"record": "header"}\n{"x": 1}\n', ":2:1: not a log record (no 'record' key)"),
    ('{"record": "header"}\n[1]\n', ":2:1: not a log record (no 'record' key)"),
])
def test_read_log_refuses_what_is_not_a_log(tmp_path, content, message):
    from .helpers import refused

    path = tmp_path / "x.log"
    path.write_text(content)
    said = refused(read_log, str(path))
    assert said == f"{path}{message}" if message.startswith(":") else said == f"{path}: {message}"


def test_exact_numbers_are_strings_never_floats():
    m = model_from_text(KNOWN[2][1])  # Beale: fractions everywhere
    _, text, recs = solve_logged(m, pricing="bland")

    def walk(v):
        assert not isinstance(v, float)
        if isinstance(v, dict):
            for x in v.values():
                walk(x)
        elif isinstance(v, list):
            for x in v:
                walk(x)

    for rec in recs:
        walk(rec)
    assert any("/" in (rec.get("objective") or "") for rec in recs if rec["record"] == "pivot")


def test_keys_are_sorted_and_lines_plain():
    m = model_from_text(KNOWN[0][1])
    _, text, _ = solve_logged(m)
    for line in text.splitlines():
        rec = json.loads(line)
        assert list(rec) == sorted(rec)
        assert "\x1b" not in line


def test_same_model_same_settings_same_bytes():
    m = model_from_text(klee_minty(5))
    assert solve_logged(m)[1] == solve_logged(model_from_text(klee_minty(5)))[1]


def test_byte_identical_across_processes_and_hash_seeds(tmp_path):
    model = tmp_path / "km.yaml"
    model.write_text(klee_minty(4) + "  extra: x1 + x2 + x3 + x4 >= 0\n")
    outs = []
    for seed in ("0", "1", "12345"):
        d = tmp_path / f"run{seed}"
        d.mkdir()
        env = dict(os.environ, PYTHONHASHSEED=seed)
        subprocess.run([sys.executable, "-m", "exactlp.cli", "solve", str(model), "-c", str(d / "c.yaml"),
                        "-l", str(d / "l.jsonl")], check=True, env=env, capture_output=True)
        outs.append(((d / "c.yaml").read_bytes(), (d / "l.jsonl").read_bytes()))
    assert outs[0] == outs[1] == outs[2]


# --- replay: redo every logged pivot independently and recompute the objective ----------------
def _solve_dense(B: list[list[F]], b: list[F]) -> list[F]:
    """Gauss-Jordan elimination in Fractions (the test's own, independent of the solver)."""
    m = len(b)
    M = [row[:] + [b[i]] for i, row in enumerate(B)]
    for c in range(m):
        p = next(r for r in range(c, m) if M[r][c] != 0)
        M[c], M[p] = M[p], M[c]
        piv = M[c][c]
        M[c] = [v / piv for v in M[c]]
        for r in range(m):
            if r != c and M[r][c] != 0:
                f = M[r][c]
                M[r] = [a - f * bb for a, bb in zip(M[r], M[c])]
    return [M[i][m] for i in range(m)]


def replay(model, recs) -> list[tuple[F, F]]:
    """(logged objective, replayed objective) at the first start, then after every step."""
    m = len(model.constraints)
    cols, lo, hi = {}, {}, {}
    for v in model.variables:
        k = (v.name, "variable")
        col = [F(0)] * m
        for i, c in enumerate(model.constraints):
            col[i] = dict(c.terms).get(v.name, F(0))
        cols[k], lo[k], hi[k] = col, v.lower, v.upper
    for i, c in enumerate(model.constraints):
        k = (c.name, "slack")
        cols[k] = [F(-1) if r == i else F(0) for r in range(m)]
        lo[k], hi[k] = c.lower, c.upper
    start = next(rec for rec in recs[1:] if rec["record"] != "warm_start")
    if start["record"] != "start":  # settled before the simplex (crossed bounds): no steps
        assert start["record"] == "close"
        return []
    basis = [(b["name"], b["kind"]) for b in start["basis"]]
    upper = {(b["name"], b["kind"]) for b in start["at_upper"]}
    value = {}
    for k in cols:
        value[k] = hi[k] if k in upper else (lo[k] if lo[k] is not None else (hi[k] if hi[k] is not None else F(0)))
    # artificial columns: sign so that each starts positive
    act = [sum((cols[(v.name, "variable")][i] * value[(v.name, "variable")] for v in model.variables), F(0))
           for i in range(m)]
    names = [c.name for c in model.constraints]
    for row in start["artificial_rows"]:
        i = names.index(row)
        target = value[(row, "slack")]
        sigma = 1 if target - act[i] > 0 else -1
        k = (row, "artificial")
        cols[k] = [F(sigma) if r == i else F(0) for r in range(m)]
        lo[k], hi[k], value[k] = F(0), None, F(0)
    cost = dict(model.objective)

    def settled(phase: int) -> F:
        """The basic values from the nonbasic ones, then the phase's objective."""
        nonbasic = [k for k in cols if k not in basis]
        rhs = [-sum((cols[k][i] * value[k] for k in nonbasic), F(0)) for i in range(m)]
        xb = _solve_dense([[cols[k][i] for k in basis] for i in range(m)], rhs) if m else []
        for k, v in zip(basis, xb):
            value[k] = v
        if phase == 1:
            # the artificials' sum (primal phase 1), or the bound violations of
            # the other columns (the dual simplex's phase 1 and a repair's)
            return sum((value[k] for k in cols if k[1] == "artificial"), F(0)) + sum(
                (lo[k] - value[k] if lo[k] is not None and value[k] < lo[k] else
                 value[k] - hi[k] if hi[k] is not None and value[k] > hi[k] else F(0)
                 for k in cols if k[1] != "artificial"), F(0))
        return model.objective_constant + sum((a * value[(n, "variable")] for n, a in cost.items()), F(0))

    # first the start's own objective, then each step's
    out = [(F(start["objective"]), settled(start["phase"]))]
    for rec in recs:
        if rec["record"] == "phase_end" and rec["phase"] == 1:
            for k in cols:
                if k[1] == "artificial":
                    hi[k] = F(0)
        if rec["record"] not in ("pivot", "flip"):
            continue
        e = (rec["entering"]["name"], rec["entering"]["kind"])
        for f in rec.get("flipped", ()):  # a dual pivot's bound flips, made before it
            k = (f["name"], f["kind"])
            value[k] = hi[k] if f["to"] == "upper" else lo[k]
        if rec["record"] == "flip":
            value[e] = hi[e] if rec["direction"] == "increase" else lo[e]
        else:
            lv = (rec["leaving"]["name"], rec["leaving"]["kind"])
            basis[basis.index(lv)] = e
            value[lv] = lo[lv] if rec["leaving_bound"] == "lower" else hi[lv]
        out.append((F(rec["objective"]), settled(rec["phase"])))
    return out


@pytest.mark.parametrize("name, text", [(k[0], k[1]) for k in KNOWN if "crossed" not in k[0]] + [("klee-minty-5", klee_minty(5))])
@pytest.mark.parametrize("pricing", ["hybrid", "bland", "dantzig"])
def test_replay_reproduces_logged_objectives(name, text, pricing):
    m = model_from_text(text)
    _, _, recs = solve_logged(m, pricing=pricing, iteration_limit=300)
    pairs = replay(m, recs)
    assert all(logged == again for logged, again in pairs), pairs


CONSTANT_OBJECTIVES = [
    # (invented numbers) an objective with a constant term, in each sense (the
    # first starts infeasible, so a phase 1 comes first): the constant is in
    # every logged phase-2 objective, in the model's sense (the constant taken
    # off instead of added passed every test)
    "maximize: 3 x1 + 2 x2 - 7/2\nvariables: {x1: {upper: 4}, x2: {}}\nconstraints:\n"
    "  r1: x1 + x2 <= 6\n  r2: x1 - x2 >= -2\n  r3: x1 + 3 x2 >= 3\n",
    "minimize: -2 x1 - 3 x2 + 11/3\nvariables: {x1: {upper: 3}, x2: {}}\nconstraints:\n"
    "  r1: x1 + x2 <= 4\n  r2: x1 + 3 x2 <= 6\n",
]


@pytest.mark.parametrize("text", CONSTANT_OBJECTIVES)
@pytest.mark.parametrize("pricing", ["guarded", "hybrid", "bland", "dantzig"])
def test_replay_with_an_objective_constant(text, pricing):
    m = model_from_text(text)
    assert m.objective_constant in (F(-7, 2), F(11, 3))
    r, _, recs = solve_logged(m, pricing=pricing)
    pairs = replay(m, recs)  # (the start's objective, then each step's)
    phases = {rec["phase"] for rec in recs if rec["record"] in ("pivot", "flip")}
    assert len(pairs) > 1 and 2 in phases and all(logged == again for logged, again in pairs), pairs
    # each phase's end counts that phase's pivots (bound flips apart)
    for rec in (rec for rec in recs if rec["record"] == "phase_end"):
        assert rec["pivots"] == sum(1 for x in recs if x["record"] == "pivot" and x["phase"] == rec["phase"]), rec
    last = [rec for rec in recs if rec["record"] in ("pivot", "flip")][-1]
    assert last["phase"] == 2 and F(last["objective"]) == r.objective
    ends = [F(rec["objective"]) for rec in recs if rec["record"] in ("phase_end", "close") and rec.get("phase") != 1]
    assert ends == [r.objective, r.objective]  # (phase 2's end, then the close)


REPAIRS = [
    # (invented numbers) x basic with row a held at its upper side and y at 0 puts
    # x at 4, so rows b (3 x + y = 12 > 6) and c (x + y = 4 > 3) break their upper
    # bounds by 6 and 1; each leaves at its own upper bound (c at 3, then b at 6),
    # though the repair's temporary box holds that bound as its lower end
    ("maximize: x + y\nvariables: {x: {}, y: {}}\nconstraints:\n"
     "  a: x + 2 y <= 4\n  b: 3 x + y <= 6\n  c: x + y <= 3\n", (0, 3, 4), {2}, ["x", "b", "c"], ["a"],
     [("c", "upper"), ("b", "upper")], [F(7), F(1), F(0)], F(14, 5)),
    # the same rows turned round: x held by row b at its lower side is 2, so rows
    # a (2 < 4) and c (2 < 3) fall short of their lower bounds by 2 and 1
    ("minimize: x + y\nvariables: {x: {}, y: {}}\nconstraints:\n"
     "  a: x + 2 y >= 4\n  b: 3 x + y >= 6\n  c: x + y >= 3\n", (0, 2, 4), set(), ["a", "x", "c"], [],
     [("a", "lower"), ("c", "lower")], [F(3), F(1, 5), F(0)], F(3)),
    # a variable with both bounds finite: x held at 4 by row a is 1 past its upper
    # bound 3, and leaves there, named "upper" by its own bounds (0 and 3) though
    # its box [3, 4] holds 3 as its lower end (optimum x = 3, y = 1/2)
    ("maximize: x + y\nvariables: {x: {upper: 3}, y: {}}\nconstraints:\n"
     "  a: x + 2 y <= 4\n  b: 3 x + y <= 12\n", (0, 3), {2}, ["x", "b"], ["a"],
     [("x", "upper")], [F(1), F(0)], F(7, 2)),
]


@pytest.mark.parametrize("text, basic, upper, shown, shown_upper, leaving, objectives, optimum", REPAIRS)
def test_replay_of_a_repair_from_a_suggested_basis(text, basic, upper, shown, shown_upper, leaving, objectives,
                                                   optimum):
    # The log of a repair has one warm_start record, then the start the repair's
    # pivots go from (phase 1, its objective the violations' sum), and each
    # pivot's objective is the violations left, replayed from that start; then
    # phase 2's start
    from exactlp.floatlp import BasisHint

    m = model_from_text(text)
    hint = BasisHint(basic=basic, at_upper=frozenset(upper), source="test", float_status="made up")
    r, _, recs = solve_logged(m, start_basis=hint)
    assert r.objective == optimum and r.warm_start.startswith("accepted")
    kinds = [rec["record"] for rec in recs]
    assert kinds == ["header", "warm_start", "start"] + ["pivot"] * len(leaving) + [
        "phase_end", "start", "phase_end", "close"]
    first = recs[2]
    assert (first["phase"], F(first["objective"]), first["artificial_rows"]) == (1, objectives[0], [])
    assert [b["name"] for b in first["basis"]] == shown
    assert [b["name"] for b in first["at_upper"]] == shown_upper
    assert [(rec["leaving"]["name"], rec["leaving_bound"]) for rec in recs if rec["record"] == "pivot"] == leaving
    assert replay(m, recs) == [(v, v) for v in objectives]


def test_a_stalled_repair_is_recorded_and_the_slack_basis_decides():
    # (invented numbers) row b asks x + 2 y >= 5 where a and c allow at most
    # 2 + 1 = 3: infeasible.  The suggested basis (x, b, c with a at its upper
    # side) puts b at 2, 3 short; the repair's one pivot (y up to c's bound 1)
    # leaves it 2 short and can go no further, so nothing is concluded from it:
    # the log records the refusal, and the slack basis's phase 1 proves the
    # infeasibility (its objective 2, the same shortfall) with a Farkas
    # certificate the verifier accepts.
    from exactlp.floatlp import BasisHint

    from .helpers import solve_verified

    m = model_from_text("maximize: x + y\nvariables: {x: {}, y: {}}\nconstraints:\n"
                        "  a: x + y <= 2\n  b: x + 2 y >= 5\n  c: y <= 1\n")
    hint = BasisHint(basic=(0, 3, 4), at_upper=frozenset({2}), source="test", float_status="made up")
    r, _, recs = solve_logged(m, start_basis=hint)
    assert r.status is exactlp.Status.INFEASIBLE and r.warm_start == "rejected: the repair from the suggested basis stalled"
    assert [rec["record"] for rec in recs] == ["header", "warm_start", "start", "pivot", "warm_start", "start",
                                               "pivot", "pivot", "phase_end", "close"]
    assert [(rec["accepted"], rec["reason"]) for rec in recs if rec["record"] == "warm_start"] == [
        (True, "1 basic values lie outside their bounds in exact arithmetic; repairing from this basis"),
        (False, "the repair from the suggested basis stalled; starting again from the slack basis")]
    starts = [rec for rec in recs if rec["record"] == "start"]
    assert [(s["phase"], F(s["objective"]), s["artificial_rows"]) for s in starts] == [(1, F(3), []), (1, F(5), ["b"])]
    assert [F(rec["objective"]) for rec in recs if rec["record"] == "pivot"] == [F(2), F(3), F(2)]
    assert F(recs[-2]["objective"]) == 2 and recs[-1]["outcome"] == "infeasible"
    assert solve_verified(m, start_basis=hint).status is exactlp.Status.INFEASIBLE


@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lp_models(max_vars=4, max_rows=4))
def test_replay_on_random_models(model):
    _, _, recs = solve_logged(model)
    for logged, again in replay(model, recs):
        assert logged == again


def test_tableau_is_recorded_and_consistent():
    m = model_from_text(KNOWN[0][1])
    buf = io.StringIO()
    exactlp.solve(m, tableau=True, listener=AuditLog(buf, m, {"tableau": True}))
    recs = [json.loads(x) for x in buf.getvalue().splitlines()]
    pivots = [r for r in recs if r["record"] == "pivot"]
    assert pivots
    for p in pivots:
        t = p["tableau"]
        cols = [tuple(c) for c in t["columns"]]
        # every basic column is a unit column of B^-1 A in its own row
        for row_index, b in enumerate(t["basis"]):
            j = cols.index(tuple(b))
            column = [F(r[j]) for r in t["rows"]]
            assert column == [F(1) if i == row_index else F(0) for i in range(len(column))]
        # the entering column's reduced cost is the one logged
        j = cols.index((p["entering"]["name"], p["entering"]["kind"]))
        assert F(t["reduced_costs"][j]) == F(p["reduced_cost"])


def test_read_log_refuses_floats(tmp_path):
    p = tmp_path / "bad.jsonl"
    p.write_text('{"record": "header"}\n{"record": "pivot", "step": 0.5}\n')
    with pytest.raises(exactlp.InputError) as exc:
        read_log(str(p))
    assert str(exc.value) == f"{p}:2:1: not a log record: a JSON float (0.5) where an exact number (a string) must be"


DOCUMENTED_RULES = {  # the README's audit-log section names these, and only these
    base + suffix
    for base in ("devex", "partial dantzig", "dantzig", "bland", "dual", "dual bland")
    for suffix in ("", " (lexicographic ties)", " (last resort)", " (degenerate run)")
}


@pytest.mark.parametrize("forced_partial, switch", [(False, 2), (True, 0), (True, 2)])
def test_pivot_rules_are_the_documented_ones(monkeypatch, forced_partial, switch):
    # switch 0: partial pricing never gives way to full pricing (PARTIAL_SWITCH)
    from exactlp.solver import PRICING_RULES
    from exactlp.solver import simplex as simplex_module
    from exactlp.solver.events import Pivot

    from .models import KNOWN, klee_minty

    if forced_partial:
        monkeypatch.setattr(simplex_module, "PARTIAL_FACTOR", 0)
    monkeypatch.setattr(simplex_module, "PARTIAL_SWITCH", switch)
    seen = set()
    texts = [t for _, t, _, _, _ in KNOWN] + [klee_minty(5)]
    for pricing in PRICING_RULES:
        for text in texts:
            events = []
            exactlp.solve(model_from_text(text), pricing=pricing, listener=events.append,
                          iteration_limit=200, warm_start=False)
            seen |= {e.rule for e in events if isinstance(e, Pivot)}
    assert seen <= DOCUMENTED_RULES, seen - DOCUMENTED_RULES
    if switch == 0 or not forced_partial:
        # (forced on models this small, a first scan already looks at half the
        # columns, so with switching allowed partial pricing gives way at once)
        assert ("partial dantzig" in seen) == forced_partial
    # devex only where partial pricing is off, or after it has given way
    assert ("devex" in seen) == (not forced_partial or switch > 0)
    assert {"dantzig", "bland"} <= seen


@pytest.mark.skipif(not highs_available(), reason="the warm start needs highspy")
def test_warm_start_record_says_what_became_of_the_suggestion():
    # the README's audit-log section: a `warm_start` record after the header, with
    # its source, the float solver's status, and whether and why it was accepted;
    # a suggestion asked for that never came is recorded as refused, with why
    m = model_from_text(KNOWN[0][1])
    r, _, recs = solve_logged(m, warm_start=True)
    assert [x["record"] for x in recs][:3] == ["header", "warm_start", "start"]
    assert recs[1] == {"record": "warm_start", "source": "highs", "float_status": "Optimal", "accepted": True,
                       "reason": "the suggested basis is exactly primal feasible"}
    assert r.warm_start == "accepted: the suggested basis is exactly primal feasible"
    huge = model_from_text("minimize: x\nvariables: {x: {}}\nconstraints:\n  r: 1e400 x >= 1\n")
    r, _, recs = solve_logged(huge, warm_start=True)
    assert recs[1] == {"record": "warm_start", "source": "highs", "float_status": "-", "accepted": False,
                       "reason": "the model holds a number beyond the floating-point range; no float solve was made"}
    assert r.objective == F(1, 10**400)


@pytest.mark.skipif(not highs_available(), reason="the warm start needs highspy")
def test_a_refused_warm_start_is_recorded_once_when_the_dual_phase_gives_way(monkeypatch):
    # no suggestion came (a number beyond the floating-point range), so the
    # dual phase starts from the slack basis and records the refusal before
    # its own start; with no pivot budget it gives way at once to the primal
    # method, whose start follows: the refusal is not recorded again
    from exactlp.solver import dual as dual_module

    monkeypatch.setattr(dual_module, "DUAL_LIMIT_FACTOR", 0)
    huge = model_from_text("minimize: x\nvariables: {x: {}}\nconstraints:\n  r: 1e400 x >= 1\n")
    r, _, recs = solve_logged(huge, warm_start=True)
    assert [x["record"] for x in recs] == ["header", "warm_start", "start", "start", "pivot", "phase_end",
                                           "phase_end", "close"]
    assert [x["phase"] for x in recs if x["record"] == "start"] == [1, 1]
    assert recs[1]["accepted"] is False and r.objective == F(1, 10**400)


@pytest.mark.parametrize("case, pivots, flips", [
    ("drought.yaml", 2, 1), ("emissions.yaml", 2, 2), ("grants.yaml", 1, 2), ("depot.mps", 3, 1),
])
def test_the_log_counts_every_step_the_result_counts(case, pivots, flips):
    # a primal bound flip is a record of its own; a dual pivot's flips ride in its
    # record ('flipped'); the result counts pivots and flips apart, and its
    # iterations are both together
    from .conftest import CASES

    m = exactlp.load(CASES / case)
    r, _, recs = solve_logged(m, warm_start=False)
    pivot_records = [x for x in recs if x["record"] == "pivot"]
    flips_logged = sum(x["record"] == "flip" for x in recs) + sum(len(x.get("flipped", [])) for x in pivot_records)
    assert (r.pivots_phase1 + r.pivots_phase2, r.bound_flips) == (pivots, flips)
    assert (len(pivot_records), flips_logged) == (pivots, flips)
    assert r.iterations == pivots + flips
    assert recs[-1]["pivots_phase1"] + recs[-1]["pivots_phase2"] == pivots and recs[-1]["bound_flips"] == flips
