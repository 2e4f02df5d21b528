"""Hypothesis strategies for random linear programs.

Degenerate (zero right-hand sides, repeated rows), rank-deficient (scaled copies
of rows), infeasible and unbounded models all come up; so do free, fixed,
negative and upper-bounded variables, ranged rows and exact fractions.
"""

from fractions import Fraction as F

from hypothesis import strategies as st

from exactlp.model import build_model

small = st.integers(-6, 6).map(F)
frac = st.builds(lambda p, q: F(p, q), st.integers(-12, 12), st.integers(1, 7))
# huge and tiny exact coefficients, mixed within one model (within what a double
# carries comfortably, so that the float reference can still answer)
scaled = st.builds(lambda a, k: F(a) * F(10) ** k, st.integers(-9, 9).filter(bool), st.integers(-5, 5))
coef = st.one_of(small, small, frac, scaled)
rhs = st.one_of(st.just(F(0)), st.integers(-10, 10).map(F), frac)


@st.composite
def bounds(draw):
    kind = draw(st.sampled_from(["nonneg", "nonneg", "box", "free", "fixed", "upper", "negbox"]))
    if kind == "nonneg":
        return (0, None)
    if kind == "free":
        return (None, None)
    if kind == "fixed":
        v = draw(rhs)
        return (v, v)
    if kind == "upper":
        return (None, draw(rhs))
    a, b = sorted([draw(rhs), draw(rhs)])
    if kind == "negbox":
        a, b = -abs(b) - 1, -abs(a)
    return (a, b)


@st.composite
def lp_models(draw, max_vars: int = 5, max_rows: int = 5):
    n = draw(st.integers(1, max_vars))
    names = [f"x{j}" for j in range(n)]
    variables = {nm: draw(bounds()) for nm in names}
    rows = {}
    m = draw(st.integers(0, max_rows))
    made = []
    for i in range(m):
        if made and draw(st.integers(0, 5)) == 0:  # a scaled copy: rank deficiency
            terms, lo, hi = made[draw(st.integers(0, len(made) - 1))]
            k = draw(st.sampled_from([F(1), F(2), F(-1), F(1, 2)]))
            terms = {a: k * c for a, c in terms.items()}
            lo, hi = (None if lo is None else k * lo, None if hi is None else k * hi)
            if k < 0:
                lo, hi = hi, lo
        else:
            terms = draw(st.dictionaries(st.sampled_from(names), coef, min_size=1, max_size=n))
            kind = draw(st.sampled_from(["le", "ge", "eq", "range"]))
            b = draw(rhs)
            if kind == "le":
                lo, hi = None, b
            elif kind == "ge":
                lo, hi = b, None
            elif kind == "eq":
                lo, hi = b, b
            else:
                lo, hi = b, b + abs(draw(rhs)) + 1
        made.append((terms, lo, hi))
        rows[f"r{i}"] = (terms, lo, hi)
    return build_model(
        sense=draw(st.sampled_from(["minimize", "maximize"])),
        objective=draw(st.dictionaries(st.sampled_from(names), coef, max_size=n)),
        objective_constant=draw(st.one_of(st.just(0), rhs)),
        variables=variables,
        constraints=rows,
    )
