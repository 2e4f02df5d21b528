"""Reports of post-optimal work, in which every claim cites the certificate that proves it.

Written with ``-o`` by ``exactlp conflict`` and ``exactlp ranges``; checked by
``exactlp verify MODEL REPORT`` (:mod:`exactlp.report_check`).  Plain sorted
YAML (or JSON); exact numbers are strings.
"""

from __future__ import annotations

from . import __version__
from .certificate import NOTICE, build_certificate
from .model import Model
from .numbers import format_number

#: 2: a sensitivity report holds each range's direction, and a ranges report each
#: solved end's duals and moved entries, not a whole certificate per end (conflict
#: reports are as in 1, which the check still reads)
REPORT_FORMAT = "exactlp-report/3"


def _head(model: Model, kind: str) -> dict:
    return {"format": REPORT_FORMAT, "report": kind, "tool": f"exactlp {__version__}",
            "model": {"name": model.name, "fingerprint": model.fingerprint}, "notice": NOTICE}


def _point(p: dict, memo: dict | None = None) -> dict:
    """The values as text; with ``memo`` (value -> its text, shared by the
    caller's points), each value is written once and its text shared: a
    conflict's points repeat the same few values (0, the bounds) in every
    member's point, and a 1,000-member one made 6.4 million strings."""
    if memo is None:
        return {k: format_number(v) for k, v in p.items()}
    out = {}
    for k, v in p.items():
        text = memo.get(v)
        if text is None:
            text = memo[v] = format_number(v)
        out[k] = text
    return out


def conflict_report_size(c) -> tuple[int, int]:
    """``(numbers, digits)`` of a conflict report of ``c``: the subset's
    infeasibility certificate (its Farkas multipliers and their right-hand
    side, or a crossed item's two sides) and a point per member, which holds
    every variable of the model, so the report grows with the members times
    the variables."""
    r = c.result
    if r.crossed is not None:
        kind, name = r.crossed
        item = (c.model.variable(name) if kind == "variable"
                else next(x for x in c.model.constraints if x.name == name))
        vals = [v for v in (item.lower, item.upper) if v is not None]
    else:
        vals = [*r.farkas_rows.values(), *r.farkas_bounds.values()]
    size = len(vals) + (0 if r.crossed is not None else 1)
    for point in c.witnesses.values():
        size += len(point)
        vals += point.values()
    return size, _digits(vals)


def conflict_report(model: Model, c, limits=None) -> dict:
    """The conflict's proofs (see :func:`conflict_report_size` for its size,
    refused past ``limits`` as the other reports are)."""
    check_report_size(model, "conflict", conflict_report_size(c), limits)
    doc = _head(model, "conflict")
    doc["constraints"] = list(c.constraints)
    doc["bounds"] = list(c.bounds)
    # the subset (only these constraints, only these variables' bounds) is infeasible:
    doc["certificate"] = build_certificate(c.model, c.result)
    # and dropping any one member leaves a feasible set: a point for each
    memo: dict = {}
    doc["minimality"] = [
        {"drop": {"kind": kind, "name": name}, "point": _point(c.witnesses[(kind, name)], memo)}
        for kind, names in (("constraint", c.constraints), ("bound", c.bounds)) for name in names
    ]
    return doc


def ranges_report(model: Model, rg, limits=None) -> dict:
    check_report_size(model, "ranges", ranges_report_size(rg), limits)
    doc = _head(model, "ranges")
    doc["objective"] = format_number(rg.result.objective)
    doc["certificate"] = build_certificate(model, rg.result)
    row = rg.fixed_model.constraints[-1]
    doc["fixed_objective"] = {"name": row.name, "value": format_number(row.lower)}
    doc["unique"] = rg.unique
    doc["proof"] = rg.proof
    out = {}
    for name, v in rg.ranges.items():
        entry = {"min": None if v.minimum is None else format_number(v.minimum),
                 "max": None if v.maximum is None else format_number(v.maximum), "method": v.method}
        if v.method == "solved":
            (_, rmin), (_, rmax) = rg.endpoints[name]
            entry["proofs"] = {"min": _probe_proof(rmin, rg.result, row.name),
                               "max": _probe_proof(rmax, rg.result, row.name)}
        out[name] = entry
    doc["ranges"] = out
    return doc


def _face_proof(result, optimum, held: str) -> tuple[dict, object] | None:
    """An end lifted from the optimal face (``analysis._lift_face_end``) as the
    face's own duals ``u`` (nonzero) and the held row's ``w``: its duals are
    ``u - w y*`` with ``y*`` the optimum's; None for an end solved otherwise."""
    from .solver.result import offsets_from

    u = offsets_from(result.duals, optimum.duals)
    if u is None or held not in u:
        return None
    w = u.pop(held)
    return {k: v for k, v in u.items() if v}, w


def _probe_proof(result, optimum, held: str) -> dict:
    """One end of a solved range, as the report check reads it: at an optimum, the
    allocation's entries that differ from the model's optimum (``moved``) and its
    duals: for an end lifted from the optimal face, the face's nonzero duals
    ``u`` (``face_duals``) and the held objective row's ``w`` (``held_dual``),
    the duals being ``u - w y*``; otherwise the nonzero duals, the held row's
    among them.  At no end, the ray.  The check rebuilds the rest (activities,
    reduced costs, the gap) from the model, so an end holds about as many
    numbers as the duals it needs, not a certificate."""
    from .solver.result import entries_differing, nonzero_entries

    if result.status.value == "optimal":
        moved = _point(entries_differing(result.primal, optimum.primal))
        face = _face_proof(result, optimum, held)
        if face is not None:
            return {"moved": moved, "face_duals": _point(face[0]), "held_dual": format_number(face[1])}
        return {"moved": moved, "duals": _point(nonzero_entries(result.duals))}
    return {"ray": _point(nonzero_entries(result.ray))}


