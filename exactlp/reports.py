"""Reports of post-optimal work, in which every claim cites the certificate that proves it.

Written with ``-o`` by ``exactlp conflict`` and ``exactlp ranges``; checked by
``exactlp verify MODEL REPORT`` (:mod:`exactlp.report_check`).  Plain sorted
YAML (or JSON); exact numbers are strings.
"""

from __future__ import annotations

from fractions import Fraction

from . import __version__
from .certificate import NOTICE, build_certificate
from .model import Model
from .numbers import format_number

REPORT_FORMAT = "exactlp-report/1"


def _head(model: Model, kind: str) -> dict:
    return {"format": REPORT_FORMAT, "report": kind, "tool": f"exactlp {__version__}",
            "model": {"name": model.name, "fingerprint": model.fingerprint}, "notice": NOTICE}


def _point(p: dict) -> dict:
    return {k: format_number(v) for k, v in p.items()}


def conflict_report(model: Model, c) -> dict:
    doc = _head(model, "conflict")
    doc["constraints"] = list(c.constraints)
    doc["bounds"] = list(c.bounds)
    # the subset (only these constraints, only these variables' bounds) is infeasible:
    doc["certificate"] = build_certificate(c.model, c.result)
    # and dropping any one member leaves a feasible set: a point for each
    doc["minimality"] = [
        {"drop": {"kind": kind, "name": name}, "point": _point(c.witnesses[(kind, name)])}
        for kind, names in (("constraint", c.constraints), ("bound", c.bounds)) for name in names
    ]
    return doc


def ranges_report(model: Model, rg) -> dict:
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
            (pmin, rmin), (pmax, rmax) = rg.endpoints[name]
            entry["certificates"] = {"min": build_certificate(pmin, rmin), "max": build_certificate(pmax, rmax)}
        out[name] = entry
    doc["ranges"] = out
    return doc
