"""Reading and writing models in the exactlp YAML format.

The format (keys are a contract; new keys may be added, never renamed)::

    name: Lower valley drought allocation       # optional text (also description:)
    maximize: 3 north + 2 south - 1000           # exactly one of maximize:/minimize:
    variables:
      north: {lower: 0, upper: 120, unit: ML}    # lower defaults to 0, upper to +inf
      transfer: free                             # (-inf, +inf)
      reserve: {fixed: 15}
    constraints:
      canal: north + south <= 150
      window: 10 <= north + transfer <= 90
      pumps: {terms: {north: 2, "odd name-1": 1/3}, upper: 100}

Validation is its own step: every problem is reported as one
:class:`~exactlp.errors.InputError` naming file, line, column and field.
"""

from __future__ import annotations

import os
import re
from fractions import Fraction

from ..errors import ExpressionError, InputError, LimitError, ModelError, NumberError, did_you_mean
from ..expr import NAME_RE, Linear, parse_comparison, parse_expression
from ..limits import DEFAULT_LIMITS, Limits
from ..model import Constraint, Model, Sense, Variable
from ..numbers import format_number, parse_bound, parse_number
from ..reform import WHY, Expander, convex
from .yamltree import Mapping, Node, Scalar, Sequence, kind_name, load_tree, parse_yaml

_ZERO = Fraction(0)

TOP_KEYS = ("name", "description", "maximize", "minimize", "objectives", "variables", "constraints")
STAGE_KEYS = ("name", "maximize", "minimize")
VARIABLE_KEYS = ("lower", "upper", "fixed", "unit", "note")
STRUCTURED_KEYS = ("terms", "lower", "upper", "equals", "note")
OBJECTIVE_KEYS = ("terms", "constant")
#: top-level words a newcomer writes for something the format says otherwise; the
#: closest-spelling suggestion would mislead here ('objective' is nearest to
#: 'objectives', which is for priority tiers, and 'max' is near nothing)
_OBJECTIVE_HINT = "write the objective as 'minimize: <formula>' or 'maximize: <formula>'"
TOP_HINTS = {
    "objective": _OBJECTIVE_HINT + "; 'objectives' is for priority tiers",
    "obj": _OBJECTIVE_HINT,
    "goal": _OBJECTIVE_HINT,
    "min": "did you mean 'minimize'?",
    "max": "did you mean 'maximize'?",
    "bounds": "bounds go with each variable, as in 'x: {lower: 0, upper: 10}'",
    "subject_to": "did you mean 'constraints'?",
}
#: the same for the bounds of a variable or of a structured constraint
BOUND_HINTS = {
    **{w: "did you mean 'lower'?" for w in ("min", "minimum", "lb", "lo")},
    **{w: "did you mean 'upper'?" for w in ("max", "maximum", "ub", "up")},
}
STRUCTURED_HINTS = {**BOUND_HINTS, "rhs": "give the limit as 'lower', 'upper' or 'equals'"}


