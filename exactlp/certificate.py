"""Certificates: the proof of a solve's outcome, as a plain file.

A certificate is a mapping with sorted keys; every exact number is a
string (``"3"``, ``"-7/4"``).  Keys (a contract: new keys may be added,
never renamed)::

    format:       exactlp-certificate/1
    tool:         exactlp 0.1.0
    model:        {name: ..., fingerprint: sha256:...}
    sense:        maximize | minimize
    status:       optimal | infeasible | unbounded
    notice:       the caution that goes with every report (not part of the proof)
    objective:    the exact optimum, model sense, constant included  (optimal)
    primal:       variable -> value             (optimal; unbounded: a feasible point)
    activities:   constraint -> a_i x at primal (optimal, unbounded)
    duals:        constraint -> multiplier y_i  (optimal)
    reduced_costs: variable -> c_j - a_j^T y    (optimal)
    dual_objective: the dual's value, equal to objective (optimal)
    crossed_bounds: {kind: variable | constraint, name, lower, upper}
                  (infeasible because one item's own lower bound exceeds its upper)
    farkas:       {multipliers: constraint -> y_i, bounds: variable -> mu_j,
                   constraints: [names], bound_variables: [names], rhs: value}  (infeasible)
    ray:          variable -> direction; ray_activities: constraint -> a_i d;
                  ray_objective: c^T d                                  (unbounded)

Each number is restated redundantly on purpose (activities, reduced costs,
the dual objective): the verifier recomputes every one from the model, so
a change to any single number of a certificate is caught.
"""

from __future__ import annotations

import json
import os
from fractions import Fraction
from typing import Any

from . import __version__
from .errors import CertificateError
from .io.yaml_model import key, quote
from .io.yamltree import Mapping as YMap, Node, Scalar, Sequence, parse_yaml, read_text
from .limits import DEFAULT_LIMITS, Limits
from .model import Model
from .numbers import format_number

CERTIFICATE_FORMAT = "exactlp-certificate/1"

#: the caution every report carries (README, "Cautions")
NOTICE = (
    "This proves the stated outcome of the model as written (identified by its fingerprint); "
    "it does not show that the model states the agreed rules or that its data are right. "
    "Where it informs legal, regulatory or contractual decisions, local rules and qualified "
    "review take precedence."
)


def _n(v: Fraction) -> str:
    return format_number(v)


def build_certificate(model: Model, result) -> dict[str, Any]:
    """The certificate of a proven result (optimal, infeasible or unbounded)."""
    from .solver.result import Status

    if not result.status.is_proven:
        raise ValueError(f"a {result.status.value} result proves nothing and has no certificate")
    cert: dict[str, Any] = {
        "format": CERTIFICATE_FORMAT,
        "tool": f"exactlp {__version__}",
        "model": {"name": model.name, "fingerprint": model.fingerprint},
        "sense": model.sense.value,
        "status": result.status.value,
        "notice": NOTICE,
    }
    if model.auxiliary:
        # the certificate is about the expanded program: abs()/max()/min() reformulated
        cert["program"] = {"expanded": True, "auxiliary": {a.name: a.text for a in model.auxiliary}}
    if result.status is Status.OPTIMAL:
        cert["objective"] = _n(result.objective)
        cert["primal"] = {k: _n(v) for k, v in result.primal.items()}
        cert["activities"] = {k: _n(v) for k, v in result.activities.items()}
        cert["duals"] = {k: _n(v) for k, v in result.duals.items()}
        cert["reduced_costs"] = {k: _n(v) for k, v in result.reduced_costs.items()}
        cert["dual_objective"] = _n(result.objective)
    elif result.status is Status.INFEASIBLE and result.crossed is not None:
        kind, name = result.crossed
        item = model.variable(name) if kind == "variable" else next(c for c in model.constraints if c.name == name)
        cert["crossed_bounds"] = {"kind": kind, "name": name, "lower": _n(item.lower), "upper": _n(item.upper)}
    elif result.status is Status.INFEASIBLE:
        rows = dict(result.farkas_rows)
        bounds = dict(result.farkas_bounds)
        rhs = Fraction(0)
        for c in model.constraints:
            y = rows.get(c.name, 0)
            if y:
                rhs += y * (c.lower if y > 0 else c.upper)
        for v in model.variables:
            mu = bounds.get(v.name, 0)
            if mu:
                rhs += mu * (v.lower if mu > 0 else v.upper)
        cert["farkas"] = {
            "multipliers": {k: _n(v) for k, v in rows.items()},
            "bounds": {k: _n(v) for k, v in bounds.items()},
            "constraints": [c.name for c in model.constraints if c.name in rows],
            "bound_variables": [v.name for v in model.variables if v.name in bounds],
            "rhs": _n(rhs),
        }
    else:
        cert["primal"] = {k: _n(v) for k, v in result.primal.items()}
        cert["activities"] = {k: _n(v) for k, v in result.activities.items()}
        ray = dict(result.ray)
        cert["ray"] = {k: _n(v) for k, v in ray.items()}
        cert["ray_activities"] = {
            c.name: _n(sum((a * ray.get(n, 0) for n, a in c.terms), Fraction(0)))
            for c in model.constraints
        }
        cert["ray_objective"] = _n(sum((a * ray.get(n, 0) for n, a in model.objective), Fraction(0)))
    return cert


