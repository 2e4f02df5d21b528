"""The independent verifier: re-check a certificate from the model alone.

This module is meant to be read in one sitting by a reviewer.  It imports
nothing from the solver; its arithmetic is Python's ``fractions.Fraction``
(the solver works in gmpy2 ``mpq``).  It trusts only the model and the
exact number reader.  Every number in the certificate is recomputed.

Write the model as ``L <= A x <= U`` (rows), ``l <= x <= u`` (bounds),
objective ``c^T x + c0``; ``s = +1`` to minimise, ``-1`` to maximise.

optimal
    (1) ``x`` satisfies every bound and row, and the stated activities are
    ``A x``; (2) the stated objective is ``c^T x + c0``; (3) the stated
    reduced costs are ``d = c - A^T y``; (4) dual feasibility: in the
    minimising sense (``s*y``, ``s*d``) a positive multiplier rests on a
    finite lower side and a negative one on a finite upper side; (5) zero
    gap: ``c0 + sum_i y_i [side of row i] + sum_j d_j [side of x_j]`` equals
    the objective.  Weak duality makes (1)-(5) a proof that no feasible
    point does better.
infeasible
    with ``mu = -A^T y``: ``sum_i y_i [L_i if y_i > 0 else U_i] + sum_j mu_j
    [l_j if mu_j > 0 else u_j] > 0``, each side used finite.  Summing the
    rows and bounds with these weights gives ``0 >= positive``: no ``x``.
unbounded
    a feasible point ``x`` as in (1); a ray ``r`` with ``r_j > 0`` only where
    ``u_j = +inf``, ``r_j < 0`` only where ``l_j = -inf``, ``(A r)_i > 0``
    only where ``U_i = +inf`` and ``< 0`` only where ``L_i = -inf``; and
    ``s * c^T r < 0``.  Then ``x + t r`` is feasible for all ``t >= 0`` and
    the objective improves without limit.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from math import lcm

from .limits import DEFAULT_LIMITS
from .model import Model, Sense, stage_model
from .numbers import format_number as fmt, parse_number

#: numbers in certificates may be long (exact solutions); their own cap applies
_LIMITS = type(DEFAULT_LIMITS)(max_number_chars=DEFAULT_LIMITS.max_result_number_chars)

FORMAT = "exactlp-certificate/1"


@dataclass(frozen=True)
class Check:
    name: str
    ok: bool
    detail: str


@dataclass(frozen=True)
class Verification:
    valid: bool
    status: str | None
    checks: tuple[Check, ...]

    @property
    def failure(self) -> Check | None:
        return next((c for c in self.checks if not c.ok), None)


class _Invalid(Exception):
    pass


def _num(text, where: str) -> Fraction:
    if not isinstance(text, str):
        raise _Invalid(f"{where}: expected an exact number as a string, found {text!r}")
    try:
        return parse_number(text, _LIMITS)
    except Exception as exc:
        raise _Invalid(f"{where}: {getattr(exc, 'message', exc)}") from None


def _table(raw, key: str, names: list[str], dense: bool = True) -> dict[str, Fraction]:
    """Read name -> number: every name present when ``dense``, else absent names are zero."""
    if not isinstance(raw, dict):
        raise _Invalid(f"'{key}' is missing or not a mapping")
    extra = sorted(set(raw) - set(names))
    missing = [n for n in names if n not in raw] if dense else []
    if extra or missing:
        raise _Invalid(f"{key}: '{extra[0]}' is not in the model" if extra else f"{key}: '{missing[0]}' is missing")
    return {n: _num(v, f"{key}.{n}") for n, v in raw.items()}


def _over_common(vals: dict[str, Fraction]) -> tuple[dict[str, Fraction], int]:
    """``({name: v L}, L)``, ``L`` the least common denominator: sums of products of the
    whole ``v L`` meet only the model's short denominators, where long fractions pay a
    long gcd a term (PILOT's A x and A^T y: 6 s -> 0.9 s).  ``L = 1`` (values as they
    are) if ``L`` outgrows twice the longest denominator (many different primes)."""
    big, cap = 1, 64 + 2 * max((v.denominator.bit_length() for v in vals.values()), default=0)
    for v in vals.values():
        if (big := lcm(big, v.denominator)).bit_length() > cap:
            return vals, 1
    return {n: Fraction(v.numerator * (big // v.denominator)) for n, v in vals.items()}, big


def _inf(b: Fraction | None) -> str:
    return "inf" if b is None else fmt(b)


class _Checker:
    def __init__(self, model: Model, cert: dict) -> None:
        self.m, self.c = model, cert
        self.checks: list[Check] = []
        self.vars = [v.name for v in model.variables]
        self.rows = [c.name for c in model.constraints]

    def ok(self, name: str, detail: str) -> None:
        self.checks.append(Check(name, True, detail))

    def activity(self, terms, x: dict[str, Fraction]) -> Fraction:
        """``sum a x_n``; whole products summed as ints, with no gcd a term (D6CUBE's
        ``A x`` and ``A^T y``, whole after _over_common: 0.55 s -> 0.12 s)."""
        whole, rest = 0, Fraction(0)
        for n, a in terms:
            if (v := x.get(n)) and a.denominator == 1 == v.denominator:
                whole += a.numerator * v.numerator
            elif v:
                rest += a * v
        return rest + whole

    def rows_times(self, x: dict[str, Fraction]) -> dict[str, Fraction]:
        """``A x`` by row, summed over the values' common denominator."""
        xs, big = _over_common(x)
        return {c.name: self.activity(c.terms, xs) / big for c in self.m.constraints}

    def columns_times(self, y: dict[str, Fraction]) -> dict[str, Fraction]:
        """``A^T y`` by variable, the same way."""
        (ys, big), g, whole = _over_common(y), {n: Fraction(0) for n in self.vars}, dict.fromkeys(self.vars, 0)
        for c in self.m.constraints:
            if yc := ys.get(c.name):
                for n, a in c.terms:
                    if a.denominator == 1 == yc.denominator:
                        whole[n] += a.numerator * yc.numerator
                    else:
                        g[n] += yc * a
        return {n: (v + whole[n]) / big for n, v in g.items()}

    def primal(self) -> dict[str, Fraction]:
        x = _table(self.c.get("primal"), "primal", self.vars)
        for v in self.m.variables:
            if (v.lower is not None and x[v.name] < v.lower) or (v.upper is not None and x[v.name] > v.upper):
                raise _Invalid(f"bound of '{v.name}' violated: value {fmt(x[v.name])} "
                               f"outside [{_inf(v.lower) if v.lower is not None else '-inf'}, {_inf(v.upper)}]")
        act, ax = _table(self.c.get("activities"), "activities", self.rows), self.rows_times(x)
        for c in self.m.constraints:
            r = ax[c.name]
            if r != act[c.name]:
                raise _Invalid(f"activities.{c.name}: stated {fmt(act[c.name])}, but A x gives {fmt(r)}")
            if (c.lower is not None and r < c.lower) or (c.upper is not None and r > c.upper):
                lo = "-inf" if c.lower is None else fmt(c.lower)
                raise _Invalid(f"constraint '{c.name}' violated: activity {fmt(r)} outside [{lo}, {_inf(c.upper)}]")
        self.ok("primal feasibility", f"{len(self.vars)} bounds and {len(self.rows)} constraints hold exactly")
        return x

    def optimal(self) -> None:
        m, s = self.m, (1 if self.m.sense is Sense.MINIMIZE else -1)
        x = self.primal()
        obj = m.objective_value(x)
        stated = _num(self.c.get("objective"), "objective")
        if obj != stated:
            raise _Invalid(f"objective: stated {fmt(stated)}, but c^T x + c0 gives {fmt(obj)}")
        self.ok("objective", f"c^T x + c0 = {fmt(obj)}")
        y = _table(self.c.get("duals"), "duals", self.rows)
        d = _table(self.c.get("reduced_costs"), "reduced_costs", self.vars)
        cost = dict(m.objective)
        g = self.columns_times(y)
        for n in self.vars:
            if d[n] != cost.get(n, 0) - g[n]:
                raise _Invalid(f"reduced_costs.{n}: stated {fmt(d[n])}, but c - A^T y gives {fmt(cost.get(n, 0) - g[n])}")
        self.ok("reduced costs", "d = c - A^T y for every variable")
        # Minimising, y_i > 0 means row i rests on its lower side L_i and y_i < 0
        # on U_i; maximising swaps the sides.  Reduced costs follow the same rule.
        dual = m.objective_constant
        for what, items in (("dual of constraint", [(c.name, y[c.name], c.lower, c.upper) for c in m.constraints]),
                            ("reduced cost of", [(v.name, d[v.name], v.lower, v.upper) for v in m.variables])):
            for name, val, lo, hi in items:
                if not val:
                    continue
                rests_low = (val > 0) == (s > 0)
                side = lo if rests_low else hi
                if side is None:
                    raise _Invalid(f"{what} '{name}' is {fmt(val)}, which needs a finite "
                                   f"{'lower' if rests_low else 'upper'} side, and it has none")
                dual += val * side
        self.ok("dual feasibility", "every nonzero multiplier rests on a finite side of the right sign")
        stated_dual = _num(self.c.get("dual_objective"), "dual_objective")
        if dual != stated_dual:
            raise _Invalid(f"dual_objective: stated {fmt(stated_dual)}, but the duals give {fmt(dual)}")
        if dual != obj:
            raise _Invalid(f"duality gap: primal {fmt(obj)}, dual {fmt(dual)}, gap {fmt(obj - dual)}")
        self.ok("zero duality gap", f"primal objective = dual objective = {fmt(obj)}")

    def crossed(self, cb) -> None:
        if not isinstance(cb, dict) or cb.get("kind") not in ("variable", "constraint"):
            raise _Invalid("crossed_bounds: needs kind (variable or constraint) and name")
        items = self.m.variables if cb["kind"] == "variable" else self.m.constraints
        item = next((i for i in items if i.name == cb.get("name")), None)
        if item is None:
            raise _Invalid(f"crossed_bounds: the model has no {cb['kind']} {cb.get('name')!r}")
        if item.lower is None or item.upper is None or not item.lower > item.upper:
            raise _Invalid(f"crossed_bounds: the bounds of {cb['kind']} '{item.name}' do not cross")
        if (_num(cb.get("lower"), "crossed_bounds.lower"), _num(cb.get("upper"), "crossed_bounds.upper")) != (item.lower, item.upper):
            raise _Invalid("crossed_bounds: the stated bounds differ from the model's")
        self.ok("crossed bounds", f"{cb['kind']} '{item.name}' needs {fmt(item.lower)} <= ... <= {fmt(item.upper)}: empty")

    def infeasible(self) -> None:
        if "crossed_bounds" in self.c:
            return self.crossed(self.c["crossed_bounds"])
        fk = self.c.get("farkas")
        if not isinstance(fk, dict):
            raise _Invalid("'farkas' is missing or not a mapping")
        y = _table(fk.get("multipliers"), "farkas.multipliers", self.rows, False)
        mu = _table(fk.get("bounds"), "farkas.bounds", self.vars, False)
        need = {n: -v for n, v in self.columns_times(y).items()}
        for n in self.vars:
            if mu.get(n, 0) != need[n]:
                raise _Invalid(f"farkas.bounds.{n}: stated {fmt(mu.get(n, Fraction(0)))}, but -A^T y gives {fmt(need[n])}")
        self.ok("combination", "the weighted rows and bounds cancel every variable (y^T A + mu = 0)")
        rhs = Fraction(0)
        for kind, items in (("constraint", [(c.name, y.get(c.name, 0), c.lower, c.upper) for c in self.m.constraints]),
                            ("bound of", [(v.name, need[v.name], v.lower, v.upper) for v in self.m.variables])):
            for name, val, lo, hi in items:
                if val:
                    side = lo if val > 0 else hi
                    if side is None:
                        raise _Invalid(f"farkas uses the infinite {'lower' if val > 0 else 'upper'} side of {kind} '{name}'")
                    rhs += val * side
        if rhs <= 0:
            raise _Invalid(f"farkas: the combination gives 0 >= {fmt(rhs)}, which is no contradiction")
        stated = _num(fk.get("rhs"), "farkas.rhs")
        if stated != rhs:
            raise _Invalid(f"farkas.rhs: stated {fmt(stated)}, but the multipliers give {fmt(rhs)}")
        for key, names, vals in (("constraints", self.rows, y), ("bound_variables", self.vars, need)):
            listed = fk.get(key)
            support = [n for n in names if vals.get(n)]
            if listed != support:
                raise _Invalid(f"farkas.{key}: stated {listed!r}, but the nonzero multipliers are {support!r}")
        self.ok("contradiction", f"the combination reads 0 >= {fmt(rhs)}")

    def unbounded(self) -> None:
        m, s = self.m, (1 if self.m.sense is Sense.MINIMIZE else -1)
        self.primal()
        r = _table(self.c.get("ray"), "ray", self.vars, False)
        for v in m.variables:
            rv = r.get(v.name, 0)
            if (rv > 0 and v.upper is not None) or (rv < 0 and v.lower is not None):
                raise _Invalid(f"ray.{v.name} = {fmt(rv)} runs into a finite bound of '{v.name}'")
        act, ar = _table(self.c.get("ray_activities"), "ray_activities", self.rows), self.rows_times(r)
        for c in m.constraints:
            a = ar[c.name]
            if a != act[c.name]:
                raise _Invalid(f"ray_activities.{c.name}: stated {fmt(act[c.name])}, but A r gives {fmt(a)}")
            if (a > 0 and c.upper is not None) or (a < 0 and c.lower is not None):
                raise _Invalid(f"the ray leaves constraint '{c.name}' (A r = {fmt(a)} runs into a finite side)")
        self.ok("ray stays feasible", "no bound or constraint limits the ray")
        cr = self.activity(m.objective, r)
        stated = _num(self.c.get("ray_objective"), "ray_objective")
        if stated != cr:
            raise _Invalid(f"ray_objective: stated {fmt(stated)}, but c^T r gives {fmt(cr)}")
        if s * cr >= 0:
            raise _Invalid(f"the ray does not improve the objective (c^T r = {fmt(cr)})")
        self.ok("ray improves", f"c^T r = {fmt(cr)}: the objective improves without limit")


