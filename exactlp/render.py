"""Screen output with rich.  Files are never written here (see audit, certificate).

Layouts and words are our own, in the trade's plain terms.  Exact values
are shown as written in certificates (``p/q``); any decimal is labelled as
a rendering.
"""

from __future__ import annotations

import json
import time
from fractions import Fraction

from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from .model import Model
from .numbers import format_decimal, format_number

BOX = box.SIMPLE_HEAD


#: most rows of one table on the screen (``--rows``; 0 or None: every row).  A
#: screen table of thousands of rows helps no one and costs rich about half a
#: millisecond a row (80BAU3B's solve report took 8 s of a 9.6 s run); files and
#: ``--json`` are never cut
ROWS = 200


def add_row(table: Table, *cells: str) -> None:
    """Add a row of plain text: names and notes are never read as rich markup."""
    table.add_row(*(Text(c) for c in cells))


def _cap(items, rows: int | None) -> tuple[list, int]:
    """The items a table shows, and how many it leaves out."""
    items = list(items)
    if rows and len(items) > rows:
        return items[:rows], len(items) - rows
    return items, 0


def _more(console: Console, left: int, what: str, where: str) -> None:
    if left:
        console.print(Text(f"... and {left:,} more {what}, not shown here ({where}; --rows 0 shows every one)"),
                      soft_wrap=True)


def lo(v: Fraction | None) -> str:
    return "-inf" if v is None else format_number(v)


def hi(v: Fraction | None) -> str:
    return "inf" if v is None else format_number(v)


def formula(terms) -> str:
    if not terms:
        return "0"
    out = []
    for i, (name, c) in enumerate(terms):
        a = abs(c)
        coef = "" if a == 1 else format_number(a) + " "
        if i == 0:
            out.append(("-" if c < 0 else "") + coef + name)
        else:
            out.append(("- " if c < 0 else "+ ") + coef + name)
    return " ".join(out)


def row_formula(c) -> str:
    f = formula(c.terms)
    if c.lower is not None and c.lower == c.upper:
        return f"{f} == {format_number(c.lower)}"
    if c.lower is not None and c.upper is not None:
        return f"{format_number(c.lower)} <= {f} <= {format_number(c.upper)}"
    if c.upper is not None:
        return f"{f} <= {format_number(c.upper)}"
    if c.lower is not None:
        return f"{f} >= {format_number(c.lower)}"
    return f"{f}  (free row)"


def objective_text(model: Model) -> str:
    f = formula(model.objective) if model.objective else ""
    c = model.objective_constant
    if c:
        f = (f + (" - " if c < 0 else " + ") if f else ("-" if c < 0 else "")) + format_number(abs(c))
    return f"{model.sense.value} {f or '0'}"


def kv(console: Console, pairs: list[tuple[str, str]]) -> None:
    width = max(len(k) for k, _ in pairs)
    for k, v in pairs:
        console.print(Text(f"{k.ljust(width)}  {v}"), soft_wrap=True)


def model_title(model: Model) -> str:
    return model.name or (model.source or "model")


# ----------------------------------------------------------------------
def _count(n: int, one: str, many: str) -> str:
    """``1 term``, ``3 terms``, ``0 terms``."""
    return f"{n} {one if n == 1 else many}"


def summary(console: Console, model: Model, path: str) -> None:
    vs, cs = model.variables, model.constraints
    free = sum(1 for v in vs if v.lower is None and v.upper is None)
    fixed = sum(1 for v in vs if v.lower is not None and v.lower == v.upper)
    eq = sum(1 for c in cs if c.is_equality)
    ranged = sum(1 for c in cs if c.lower is not None and c.upper is not None and c.lower != c.upper)
    kv(console, [
        ("model", f"{path} is valid"),
        ("name", model.name or "(none)"),
        ("objective", f"{model.sense.value}, {_count(len(model.objective), 'term', 'terms')}"),
        ("variables", f"{len(vs)} ({free} free, {fixed} fixed)"),
        ("constraints", f"{len(cs)} ({_count(eq, 'equality', 'equalities')}, {ranged} ranged)"),
        ("nonzeros", str(model.nonzeros)),
        ("fingerprint", model.fingerprint),
    ])