class _Reader:
    def __init__(self, path: str, limits: Limits) -> None:
        self.path = path
        self.limits = limits

    # -- helpers -------------------------------------------------------
    def fail(self, msg: str, node: Node | None, field: str, exc=ModelError) -> InputError:
        if node is None:
            return exc(msg, file=self.path, field=field)
        return exc(msg, file=self.path, line=node.line, column=node.column, field=field)

    def relocate(self, err: InputError, node: Scalar, field: str) -> InputError:
        """Place an error raised inside a scalar's text at its file column."""
        offset = getattr(err, "offset", 0)
        quote = 1 if node.style in ("'", '"') else 0
        line, column = node.line, node.column + quote + offset
        if node.style in ("|", ">"):  # block scalars: point at the value's start
            column = node.column
        return type(err)(err.message, file=self.path, line=line, column=column, field=field)

    def check_keys(self, node: Mapping, allowed: tuple[str, ...], field: str,
                   hints: dict[str, str] | None = None) -> None:
        for k, _ in node.items:
            if k.text not in allowed:
                where = f"{field}.{k.text}" if field else k.text
                hint = (hints or {}).get(k.text.lower())
                more = f" ({hint})" if hint else did_you_mean(k.text, allowed)
                raise self.fail(f"unknown key '{k.text}'{more}", k, where)

    def text(self, node: Node, field: str) -> str:
        if not isinstance(node, Scalar):
            raise self.fail(f"expected text, found {kind_name(node)}", node, field)
        return node.text

    def number(self, node: Node, field: str) -> Fraction:
        if not isinstance(node, Scalar):
            raise self.fail(f"expected a number, found {kind_name(node)}", node, field)
        try:
            return parse_number(node.text, self.limits)
        except NumberError as e:
            raise self.fail(e.message, node, field, NumberError) from None

    def bound(self, node: Node, field: str, side: str) -> Fraction | None:
        if not isinstance(node, Scalar):
            raise self.fail(f"expected a number or inf, found {kind_name(node)}", node, field)
        try:
            value = parse_bound(node.text, self.limits)
        except NumberError as e:
            raise self.fail(e.message, node, field, NumberError) from None
        if type(value) is not str:  # (a number: the usual case, tested first)
            return value  # type: ignore[return-value]
        if value == "+inf":
            if side == "lower":
                raise self.fail("a lower bound cannot be +inf", node, field)
            return None
        if value == "-inf":
            if side == "upper":
                raise self.fail("an upper bound cannot be -inf", node, field)
            return None
        return value  # type: ignore[return-value]

    # -- the document --------------------------------------------------
    def read(self, root: Node) -> Model:
        if not isinstance(root, Mapping):
            raise self.fail(
                f"a model file must be a mapping of keys (name, maximize/minimize, variables, "
                f"constraints), found {kind_name(root)}",
                root,
                "(document)",
            )
        self.check_keys(root, TOP_KEYS, "", TOP_HINTS)
        name = description = None
        if (n := root.get("name")) is not None and not (isinstance(n, Scalar) and n.is_null):
            name = self.text(n, "name")
        if (d := root.get("description")) is not None and not (isinstance(d, Scalar) and d.is_null):
            description = self.text(d, "description")

        senses = [k for k in ("maximize", "minimize") if root.get(k) is not None]
        staged = root.get("objectives")
        if staged is not None and senses:
            raise self.fail("give either objectives: (priority tiers) or maximize:/minimize:, not both",
                            root.key_node("objectives"), "objectives")
        if len(senses) == 2:
            raise self.fail(
                "give exactly one of maximize: or minimize:, not both",
                root.key_node("minimize"),
                "minimize",
            )
        if not senses and staged is None:
            raise self.fail("missing the objective: give maximize: or minimize:", root, "(document)")
        stage_nodes = []
        if staged is not None:
            if not isinstance(staged, Sequence) or not staged.items:
                raise self.fail("expected a list of tiers such as '- {name: senior, maximize: x}'", staged, "objectives")
            for k, item in enumerate(staged.items):
                field = f"objectives.{k + 1}"
                if not isinstance(item, Mapping):
                    raise self.fail(f"expected a mapping with name: and maximize: or minimize:, found {kind_name(item)}", item, field)
                self.check_keys(item, STAGE_KEYS, field)
                ss = [x for x in ("maximize", "minimize") if item.get(x) is not None]
                if len(ss) != 1:
                    raise self.fail("each tier needs exactly one of maximize: or minimize:", item, field)
                nm = item.get("name")
                if nm is None:
                    raise self.fail("each tier needs a name:", item, field)
                stage_nodes.append((self.text(nm, f"{field}.name"), ss[0], item.get(ss[0]), field))
            names_seen = [n for n, _, _, _ in stage_nodes]
            if len(set(names_seen)) != len(names_seen):
                raise self.fail("two tiers have the same name", staged, "objectives")
            sense_key = stage_nodes[-1][1]
        else:
            sense_key = senses[0]

        vnode = root.get("variables")
        if vnode is None:
            raise self.fail("missing key 'variables' (every variable must be declared)", root, "(document)")
        variables = self.variables(vnode)
        order = {v.name: i for i, v in enumerate(variables)}
        cnode_ = root.get("constraints")
        row_names = set(cnode_.keys()) if isinstance(cnode_, Mapping) else set()
        self.expander = Expander(set(order) | row_names)
        self.written: list[tuple[str, str]] = []
        self.written_objective = None
        self.sense = Sense(sense_key)

        stages = []
        if stage_nodes:
            from ..model import Stage

            for sname, skey, snode, field in stage_nodes:
                self.sense = Sense(skey)
                self.context = sname
                self.written_objective = None
                sterms, sconst = self.objective(snode, f"{field}.{skey}", order)
                stages.append(Stage(sname, Sense(skey), sterms, sconst, self.written_objective))
            obj, const = stages[-1].objective, stages[-1].constant
        else:
            obj, const = self.objective(root.get(sense_key), sense_key, order)  # type: ignore[arg-type]
        objective_rows = list(self.expander.rows)
        self.expander.rows.clear()

        constraints: list[Constraint] = []
        cnode = root.get("constraints")
        nonzeros = 0
        if cnode is not None and not (isinstance(cnode, Scalar) and cnode.is_null):
            if not isinstance(cnode, Mapping):
                raise self.fail(
                    f"expected a mapping of name: constraint, found {kind_name(cnode)}",
                    cnode,
                    "constraints",
                )
            if len(cnode.items) > self.limits.max_constraints:
                raise self.fail(
                    f"{len(cnode.items)} constraints, more than the limit of {self.limits.max_constraints}",
                    cnode, "constraints", LimitError,
                )
            for key, spec in cnode.items:
                c = self.constraint(key.text, spec, order)
                for row in [c] + self.expander.rows:
                    nonzeros += len(row.terms)
                    if nonzeros > self.limits.max_nonzeros:
                        raise self.fail(
                            f"more than the limit of {self.limits.max_nonzeros} nonzeros",
                            spec, f"constraints.{key.text}", LimitError,
                        )
                    constraints.append(row)
                self.expander.rows.clear()
        constraints.extend(objective_rows)
        return Model(
            sense=Sense(sense_key),
            objective=obj,
            variables=tuple(variables) + tuple(self.expander.variables),
            constraints=tuple(constraints),
            objective_constant=const,
            name=name,
            description=description,
            source=self.path,
            auxiliary=tuple(self.expander.auxiliary),
            written=tuple(self.written),
            written_objective=self.written_objective,
            stages=tuple(stages),
        )

    def variables(self, node: Node) -> list[Variable]:
        if isinstance(node, Scalar) and node.is_null:
            return []
        if not isinstance(node, Mapping):
            raise self.fail(
                f"expected a mapping of name: bounds, found {kind_name(node)}", node, "variables"
            )
        if len(node.items) > self.limits.max_variables:
            raise self.fail(
                f"{len(node.items)} variables, more than the limit of {self.limits.max_variables}",
                node, "variables", LimitError,
            )
        out = []
        for key, spec in node.items:
            if key.text == "":
                raise self.fail("a variable needs a name", key, "variables")
            out.append(self.variable(key.text, spec))
        return out

    def variable(self, name: str, spec: Node) -> Variable:
        field = f"variables.{name}"
        if isinstance(spec, Scalar):
            if spec.is_null:
                return Variable(name)
            if spec.text.strip() == "free":
                return Variable(name, None, None)
            raise self.fail(
                f"expected bounds such as {{lower: 0, upper: 10}}, {{}} or 'free', found '{spec.text}'"
                + did_you_mean(spec.text, ["free"]),
                spec,
                field,
            )
        if not isinstance(spec, Mapping):
            raise self.fail(f"expected a mapping of bounds, found {kind_name(spec)}", spec, field)
        self.check_keys(spec, VARIABLE_KEYS, field, BOUND_HINTS)
        # (the keys are known and each is given once: the reader refuses a key twice)
        got = {k.text: v for k, v in spec.items}
        unit = note = None
        if (u := got.get("unit")) is not None:
            unit = self.text(u, f"{field}.unit")
        if (n := got.get("note")) is not None:
            note = self.text(n, f"{field}.note")
        if (fx := got.get("fixed")) is not None:
            for other in ("lower", "upper"):
                if got.get(other) is not None:
                    raise self.fail(
                        f"give either fixed: or {other}:, not both", spec.key_node(other), f"{field}.{other}"
                    )
            v = self.number(fx, f"{field}.fixed")
            return Variable(name, v, v, unit, note)
        lower: Fraction | None = _ZERO
        upper: Fraction | None = None
        if (lo := got.get("lower")) is not None:
            lower = self.bound(lo, f"{field}.lower", "lower")
        if (hi := got.get("upper")) is not None:
            upper = self.bound(hi, f"{field}.upper", "upper")
        return Variable(name, lower, upper, unit, note)

    def calls(self, calls, weight: int, context: str, order, node: Scalar, field: str):
        """Check each call is a convex use, resolve its names, and replace it."""
        out = []
        for call in calls:
            for arg in call.args:
                self.resolve(arg.terms, order, node, field, node.text)
            if not convex(call, Fraction(weight)):
                err = ExpressionError(f"{call.text}: {WHY[call.function]}")
                err.offset = call.offset  # type: ignore[attr-defined]
                raise self.relocate(err, node, field)
            try:
                t, k = self.expander.replace(call, context)
            except ExpressionError as e:
                raise self.relocate(e, node, field) from None
            order[t] = len(order)
            out.append((t, k))
        return out

    def resolve(
        self, lin_terms, order: dict[str, int], node: Scalar, field: str, text: str
    ) -> tuple[tuple[str, Fraction], ...]:
        for name, _ in lin_terms:
            if name not in order:
                if name.lower() in ("inf", "infinity"):  # 'x <= inf': a side with no limit
                    err = ModelError(f"'{name}' cannot stand in a formula: leave out the side with no limit")
                else:
                    err = ModelError(f"undeclared variable '{name}'{did_you_mean(name, order)}")
                m = re.search(r"(?<![A-Za-z0-9_.])" + re.escape(name) + r"(?![A-Za-z0-9_.])", text)
                err.offset = m.start() if m else 0  # type: ignore[attr-defined]
                raise self.relocate(err, node, field)
        return tuple(sorted(lin_terms, key=lambda kv: order[kv[0]]))

    def structured_terms(
        self, node: Node | None, order: dict[str, int], field: str
    ) -> tuple[tuple[str, Fraction], ...]:
        if node is None:
            raise self.fail("missing key 'terms'", None, field)
        if isinstance(node, Scalar) and node.is_null:
            return ()
        if not isinstance(node, Mapping):
            raise self.fail(
                f"expected a mapping of variable: coefficient, found {kind_name(node)}", node, field
            )
        acc: dict[str, Fraction] = {}
        for key, val in node.items:
            if key.text not in order:
                raise self.fail(
                    f"undeclared variable '{key.text}'{did_you_mean(key.text, order)}",
                    key,
                    f"{field}.{key.text}",
                )
            acc[key.text] = self.number(val, f"{field}.{key.text}")
        return tuple((n, c) for n, c in sorted(acc.items(), key=lambda kv: order[kv[0]]) if c != 0)

    def objective(self, node: Node, key: str, order: dict[str, int]):
        if isinstance(node, Mapping):
            self.check_keys(node, OBJECTIVE_KEYS, key)
            terms = self.structured_terms(node.get("terms"), order, f"{key}.terms")
            const = Fraction(0)
            if (c := node.get("constant")) is not None:
                const = self.number(c, f"{key}.constant")
            return terms, const
        if not isinstance(node, Scalar) or node.is_null:
            raise self.fail(
                f"expected an expression such as '3 x + 2 y', found {kind_name(node) if not isinstance(node, Scalar) else 'nothing'}",
                node, key,
            )
        try:
            lin: Linear = parse_expression(node.text, self.limits)
        except (ExpressionError, ModelError) as e:
            raise self.relocate(e, node, key) from None
        terms = self.resolve(lin.terms, order, node, key, node.text)
        if lin.calls:
            weight = 1 if self.sense is Sense.MINIMIZE else -1
            extra = self.calls(lin.calls, weight, getattr(self, "context", "objective"), order, node, key)
            terms = tuple(sorted(terms + tuple(extra), key=lambda kv: order[kv[0]]))
            self.written_objective = node.text
        return terms, lin.constant

    def constraint(self, name: str, spec: Node, order: dict[str, int]) -> Constraint:
        field = f"constraints.{name}"
        if isinstance(spec, Mapping):
            self.check_keys(spec, STRUCTURED_KEYS, field, STRUCTURED_HINTS)
            terms = self.structured_terms(spec.get("terms"), order, f"{field}.terms")
            note = None
            if (n := spec.get("note")) is not None:
                note = self.text(n, f"{field}.note")
            if (eq := spec.get("equals")) is not None:
                for other in ("lower", "upper"):
                    if spec.get(other) is not None:
                        raise self.fail(
                            f"give either equals: or {other}:, not both",
                            spec.key_node(other), f"{field}.{other}",
                        )
                v = self.number(eq, f"{field}.equals")
                return Constraint(name, terms, v, v, note)
            lower = upper = None
            if (lo := spec.get("lower")) is not None:
                lower = self.bound(lo, f"{field}.lower", "lower")
            if (hi := spec.get("upper")) is not None:
                upper = self.bound(hi, f"{field}.upper", "upper")
            if spec.get("lower") is None and spec.get("upper") is None:
                raise self.fail("give lower:, upper: or equals:", spec, field)
            return Constraint(name, terms, lower, upper, note)
        if not isinstance(spec, Scalar) or spec.is_null:
            raise self.fail(
                "expected a formula such as 'x + y <= 10' or a mapping with terms:",
                spec, field,
            )
        try:
            cmp = parse_comparison(spec.text, self.limits)
        except (ExpressionError, ModelError) as e:
            raise self.relocate(e, spec, field) from None
        terms = self.resolve(cmp.terms, order, spec, field, spec.text)
        if cmp.calls:
            if cmp.lower is not None and cmp.upper is not None:
                err = ExpressionError(f"{cmp.calls[0].text}: abs(), max() and min() need a one-sided "
                                      "inequality (<= or >=), not == or a range")
                err.offset = cmp.calls[0].offset  # type: ignore[attr-defined]
                raise self.relocate(err, spec, field)
            weight = 1 if cmp.upper is not None else -1  # the form "... <= bound" keeps the sign
            extra = self.calls(cmp.calls, weight, name, order, spec, field)
            terms = tuple(sorted(terms + tuple(extra), key=lambda kv: order[kv[0]]))
            self.written.append((name, spec.text))
        return Constraint(name, terms, cmp.lower, cmp.upper)