def _stages(model: Model, cert: dict, ch: _Checker) -> Verification:
    """Priority tiers: each stage's certificate, on the stage model rebuilt with the
    earlier stages' certified optima held exactly."""
    given = cert.get("stages")
    if not isinstance(given, list) or not given or len(given) > len(model.stages):
        raise _Invalid("stages: expected one certificate per tier, in order")
    held: list[Fraction] = []
    for k, entry in enumerate(given):
        name = model.stages[k].name
        inner = (entry or {}).get("certificate") if isinstance(entry, dict) else None
        if not isinstance(entry, dict) or entry.get("name") != name or not isinstance(inner, dict):
            raise _Invalid(f"stages.{k + 1}: expected the certificate of tier '{name}'")
        v = verify(stage_model(model, k, held), inner)
        if not v.valid:
            raise _Invalid(f"stage '{name}': {v.failure.detail}")
        ch.ok(f"stage '{name}'", f"{v.status}" + (f", objective {inner.get('objective')}" if v.status == "optimal" else ""))
        if v.status != "optimal" and k < len(given) - 1:
            raise _Invalid(f"stage '{name}' is {v.status}, so no later stage can follow it")
        if v.status == "optimal":
            held.append(_num(inner.get("objective"), f"stages.{k + 1}.objective"))
    if len(given) < len(model.stages) and v.status == "optimal":
        raise _Invalid(f"stages: tier '{model.stages[len(given)].name}' is missing")
    last = given[-1]["certificate"]
    if cert.get("status") != last.get("status") or cert.get("objective") != last.get("objective"):
        raise _Invalid("status and objective must be those of the last stage")
    return Verification(True, cert.get("status"), tuple(ch.checks))