def show_model(console: Console, model: Model, expanded: bool = False, rows: int | None = ROWS) -> None:
    console.print(Text(f"Model: {model_title(model)}", style="bold"))
    if model.description:
        console.print(Text(model.description))
    hidden = set() if expanded else model.auxiliary_names()
    written = dict(model.written)
    if model.written_objective and not expanded:
        console.print(Text(f"Objective: {model.sense.value} {model.written_objective}"), soft_wrap=True)
    else:
        console.print(Text(f"Objective: {objective_text(model)}"), soft_wrap=True)
    if model.auxiliary:
        console.print(Text("(the linear program actually solved: exactlp show --expanded)" if not expanded else
                           f"(expanded: {_count(len(model.auxiliary), 'auxiliary variable stands', 'auxiliary variables stand')}"
                           " for abs(), max() and min())"))
    t = Table(title="Variables", box=BOX, title_justify="left")
    for h in ("variable", "lower", "upper", "unit", "note"):
        t.add_column(h, justify="right" if h in ("lower", "upper") else "left")
    shown, left = _cap((v for v in model.variables if v.name not in hidden), rows)
    for v in shown:
        add_row(t, v.name, lo(v.lower), hi(v.upper), v.unit or "", v.note or "")
    console.print(t)
    _more(console, left, "variables", "the model file holds them")
    t = Table(title="Constraints", box=BOX, title_justify="left")
    t.add_column("constraint")
    t.add_column("rule")
    shown, left = _cap((c for c in model.constraints if c.name not in hidden), rows)
    for c in shown:
        add_row(t, c.name, written[c.name] if (c.name in written and not expanded) else row_formula(c))
    if model.constraints:
        console.print(t)
        _more(console, left, "constraints", "the model file holds them")
    else:
        console.print(Text("Constraints: none"))


CAUTION = ("Caution: this is the proven outcome of the model as written, not proof that the model "
           "states the agreed rules; decisions under legal or regulatory rules need qualified review.")


def caution(console: Console) -> None:
    console.print(Text(CAUTION), soft_wrap=True)


#: how an analysis's claims stand, as the command line found them (cli._proven)
CHECK_WORDS = {
    "checked": "every claim was re-derived from the model by the independent report check, the one "
               "`exactlp verify` runs on a report written with -o.",
    "skipped": "skipped (--no-check); the claims are exact but were not re-derived by the independent report check.",
    "too large": "not done, as the proofs would be past the report limits; the claims are exact but were not "
                 "re-derived by the independent report check.",
}


def check_line(console: Console, checked: str | None) -> None:
    if checked is not None:
        console.print(Text(f"Check: {CHECK_WORDS[checked]}"), soft_wrap=True)