def model_from_text(text: str, path: str = "<text>", limits: Limits = DEFAULT_LIMITS) -> Model:
    return _Reader(path, limits).read(parse_yaml(text, path, limits))


def load_yaml_model(path: str | os.PathLike, limits: Limits = DEFAULT_LIMITS) -> Model:
    p = os.fspath(path)
    return _Reader(p, limits).read(load_tree(p, limits))


# ----------------------------------------------------------------------
# writing
# ----------------------------------------------------------------------

_PLAIN_KEY = re.compile(r"[A-Za-z_][A-Za-z0-9_.]*")
_YAML_WORDS = {"y", "n", "yes", "no", "on", "off", "true", "false", "null", "free", "inf"}


_YAML_UNPRINTABLE = re.compile("[\x7f-\x9f\ud800-\udfff\ufeff\ufffe\uffff]")


def quote(text: str) -> str:
    """A YAML double-quoted scalar (JSON escapes are valid YAML).

    JSON leaves DEL, the C1 controls and a few other characters as they are,
    which YAML does not allow in a file; those are written as ``\\uXXXX``.
    """
    import json

    out = json.dumps(text, ensure_ascii=False)
    return _YAML_UNPRINTABLE.sub(lambda m: f"\\u{ord(m.group()):04x}", out)