def verify(model: Model, certificate) -> Verification:
    """Check ``certificate`` (a mapping, or a path to a certificate file)."""
    if not isinstance(certificate, dict):
        from .certificate import read_certificate

        certificate = read_certificate(certificate)
    ch = _Checker(model, certificate)
    status = certificate.get("status")
    try:
        if certificate.get("format") != FORMAT:
            raise _Invalid(f"format: expected '{FORMAT}', found {certificate.get('format')!r}")
        fp = (certificate.get("model") or {}).get("fingerprint") if isinstance(certificate.get("model"), dict) else None
        if fp != model.fingerprint:
            raise _Invalid(f"fingerprint: the certificate is for {fp}, the model given is {model.fingerprint}")
        ch.ok("model fingerprint", model.fingerprint)
        if model.stages:
            return _stages(model, certificate, ch)
        if certificate.get("sense") != model.sense.value:
            raise _Invalid(f"sense: the certificate says {certificate.get('sense')!r}, the model {model.sense.value!r}")
        check = {"optimal": ch.optimal, "infeasible": ch.infeasible, "unbounded": ch.unbounded}
        if not isinstance(status, str) or status not in check:
            raise _Invalid(f"status: {status!r} is not a provable outcome (optimal, infeasible, unbounded)")
        check[status]()
    except _Invalid as exc:
        ch.checks.append(Check("certificate", False, str(exc)))
        return Verification(False, status if isinstance(status, str) else None, tuple(ch.checks))
    return Verification(True, status, tuple(ch.checks))