def solve_report(console: Console, model: Model, result, *, digits: int, certificate: str | None,
                 verified: bool | None, log: str | None, cert: dict | None = None,
                 rows: int | None = ROWS, warm_note: str | None = None, named: Model | None = None) -> None:
    """The result of solving ``model``; ``named`` is the model file it came from
    where that differs (the last tier's own linear program of a tiered model):
    the head names the file's model and fingerprint, as its certificate does."""
    from .solver.result import Status

    st = result.status
    named = model if named is None else named
    head = [("model", f"{model_title(named)}  ({named.fingerprint[:19]}…)")]
    if st is Status.OPTIMAL:
        head.append(("outcome", "optimal: proven by primal and dual feasibility with a zero gap"))
        head.append(("objective", format_number(result.objective)))
        head.append(("", f"≈ {format_decimal(result.objective, digits)}  (decimal rendering to {digits} digits)"))
    elif st is Status.INFEASIBLE:
        head.append(("outcome", "infeasible: proven by a Farkas combination of the constraints"
                     if result.crossed is None else "infeasible: proven by a pair of sides that cross"))
    elif st is Status.UNBOUNDED:
        head.append(("outcome", "unbounded: proven by a feasible point and an improving ray"))
    else:
        head.append(("outcome", f"stopped: {st.value.replace('_', ' ')} reached; nothing is proven"))
    head.append(("pivots", f"phase 1: {result.pivots_phase1}, phase 2: {result.pivots_phase2}, bound flips: {result.bound_flips}"))
    if result.warm_start != "off":
        how = ("a suggested starting basis, re-proven exactly" if result.warm_start.startswith("accepted")
               else "the exact solve started from its own slack basis")
        head.append(("warm start", f"{result.warm_start} ({how})"))
    elif warm_note:
        head.append(("warm start", warm_note))
    if verified is not None:
        head.append(("check", "the certificate passed the independent verifier" if verified else "the certificate FAILED verification"))
    if certificate:
        head.append(("certificate", certificate))
    if log:
        head.append(("audit log", log))
    kv(console, head)

    if st in (Status.OPTIMAL, Status.UNBOUNDED):
        t = Table(title="Variables" if st is Status.OPTIMAL else "Variables (a feasible point)", box=BOX, title_justify="left")
        cols = ["variable", "value", "lower", "upper"]
        if st is Status.OPTIMAL:
            cols += ["reduced cost", "position"]
        else:
            cols += ["ray"]
        for h in cols:
            t.add_column(h, justify="left" if h in ("variable", "position") else "right")
        basic = set(result.basis)
        where = "the certificate and --json hold every value"
        shown, left = _cap(model.variables, rows)
        for v in shown:
            x = result.primal[v.name]
            row = [v.name + (f" [{v.unit}]" if v.unit else ""), format_number(x), lo(v.lower), hi(v.upper)]
            if st is Status.OPTIMAL:
                if v.name in basic:
                    pos = "basic"
                elif v.lower is not None and x == v.lower and v.lower == v.upper:
                    pos = "fixed"
                elif v.lower is not None and x == v.lower:
                    pos = "at lower"
                elif v.upper is not None and x == v.upper:
                    pos = "at upper"
                else:
                    pos = "free at 0"
                row += [format_number(result.reduced_costs[v.name]), pos]
            else:
                row += [format_number(result.ray.get(v.name, Fraction(0)))]
            add_row(t, *row)
        console.print(t)
        _more(console, left, "variables", where)
        if model.constraints:
            t = Table(title="Constraints", box=BOX, title_justify="left")
            cols = ["constraint", "activity", "lower", "upper"]
            if st is Status.OPTIMAL:
                cols += ["dual", "state"]
            for h in cols:
                t.add_column(h, justify="left" if h in ("constraint", "state") else "right")
            shown, left = _cap(model.constraints, rows)
            for c in shown:
                a = result.activities[c.name]
                row = [c.name, format_number(a), lo(c.lower), hi(c.upper)]
                if st is Status.OPTIMAL:
                    tight = (c.lower is not None and a == c.lower) or (c.upper is not None and a == c.upper)
                    row += [format_number(result.duals[c.name]), "binding" if tight else "slack"]
                add_row(t, *row)
            console.print(t)
            _more(console, left, "constraints", where)
    if model.auxiliary and st is Status.OPTIMAL:
        from .reform import evaluate

        console.print(Text("In the model's own terms (each function's exact value at the optimum):"))
        t = Table(box=BOX)
        for h in ("where", "function", "value"):
            t.add_column(h, justify="right" if h == "value" else "left")
        for a in model.auxiliary:
            add_row(t, a.context, a.text, format_number(evaluate(a, result.primal)))
        console.print(t)
    if st is Status.INFEASIBLE and result.crossed is not None:
        kind, name = result.crossed
        console.print(Text(f"The {kind} '{name}' has a lower bound above its upper bound."), soft_wrap=True)
    elif st is Status.INFEASIBLE:
        console.print(Text("These rules cannot all hold together (Farkas multipliers):"))
        t = Table(box=BOX)
        t.add_column("constraint")
        t.add_column("multiplier", justify="right")
        t.add_column("rule")
        by_name = {c.name: c for c in model.constraints}
        shown, left = _cap([(True, k, y) for k, y in result.farkas_rows.items()]
                           + [(False, k, mu) for k, mu in result.farkas_bounds.items()], rows)
        for is_row, name, y in shown:
            if is_row:
                add_row(t, name, format_number(y), row_formula(by_name[name]))
            else:
                v = model.variable(name)
                add_row(t, f"bound of {name}", format_number(y), f"{lo(v.lower)} <= {name} <= {hi(v.upper)}")
        console.print(t)
        _more(console, left, "rules", "the certificate holds every multiplier")
        if cert is not None:
            console.print(Text(f"Adding these rules with these weights gives 0 >= {cert['farkas']['rhs']}, "
                               "which no allocation can satisfy."), soft_wrap=True)
    if st.is_proven:
        caution(console)