def key(text: str) -> str:
    if _PLAIN_KEY.fullmatch(text) and text.lower() not in _YAML_WORDS:
        return text
    return quote(text)


def _formula_terms(terms: tuple[tuple[str, Fraction], ...]) -> str:
    parts = []
    for i, (n, c) in enumerate(terms):
        sign = "-" if c < 0 else "+"
        a = abs(c)
        coef = "" if a == 1 else format_number(a) + " "
        if i == 0:
            parts.append(("-" if c < 0 else "") + coef + n)
        else:
            parts.append(f"{sign} {coef}{n}")
    return " ".join(parts)


def _plain_names(terms) -> bool:
    return all(NAME_RE.fullmatch(n) for n, _ in terms)


def dump_yaml_model(model: Model) -> str:
    """The model in the exactlp YAML format (deterministic text)."""
    out: list[str] = []
    if model.name:
        out.append(f"name: {quote(model.name)}")
    if model.description:
        out.append(f"description: {quote(model.description)}")
    sense = model.sense.value
    if model.stages:
        out.append("objectives:")
        for st in model.stages:
            out.append(f"  - name: {quote(st.name)}")
            out.append(f"    {st.sense.value}:")
            out.append(f"      constant: {quote(format_number(st.constant))}")
            out.append("      terms: {" + ", ".join(f"{key(n)}: {quote(format_number(c))}" for n, c in st.objective) + "}")
    elif _plain_names(model.objective):
        expr = _formula_terms(model.objective)
        c = model.objective_constant
        if c:
            expr = (expr + " " if expr else "") + (("- " if expr else "-") if c < 0 else ("+ " if expr else "")) + format_number(abs(c))
        out.append(f"{sense}: {quote(expr or '0')}")
    else:
        out.append(f"{sense}:")
        out.append(f"  constant: {quote(format_number(model.objective_constant))}")
        out.append("  terms:")
        for n, c in model.objective:
            out.append(f"    {key(n)}: {quote(format_number(c))}")
    out.append("variables:")
    if not model.variables:
        out[-1] += " {}"
    for v in model.variables:
        if v.lower is None and v.upper is None and not v.unit and not v.note:
            out.append(f"  {key(v.name)}: free")
            continue
        fields = []
        if v.lower is not None and v.lower == v.upper:
            fields.append(f"fixed: {quote(format_number(v.lower))}")
        else:
            if v.lower != 0:
                fields.append("lower: " + ("-inf" if v.lower is None else quote(format_number(v.lower))))
            if v.upper is not None:
                fields.append("upper: " + quote(format_number(v.upper)))
        if v.unit:
            fields.append(f"unit: {quote(v.unit)}")
        if v.note:
            fields.append(f"note: {quote(v.note)}")
        out.append(f"  {key(v.name)}: {{{', '.join(fields)}}}")
    if model.constraints:
        out.append("constraints:")
    for c in model.constraints:
        finite = c.lower is not None or c.upper is not None
        if _plain_names(c.terms) and c.terms and not c.note and finite:
            lhs = _formula_terms(c.terms)
            if c.lower is not None and c.lower == c.upper:
                f = f"{lhs} == {format_number(c.lower)}"
            elif c.lower is not None and c.upper is not None:
                f = f"{format_number(c.lower)} <= {lhs} <= {format_number(c.upper)}"
            elif c.upper is not None:
                f = f"{lhs} <= {format_number(c.upper)}"
            else:
                f = f"{lhs} >= {format_number(c.lower)}"
            out.append(f"  {key(c.name)}: {quote(f)}")
            continue
        out.append(f"  {key(c.name)}:")
        out.append("    terms: {" + ", ".join(f"{key(n)}: {quote(format_number(a))}" for n, a in c.terms) + "}")
        if c.lower is not None and c.lower == c.upper:
            out.append(f"    equals: {quote(format_number(c.lower))}")
        else:
            out.append("    lower: " + ("-inf" if c.lower is None else quote(format_number(c.lower))))
            out.append("    upper: " + ("inf" if c.upper is None else quote(format_number(c.upper))))
        if c.note:
            out.append(f"    note: {quote(c.note)}")
    return "\n".join(out) + "\n"