# ----------------------------------------------------------------------
# sensitivity
# ----------------------------------------------------------------------

def _digits(values) -> int:
    """About how many characters these exact numbers take written out, from
    their bit lengths (a bit is log10(2) = 0.30103 digits), before any is."""
    return sum(((v.numerator.bit_length() + v.denominator.bit_length()) * 30103) // 100000 + 2 for v in values)


def _result_numbers(r) -> list:
    return [*r.primal.values(), *r.activities.values(), *r.duals.values(), *r.reduced_costs.values()]


def sensitivity_report_size(sens) -> tuple[int, int]:
    """``(numbers, digits)`` of a sensitivity report of ``sens``: the optimal
    certificate (``2 (n + m) + 2`` numbers), the objective, and for each range
    its ends, its direction's entries, and for a limit its value and dual."""
    vals = _result_numbers(sens.result)
    size = len(vals) + 3
    for name, iv in sens.objective_ranges.items():
        direction = sens.dual_directions.get(name) or {}
        size += 2 + len(direction)
        vals += [v for v in (iv.lower, iv.upper) if v is not None] + list(direction.values())
    for rr in sens.rhs_ranges.values():
        size += 4 + len(rr.direction or ())
        vals += [v for v in (rr.interval.lower, rr.interval.upper) if v is not None] + list((rr.direction or {}).values())
    return size, _digits(vals)


def ranges_report_size(rg) -> tuple[int, int]:
    """``(numbers, digits)`` of a ranges report of ``rg``: the optimal certificate
    (``2 (n + m) + 2`` numbers), the objective and its held value, each range's
    two ends, and each solved end's moved entries and nonzero duals, or ray."""
    from .solver.result import entries_differing, nonzero_entries

    vals = _result_numbers(rg.result)
    x = rg.result.primal
    for ends in rg.endpoints.values():
        for _, r in ends:
            if r.status.value == "optimal":
                face = _face_proof(r, rg.result, rg.fixed_model.constraints[-1].name)
                vals += [*entries_differing(r.primal, x).values(),
                         *(nonzero_entries(r.duals).values() if face is None else [*face[0].values(), face[1]])]
            else:
                vals += nonzero_entries(r.ray).values()
    ends = [v for rg_ in rg.ranges.values() for v in (rg_.minimum, rg_.maximum) if v is not None]
    return len(vals) + 4 + 2 * len(rg.ranges), _digits(vals + ends) + 3 * _digits([rg.result.objective])


def check_report_size(model: Model, kind: str, size: tuple[int, int], limits=None) -> None:
    """Refuse a report past ``limits.max_report_numbers`` or ``max_report_digits``."""
    from .errors import LimitError
    from .limits import DEFAULT_LIMITS

    lim = limits or DEFAULT_LIMITS
    numbers, digits = size
    if numbers > lim.max_report_numbers or digits > lim.max_report_digits:
        n, m = len(model.variables), len(model.constraints)
        raise LimitError(f"a {kind} report of this model ({n} variables, {m} constraints) would hold {numbers:,} "
                         f"exact numbers of about {digits:,} digits in all; the limits are "
                         f"{lim.max_report_numbers:,} numbers and {lim.max_report_digits:,} digits "
                         f"(without --output, the screen and --json print the claims unchecked)",
                         file=model.source, field="--output")


def sensitivity_report(model: Model, sens, limits=None) -> dict:
    """The optimal certificate and every range with the direction that proves it.

    An objective range of ``x_j`` carries ``dual_direction``, ``w = d y / d c_j``:
    with ``c_j`` moved by ``t`` the same allocation is optimal with the duals
    ``y + t w`` (at an infinite end: for ``+-x_j`` alone, with the duals ``+-w``).
    A limit's range carries ``allocation_direction``, ``v = d x / d b``: with
    the limit moved by ``t`` the allocation ``x + t v`` is optimal with the same
    duals (null: the allocation stays; at an infinite end the row is then
    relaxed, else the allocation follows the limit along ``v`` without end).
    The report check (:mod:`.report_check`) rebuilds each end's proof from these
    and the model; a direction is as long as the entries it moves, so the report
    grows with the model, where a whole certificate per end grew with its square.
    """
    check_report_size(model, "sensitivity", sensitivity_report_size(sens), limits)
    doc = _head(model, "sensitivity")
    r = sens.result
    doc["objective"] = format_number(r.objective)
    doc["certificate"] = build_certificate(model, r)
    obj = {}
    for name, iv in sens.objective_ranges.items():
        obj[name] = {"lower": None if iv.lower is None else format_number(iv.lower),
                     "upper": None if iv.upper is None else format_number(iv.upper),
                     "dual_direction": _point(sens.dual_directions.get(name) or {})}
    doc["objective_ranges"] = obj
    rhs = {}
    for name, rr in sens.rhs_ranges.items():
        iv = rr.interval
        rhs[name] = {"bound": rr.bound, "value": format_number(rr.value), "dual": format_number(rr.dual),
                     "lower": None if iv.lower is None else format_number(iv.lower),
                     "upper": None if iv.upper is None else format_number(iv.upper),
                     "allocation_direction": None if rr.direction is None else _point(rr.direction)}
    doc["rhs_ranges"] = rhs
    return doc