def stages_report(console: Console, model: Model, staged) -> None:
    console.print(Text(f"Priority tiers of {model_title(model)}: each solved with the earlier optima held exactly"),
                  soft_wrap=True)
    t = Table(box=BOX)
    for h in ("tier", "goal", "outcome", "optimum"):
        t.add_column(h, justify="right" if h == "optimum" else "left")
    by_name = {st.name: st for st in model.stages}
    for name, _, r in staged.stages:
        st = by_name[name]
        goal = f"{st.sense.value} {st.written or formula(st.objective)}"
        add_row(t, name, goal, r.status.value, "" if r.objective is None else format_number(r.objective))
    console.print(t)
    console.print(Text("The last tier in detail:"))


def verify_report(console: Console, verification, model_path: str, cert_path: str) -> None:
    for c in verification.checks:
        mark = "pass" if c.ok else "FAIL"
        console.print(Text(f"{mark}  {c.name}: {c.detail}"), soft_wrap=True)
    if verification.valid and verification.status in ("optimal", "infeasible", "unbounded"):
        console.print(Text(f"valid: {cert_path} proves that {model_path} is {verification.status}"), soft_wrap=True)
        caution(console)
    elif verification.valid:
        console.print(Text(f"valid: {cert_path} proves {verification.status} of {model_path}"), soft_wrap=True)
        caution(console)
    else:
        console.print(Text(f"invalid: {cert_path} does not prove its claim for {model_path}"), soft_wrap=True)