# ----------------------------------------------------------------------
# writing: plain, sorted, deterministic
# ----------------------------------------------------------------------

def dump_json(doc: Any) -> str:
    return json.dumps(doc, sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def dump_yaml(doc: Any) -> str:
    """A small YAML emitter for str/None/bool/int/list/dict, keys sorted."""
    out: list[str] = []
    _emit(doc, 0, out)
    return "\n".join(out) + "\n"


#: lines held by :func:`dump_yaml_to` before they are written
SINK_LINES = 65536


class _LineSink:
    """A list-like ``append`` that writes its lines to ``fh`` every
    SINK_LINES lines, each followed by a newline."""

    __slots__ = ("fh", "lines", "wrote")

    def __init__(self, fh) -> None:
        self.fh, self.lines, self.wrote = fh, [], False

    def append(self, line: str) -> None:
        self.lines.append(line)
        if len(self.lines) >= SINK_LINES:
            self.flush()

    def flush(self) -> None:
        if self.lines:
            self.fh.write("\n".join(self.lines) + "\n")
            self.lines, self.wrote = [], True


def dump_yaml_to(doc: Any, fh) -> None:
    """:func:`dump_yaml`'s text, written to ``fh`` as it is made: the same
    characters, without holding every line and then the whole text at once
    (a 1,000-member conflict report of 134 MB held both: half its peak)."""
    sink = _LineSink(fh)
    _emit(doc, 0, sink)
    sink.flush()
    if not sink.wrote:  # (no line at all: dump_yaml's text is one newline)
        fh.write("\n")


def _scalar(v) -> str:
    if v is None:
        return "null"
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    return quote(str(v))


def _emit(v, indent: int, out: list[str]) -> None:
    # a module function, not a closure over ``out``: a closure that calls itself
    # holds itself in a cell, a reference cycle that only the cyclic collector frees
    pad = "  " * indent
    if isinstance(v, dict):
        for k in sorted(v):
            item = v[k]
            if isinstance(item, dict) and item:
                out.append(f"{pad}{key(str(k))}:")
                _emit(item, indent + 1, out)
            elif isinstance(item, list) and item:
                out.append(f"{pad}{key(str(k))}:")
                _emit(item, indent + 1, out)
            elif isinstance(item, dict):
                out.append(f"{pad}{key(str(k))}: {{}}")
            elif isinstance(item, list):
                out.append(f"{pad}{key(str(k))}: []")
            else:
                out.append(f"{pad}{key(str(k))}: {_scalar(item)}")
    elif isinstance(v, list):
        for item in v:
            if isinstance(item, (dict, list)) and item:
                out.append(f"{pad}-")
                _emit(item, indent + 1, out)
            else:
                out.append(f"{pad}- {_scalar(item) if not isinstance(item, (dict, list)) else ('{}' if isinstance(item, dict) else '[]')}")
    else:
        out.append(pad + _scalar(v))


def dump_certificate(cert: dict, fmt: str = "yaml") -> str:
    return dump_json(cert) if fmt == "json" else dump_yaml(cert)


# ----------------------------------------------------------------------
# reading: strict, every number stays text
# ----------------------------------------------------------------------

def _plain(node: Node) -> Any:
    """Turn a strict YAML tree into str/list/dict (iteratively: no recursion limit)."""
    if isinstance(node, Scalar):
        return None if node.is_null else node.text
    root: Any = {} if isinstance(node, YMap) else []
    stack = [(node, root)]
    while stack:
        src, dst = stack.pop()
        children = src.items if isinstance(src, Sequence) else [v for _, v in src.items]
        keys = [None] * len(children) if isinstance(src, Sequence) else [k.text for k, _ in src.items]
        for k, child in zip(keys, children):
            if isinstance(child, Scalar):
                val: Any = None if child.is_null else child.text
            else:
                val = {} if isinstance(child, YMap) else []
                stack.append((child, val))
            if isinstance(dst, list):
                dst.append(val)
            else:
                dst[k] = val
    return root


def parse_certificate_text(text: str, path: str, limits: Limits = DEFAULT_LIMITS) -> dict:
    stripped = text.lstrip()
    if stripped.startswith("{"):
        def no_float(t):
            raise ValueError(f"the JSON float {t} is not exact: certificates write numbers as strings")

        try:
            doc = json.loads(text, parse_float=no_float, parse_constant=no_float)
        except ValueError as exc:
            raise CertificateError(f"not a JSON certificate: {exc}", file=path) from None
        except RecursionError:
            raise CertificateError("nesting is too deep", file=path) from None
    else:
        doc = _plain(parse_yaml(text, path, limits))
    if not isinstance(doc, dict):
        raise CertificateError("a certificate must be a mapping", file=path)
    return doc


def read_certificate(path: str | os.PathLike, limits: Limits = DEFAULT_LIMITS) -> dict:
    p = os.fspath(path)
    try:
        return parse_certificate_text(read_text(p, limits), p, limits)
    except RecursionError:
        raise CertificateError("nesting is too deep", file=p) from None