def trace_report(console: Console, records: list[dict], pivot: int | None, rows: int | None = ROWS) -> None:
    header = records[0]
    model = header.get("model", {})
    tier = None
    steps = []
    closes = []  # (tier or None, its closing record): a priority model's log closes each tier
    for r in records:  # a priority model's log marks where each tier begins
        if r.get("record") == "stage":
            tier = r.get("name")
        elif r.get("record") in ("pivot", "flip"):
            steps.append(dict(r, tier=tier) if tier is not None else r)
        elif r.get("record") == "close":
            closes.append((tier, r))
    tiered = tier is not None
    match = [r for r in steps if r.get("iteration") == pivot]
    if pivot is not None and not match:  # (before anything is printed)
        from .errors import InputError

        raise InputError(f"the log has no pivot {pivot} (it has {len(steps)})", field="--pivot")
    kv(console, [
        ("log", f"{header.get('tool', '?')}, {header.get('format', '?')}"),
        ("model", f"{model.get('name') or '(unnamed)'}  {model.get('fingerprint', '')}"),
        ("settings", ", ".join(f"{k}={v if isinstance(v, str) else json.dumps(v)}"
                               for k, v in sorted((header.get("settings") or {}).items()))),
    ])
    if pivot is None:
        t = Table(title="Pivots", box=BOX, title_justify="left")
        heads = (("tier",) if tiered else ()) + ("#", "phase", "entering", "leaving", "ratio", "step", "objective", "rule")
        for h in heads:
            t.add_column(h, justify="right" if h in ("#", "phase", "ratio", "step", "objective") else "left")
        shown_steps, left = _cap(steps, rows)
        for r in shown_steps:
            leaving = r.get("leaving")
            lv = "bound flip" if not isinstance(leaving, dict) else f"{leaving['name']} -> {r.get('leaving_bound')}"
            if r.get("flipped"):  # a dual pivot's bound flips, made before it
                lv += f" (+{len(r['flipped'])} flipped)"
            ent = r["entering"]["name"] + (" ↑" if r.get("direction") == "increase" else " ↓")
            cells = [str(r["iteration"]), str(r["phase"]), ent, lv, r.get("ratio") or "", r["step"],
                     r["objective"], r["rule"] + (" (degenerate)" if r.get("degenerate") else "")]
            add_row(t, *(([r.get("tier") or ""] if tiered else []) + cells))
        console.print(t)
        _more(console, left, "pivots", "the log holds every one, and --pivot K shows any one")
    else:
        r = match[0]
        def shown(k, v) -> str:
            if k == "flipped":
                return ", ".join(f"{f['name']} -> {f['to']}" for f in v)
            return str(v) if not isinstance(v, dict) else f"{v['name']} ({v['kind']})"

        pairs = [(k, shown(k, r[k])) for k in sorted(r) if k not in ("tableau", "record")]
        console.print(Text(f"Pivot {pivot}", style="bold"))
        kv(console, pairs)
        tab = r.get("tableau")
        if tab and "rows" in tab:
            t = Table(title="Tableau before the pivot (rows: basic columns; B^-1 A)", box=BOX, title_justify="left")
            t.add_column("basic")
            t.add_column("value", justify="right")

            def marked(c) -> str:  # a column's name, and its kind where a row of that name has two
                return c[0] + ("'" if c[1] == "slack" else "*" if c[1] == "artificial" else "")
            for c in tab["columns"]:
                t.add_column(marked(c), justify="right")
            for b, val, row in zip(tab["basis"], tab["values"], tab["rows"]):
                add_row(t, marked(b), val, *row)
            add_row(t, "reduced cost", "", *[v if v is not None else "" for v in tab["reduced_costs"]])
            console.print(t)
            console.print(Text("(' marks a constraint's slack column, * an artificial one)"))
        elif tab:
            console.print(Text(f"tableau: {tab.get('omitted')}"))
    for name, close in closes:
        console.print(Text(f"closed{f' ({name})' if name is not None else ''}: {close.get('outcome')}, "
                           f"objective {close.get('objective')}, "
                           f"pivots {close.get('pivots_phase1')} + {close.get('pivots_phase2')}, "
                           f"bound flips {close.get('bound_flips')}"))
    if not closes or (tiered and closes[-1][0] != tier):
        console.print(Text("closed: no closing record (the run was killed or is still going)"
                           + (f"; tier '{tier}' has none" if closes else "")))


class StatusLine:
    """A live one-line status on stderr for long solves (terminals only)."""

    def __init__(self, console: Console) -> None:
        self.console = console
        self.started = time.monotonic()
        self.last = 0.0
        self.status = None

    def __enter__(self):
        self.status = self.console.status("solving…")
        self.status.__enter__()
        return self

    def __exit__(self, *exc):
        self.status.__exit__(*exc)

    def __call__(self, event) -> None:
        from .solver.events import Pivot

        if not isinstance(event, Pivot):
            return
        now = time.monotonic()
        if now - self.last < 0.2:
            return
        self.last = now
        self.status.update(
            f"phase {event.phase} · {_count(event.iteration, 'step', 'steps')} · objective ≈ "
            f"{format_decimal(event.objective, 8)} · {now - self.started:.1f} s"
        )


def _iv(iv) -> str:
    return f"[{lo(iv.lower)}, {hi(iv.upper)}]"


def sensitivity_report(console: Console, model: Model, s, rows: int | None = ROWS, checked: str | None = None) -> None:
    console.print(Text(f"Sensitivity of the optimum of {model_title(model)} (objective {format_number(s.result.objective)})"),
                  soft_wrap=True)
    t = Table(title="Objective coefficient ranges", box=BOX,
              title_justify="left")
    for h in ("variable", "coefficient", "range"):
        t.add_column(h, justify="left" if h == "variable" else "right")
    coef = dict(model.objective)
    shown, left = _cap(model.variables, rows)
    for v in shown:
        add_row(t, v.name, format_number(coef.get(v.name, Fraction(0))), _iv(s.objective_ranges[v.name]))
    console.print(t)
    _more(console, left, "variables", "--json and -o hold every range")
    t = Table(title="Constraint limit ranges (each dual holds within its range)", box=BOX, title_justify="left")
    for h in ("constraint", "limit", "value", "dual", "range"):
        t.add_column(h, justify="left" if h in ("constraint", "limit") else "right")
    shown, left = _cap(s.rhs_ranges.items(), rows)
    for name, rr in shown:
        add_row(t, name, rr.bound, format_number(rr.value), format_number(rr.dual), _iv(rr.interval))
    console.print(t)
    _more(console, left, "constraints", "--json and -o hold every range")
    shown, left = _cap(((name, rr) for name, rr in s.rhs_ranges.items() if rr.dual), rows)
    for name, rr in shown:
        verb = "raises" if rr.dual > 0 else "lowers"
        console.print(Text(f"Raising the {name} limit by 1 {verb} the objective by {format_number(abs(rr.dual))}, "
                           f"valid while the limit stays within {_iv(rr.interval)}."), soft_wrap=True)
    _more(console, left, "such sentences", "--json and -o hold every dual")
    check_line(console, checked)
    caution(console)


def ranges_report(console: Console, model: Model, rg, rows: int | None = ROWS, checked: str | None = None) -> None:
    verdict = "unique" if rg.unique else "not unique"
    console.print(Text(f"The optimal allocation of {model_title(model)} (objective "
                       f"{format_number(rg.result.objective)}) is {verdict}: {rg.proof}."), soft_wrap=True)
    t = Table(title="Each variable over all optimal allocations", box=BOX, title_justify="left")
    for h in ("variable", "least", "greatest", "decided by"):
        t.add_column(h, justify="right" if h in ("least", "greatest") else "left")
    shown, left = _cap(rg.ranges.items(), rows)
    for name, v in shown:
        add_row(t, name, lo(v.minimum), hi(v.maximum), v.method)
    console.print(t)
    _more(console, left, "variables", "--json and -o hold every range")
    check_line(console, checked)
    caution(console)


def conflict_report(console: Console, model: Model, c, rows: int | None = ROWS, checked: str | None = None) -> None:
    n_items = len(c.constraints) + len(c.bounds)
    checked_by = f"(checked by {c.solves} exact solves)"
    crossed = c.result.crossed
    if crossed is not None:
        # one item whose own two sides cross: the proof is those two numbers, and
        # there are no Farkas multipliers to show
        kind, name = crossed
        what = (f"The bounds of the variable '{name}' cannot both hold: the lower one is above the upper one"
                if kind == "variable" else f"The constraint '{name}' cannot hold: its lower side is above its upper side")
        console.print(Text(f"{what}; dropping it makes the rest feasible {checked_by}:"), soft_wrap=True)
    elif n_items == 1:
        console.print(Text(f"This rule cannot hold by itself; dropping it makes the rest feasible {checked_by}:"),
                      soft_wrap=True)
    else:
        console.print(Text(f"These {n_items} rules cannot all hold together; dropping any one of them makes the "
                           f"rest feasible {checked_by}:"), soft_wrap=True)
    t = Table(box=BOX)
    t.add_column("rule")
    if crossed is None:
        t.add_column("multiplier", justify="right")
    t.add_column("formula")
    by_name = {x.name: x for x in model.constraints}
    shown, left = _cap([(True, k) for k in c.constraints] + [(False, k) for k in c.bounds], rows)
    for is_row, name in shown:
        if is_row:
            cells = [name, row_formula(by_name[name])]
            mult = c.result.farkas_rows.get(name, Fraction(0)) if crossed is None else None
        else:
            v = model.variable(name)
            cells = [f"bound of {name}", f"{lo(v.lower)} <= {name} <= {hi(v.upper)}"]
            mult = c.result.farkas_bounds.get(name, Fraction(0)) if crossed is None else None
        if mult is not None:
            cells.insert(1, format_number(mult))
        add_row(t, *cells)
    console.print(t)
    _more(console, left, "rules", "--json and -o hold every multiplier")
    check_line(console, checked)
    caution(console)
